package db

import (
	"context"
	"database/sql"
	_ "embed"
	"encoding/json"
	"errors"
	"fmt"
	"strings"
	"time"

	"github.com/ringlog/ringlog/pipeline"
)

// A spool is a bay's local SQLite history that also keeps an outbox: every
// result and every final failure it records is queued, in the same
// transaction, for forwarding to the lab's central history (package
// db/forward moves them). The spool keeps its history after forwarding,
// so a bay can always answer for itself.

//go:embed spool.sql
var spoolSQL string

const (
	outboxResult  = "result"
	outboxFailure = "failure"
)

// openSpool adds the outbox tables to an SQLite history opened as a spool.
func (db *DB) openSpool(ctx context.Context) error {
	if db.dialect != sqliteDialect {
		return fmt.Errorf("database %s: a spool is a local SQLite file", db.path)
	}
	if err := checkPortable("spool.sql", spoolSQL); err != nil {
		return err
	}
	db.spool = true
	return db.write(ctx, "spool tables", func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, spoolSQL)
		return err
	})
}

// addToOutbox queues a recorded file for forwarding, inside the
// transaction that recorded it.
func addToOutbox(ctx context.Context, tx *sql.Tx, kind string, fi FileInfo, msg string, attempts int) error {
	_, err := tx.ExecContext(ctx, `
INSERT INTO outbox (kind, path, size, mtime, sha256, error, attempts, created_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?)`,
		kind, fi.Path, fi.Size, toNS(fi.MTime), strings.ToLower(fi.SHA256), msg, attempts, toNS(time.Now()))
	if err != nil {
		return fmt.Errorf("outbox: %w", err)
	}
	return nil
}

// Forward is one outbox entry with what the central history needs to
// store it: a result with its hit's metadata and analysis settings, or a
// file given up with its error.
type Forward struct {
	Seq      int64
	Failure  bool // a file given up (Error, Attempts); otherwise a result
	File     FileInfo
	Error    string
	Attempts int
	Meta     HitMeta
	Result   *pipeline.Result
	Settings json.RawMessage
}

// Outbox returns up to limit entries of the spool's outbox, oldest first,
// each loaded with its hit and current result.
func (db *DB) Outbox(ctx context.Context, limit int) ([]Forward, error) {
	if limit <= 0 {
		limit = 100
	}
	var out []Forward
	err := db.read(ctx, "reading the outbox", func(tx *sql.Tx) error {
		rows, err := tx.QueryContext(ctx, `
SELECT seq, kind, path, size, mtime, sha256, error, attempts FROM outbox ORDER BY seq LIMIT ?`, limit)
		if err != nil {
			return err
		}
		defer rows.Close()
		var shas []any
		for rows.Next() {
			var f Forward
			var kind string
			var mt int64
			if err := rows.Scan(&f.Seq, &kind, &f.File.Path, &f.File.Size, &mt, &f.File.SHA256, &f.Error, &f.Attempts); err != nil {
				return err
			}
			f.File.MTime = fromNS(mt)
			f.Failure = kind == outboxFailure
			if !f.Failure {
				shas = append(shas, f.File.SHA256)
			}
			out = append(out, f)
		}
		if err := rows.Err(); err != nil {
			return err
		}
		rows.Close()
		if len(shas) == 0 {
			return nil
		}
		bySHA, err := hitsBySHA(ctx, tx, shas)
		if err != nil {
			return err
		}
		for i := range out {
			f := &out[i]
			if f.Failure {
				continue
			}
			h, ok := bySHA[f.File.SHA256]
			if !ok {
				return fmt.Errorf("outbox entry %d (%s): no hit with SHA-256 %s in the spool", f.Seq, f.File.Path, f.File.SHA256)
			}
			f.Meta, f.Result, f.Settings = h.hit.Meta, h.hit.Result, json.RawMessage(h.settings)
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	return out, nil
}

type hitWithSettings struct {
	hit      *Hit
	settings string
}

// hitsBySHA loads the hits with these SHA-256s, each with its whole
// current result (every column RecordResult stores) and its settings.
func hitsBySHA(ctx context.Context, tx *sql.Tx, shas []any) (map[string]hitWithSettings, error) {
	out := make(map[string]hitWithSettings, len(shas))
	var hits []Hit
	var settings []string
	for lo := 0; lo < len(shas); lo += chunk {
		hi := min(lo+chunk, len(shas))
		rows, err := tx.QueryContext(ctx, `
SELECT h.id, h.sha256, h.first_path, h.prototype, h.revision, h.bay, h.point, h.direction, h.hit_time, h.meta,
       h.ingested_at, r.analysis_id, r.id, r.verdict, r.file, r.format, r.channel, r.force_channel,
       r.sample_rate, r.duration, r.noise_rms, r.window_tau, r.meta, a.analysis_version, a.settings
FROM hits h
JOIN results r ON r.hit_id = h.id AND r.superseded = 0
JOIN analyses a ON a.id = r.analysis_id
WHERE h.sha256 IN (`+placeholders(hi-lo)+`)`, shas[lo:hi]...)
		if err != nil {
			return nil, err
		}
		for rows.Next() {
			var h Hit
			var res pipeline.Result
			var hitTime, ingested int64
			var hitMeta, resMeta, set string
			var sr, dur, noise, tau sql.NullFloat64
			if err := rows.Scan(&h.ID, &h.SHA256, &h.Path, &h.Meta.Prototype, &h.Meta.Revision, &h.Meta.Bay,
				&h.Meta.Point, &h.Meta.Direction, &hitTime, &hitMeta, &ingested, &h.AnalysisID, &h.ResultID,
				&res.Verdict, &res.File, &res.Format, &res.Channel, &res.ForceChannel, &sr, &dur, &noise, &tau,
				&resMeta, &res.AnalysisVersion, &set); err != nil {
				rows.Close()
				return nil, err
			}
			h.Meta.HitTime, h.IngestedAt = fromNS(hitTime), fromNS(ingested)
			if h.Meta.Extra, err = unmarshalMap(hitMeta); err != nil {
				rows.Close()
				return nil, fmt.Errorf("hit %d: metadata: %w", h.ID, err)
			}
			if res.Meta, err = unmarshalMap(resMeta); err != nil {
				rows.Close()
				return nil, fmt.Errorf("hit %d: result metadata: %w", h.ID, err)
			}
			res.SampleRate, res.DurationS, res.NoiseRMS, res.WindowTauS = orNaN(sr), orNaN(dur), orNaN(noise), orNaN(tau)
			res.Reasons, res.Modes = []pipeline.Reason{}, []pipeline.Mode{}
			h.Result = &res
			hits = append(hits, h)
			settings = append(settings, set)
		}
		err = rows.Err()
		rows.Close()
		if err != nil {
			return nil, err
		}
	}
	if err := loadDetails(ctx, tx, hits); err != nil {
		return nil, err
	}
	for i := range hits {
		out[hits[i].SHA256] = hitWithSettings{&hits[i], settings[i]}
	}
	return out, nil
}

// Forwarded removes the outbox entries up to and including seq, which the
// central history now holds, and notes the progress.
func (db *DB) Forwarded(ctx context.Context, seq int64, n int) error {
	now := toNS(time.Now())
	return db.write(ctx, "forwarded", func(tx *sql.Tx) error {
		if _, err := tx.ExecContext(ctx, "DELETE FROM outbox WHERE seq <= ?", seq); err != nil {
			return err
		}
		_, err := tx.ExecContext(ctx, `
INSERT INTO forward_state (id, forwarded, last_ok, last_error, error_at) VALUES (1, ?, ?, '', 0)
ON CONFLICT (id) DO UPDATE SET forwarded = forward_state.forwarded + excluded.forwarded,
    last_ok = excluded.last_ok, last_error = '', error_at = 0`, n, now)
		return err
	})
}

// NoteForwardError keeps the last forwarding error for status.
func (db *DB) NoteForwardError(ctx context.Context, msg string) error {
	now := toNS(time.Now())
	return db.write(ctx, "noting a forwarding error", func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, `
INSERT INTO forward_state (id, forwarded, last_ok, last_error, error_at) VALUES (1, 0, 0, ?, ?)
ON CONFLICT (id) DO UPDATE SET last_error = excluded.last_error, error_at = excluded.error_at`, msg, now)
		return err
	})
}

// ForwardStatus is how forwarding from a spool stands.
type ForwardStatus struct {
	Spool     bool      // the history has an outbox (it is, or was, a spool)
	Backlog   int       // entries not yet forwarded
	Oldest    time.Time // when the oldest of them was recorded; zero when none
	Forwarded int64     // entries forwarded so far
	LastOK    time.Time // when a batch last arrived; zero when never
	LastError string    // the last error, "" once a batch went through again
	ErrorAt   time.Time
}

// ForwardStatus reads the outbox and the forwarding state of a spool; on
// a history that is not a spool it returns a zero ForwardStatus.
func (db *DB) ForwardStatus(ctx context.Context) (ForwardStatus, error) {
	var st ForwardStatus
	if db.dialect != sqliteDialect {
		return st, nil
	}
	err := db.read(ctx, "forwarding status", func(tx *sql.Tx) error {
		var n int
		if err := tx.QueryRowContext(ctx, "SELECT count(*) FROM sqlite_master WHERE type = 'table' AND name = 'outbox'").Scan(&n); err != nil || n == 0 {
			return err
		}
		st.Spool = true
		var oldest sql.NullInt64
		if err := tx.QueryRowContext(ctx, "SELECT count(*), min(created_at) FROM outbox").Scan(&st.Backlog, &oldest); err != nil {
			return err
		}
		st.Oldest = fromNS(oldest.Int64)
		var ok, errAt int64
		err := tx.QueryRowContext(ctx, "SELECT forwarded, last_ok, last_error, error_at FROM forward_state WHERE id = 1").
			Scan(&st.Forwarded, &ok, &st.LastError, &errAt)
		if errors.Is(err, sql.ErrNoRows) {
			return nil
		}
		st.LastOK, st.ErrorAt = fromNS(ok), fromNS(errAt)
		return err
	})
	return st, err
}

// Receive stores forwarded entries in the central history, all in one
// transaction, in their order. It is idempotent: an entry already stored
// (the same bytes under the same path) stores nothing new, so a batch
// sent again after a crash doubles nothing. The recording times are the
// central server's clock (PostgreSQL's), not the bay's.
func (db *DB) Receive(ctx context.Context, fs []Forward) ([]Outcome, error) {
	ins := make([]recordInput, len(fs))
	for i, f := range fs {
		if f.Failure {
			if f.File.Path == "" {
				return nil, fmt.Errorf("database %s: receive: entry %d: empty path", db.path, f.Seq)
			}
			continue
		}
		var settings any
		if len(f.Settings) > 0 {
			settings = f.Settings
		}
		in, err := prepareRecord(f.File, f.Meta, f.Result, settings)
		if err != nil {
			return nil, fmt.Errorf("database %s: receive: entry %d (%s): %w", db.path, f.Seq, f.File.Path, err)
		}
		ins[i] = in
	}
	out := make([]Outcome, len(fs))
	err := db.write(ctx, fmt.Sprintf("receive %d forwarded result(s)", len(fs)), func(tx *sql.Tx) error {
		now := time.Now()
		if db.dialect == postgresDialect {
			if err := tx.QueryRowContext(ctx, "SELECT now()").Scan(&now); err != nil {
				return err
			}
		}
		for i, f := range fs {
			if f.Failure {
				if err := receiveFailure(ctx, tx, f, now); err != nil {
					return fmt.Errorf("entry %d (%s): %w", f.Seq, f.File.Path, err)
				}
				continue
			}
			o, err := recordTx(ctx, tx, ins[i], now)
			if err != nil {
				return fmt.Errorf("entry %d (%s): %w", f.Seq, f.File.Path, err)
			}
			out[i] = o
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	return out, nil
}

// receiveFailure stores a file the bay gave up, with the bay's count of
// attempts (absolute, so that a repeat changes nothing).
func receiveFailure(ctx context.Context, tx *sql.Tx, f Forward, now time.Time) error {
	_, err := tx.ExecContext(ctx, `
INSERT INTO files (path, size, mtime, sha256, state, attempts, last_error, first_seen, updated)
VALUES (?1, ?2, ?3, ?4, 'failed', ?5, ?6, ?7, ?7)
ON CONFLICT (path) DO UPDATE SET
    hit_id     = CASE WHEN files.size = excluded.size AND files.mtime = excluded.mtime THEN files.hit_id ELSE NULL END,
    sha256     = CASE WHEN excluded.sha256 <> '' THEN excluded.sha256
                      WHEN files.size = excluded.size AND files.mtime = excluded.mtime THEN files.sha256 ELSE '' END,
    size       = excluded.size,
    mtime      = excluded.mtime,
    state      = 'failed',
    attempts   = excluded.attempts,
    last_error = excluded.last_error,
    updated    = excluded.updated`,
		f.File.Path, f.File.Size, toNS(f.File.MTime), strings.ToLower(f.File.SHA256), max(f.Attempts, 1), f.Error, toNS(now))
	return err
}
