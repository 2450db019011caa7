package db

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"math"
	"strings"
	"time"
)

// State is where a file stands in the ingest queue.
type State string

// File states.
const (
	StatePending   State = "pending"   // seen, not yet recorded (or failed and will be retried)
	StateAnalysed  State = "analysed"  // produced a hit
	StateDuplicate State = "duplicate" // same bytes as an existing hit
	StateFailed    State = "failed"    // gave up after the last attempt
)

// Final reports whether a file in state s needs no more work.
func (s State) Final() bool {
	return s == StateAnalysed || s == StateDuplicate || s == StateFailed
}

// FileInfo identifies one version of a file: its path, size, modification
// time and (once read) the SHA-256 of its bytes in lower-case hex.
type FileInfo struct {
	Path   string
	Size   int64
	MTime  time.Time
	SHA256 string
}

// Stamp is what the history knows of a path: the size and modification
// time last recorded for it, its state, and how many attempts failed.
type Stamp struct {
	Size     int64
	MTime    time.Time
	State    State
	Attempts int
}

// Matches reports whether the stamp describes a file of this size and
// modification time (to the nanosecond).
func (s Stamp) Matches(size int64, mtime time.Time) bool {
	return s.Size == size && s.MTime.UnixNano() == mtime.UnixNano()
}

// Known reports whether the scanner can skip the file: the same path with
// the same size and modification time already reached a final state
// (analysed, duplicate, or failed for good).
func (s Stamp) Known(size int64, mtime time.Time) bool {
	return s.State.Final() && s.Matches(size, mtime)
}

// FileState is the full row of one path in the ingest queue.
type FileState struct {
	FileInfo
	State     State
	Attempts  int
	LastError string
	FirstSeen time.Time
	Updated   time.Time
	HitID     int64 // 0 when the file produced no hit
}

// Known reports whether path, with this size and modification time, has
// already reached a final state, so that a scan can skip it.
func (db *DB) Known(ctx context.Context, path string, size int64, mtime time.Time) (bool, error) {
	var st Stamp
	var mt int64
	err := db.r.QueryRowContext(ctx, "SELECT size, mtime, state, attempts FROM files WHERE path = ?", path).
		Scan(&st.Size, &mt, &st.State, &st.Attempts)
	if errors.Is(err, sql.ErrNoRows) {
		return false, nil
	}
	if err != nil {
		return false, fmt.Errorf("database %s: looking up %s: %w", db.path, path, err)
	}
	st.MTime = fromNS(mt)
	return st.Known(size, mtime), nil
}

// KnownSet loads the stamp of every path the history has seen, for a scan
// of a large folder at start-up (one query instead of one per file).
func (db *DB) KnownSet(ctx context.Context) (map[string]Stamp, error) {
	out := make(map[string]Stamp)
	err := db.read(ctx, "loading known files", func(tx *sql.Tx) error {
		rows, err := tx.QueryContext(ctx, "SELECT path, size, mtime, state, attempts FROM files")
		if err != nil {
			return err
		}
		defer rows.Close()
		for rows.Next() {
			var p string
			var st Stamp
			var mt int64
			if err := rows.Scan(&p, &st.Size, &mt, &st.State, &st.Attempts); err != nil {
				return err
			}
			st.MTime = fromNS(mt)
			out[p] = st
		}
		return rows.Err()
	})
	if err != nil {
		return nil, err
	}
	return out, nil
}

// File returns the queue row of path; ok is false when the history has
// never seen it.
func (db *DB) File(ctx context.Context, path string) (fs FileState, ok bool, err error) {
	row := db.r.QueryRowContext(ctx, "SELECT "+fileCols+" FROM files WHERE path = ?", path)
	fs, err = scanFile(row)
	if errors.Is(err, sql.ErrNoRows) {
		return FileState{}, false, nil
	}
	if err != nil {
		return FileState{}, false, fmt.Errorf("database %s: looking up %s: %w", db.path, path, err)
	}
	return fs, true, nil
}

// PendingFiles returns the files waiting for (another) attempt, oldest
// first: what a daemon restarted after a crash has left to do.
func (db *DB) PendingFiles(ctx context.Context) ([]FileState, error) {
	var out []FileState
	err := db.read(ctx, "listing pending files", func(tx *sql.Tx) error {
		rows, err := tx.QueryContext(ctx, "SELECT "+fileCols+" FROM files WHERE state = 'pending' ORDER BY first_seen, id")
		if err != nil {
			return err
		}
		defer rows.Close()
		for rows.Next() {
			fs, err := scanFile(rows)
			if err != nil {
				return err
			}
			out = append(out, fs)
		}
		return rows.Err()
	})
	return out, err
}

const fileCols = "path, size, mtime, sha256, state, attempts, last_error, first_seen, updated, hit_id"

type scanner interface{ Scan(dest ...any) error }

func scanFile(s scanner) (FileState, error) {
	var fs FileState
	var mt, first, upd int64
	var hit sql.NullInt64
	err := s.Scan(&fs.Path, &fs.Size, &mt, &fs.SHA256, &fs.State, &fs.Attempts, &fs.LastError, &first, &upd, &hit)
	fs.MTime, fs.FirstSeen, fs.Updated, fs.HitID = fromNS(mt), fromNS(first), fromNS(upd), hit.Int64
	return fs, err
}

// MarkPending puts the file in the queue (state pending) so that status
// shows it and a crash before it is recorded leaves a trace. A path whose
// size or modification time changed starts again with no failed attempts;
// the same version keeps its attempt count.
func (db *DB) MarkPending(ctx context.Context, fi FileInfo) error {
	if fi.Path == "" {
		return fmt.Errorf("database %s: mark pending: empty path", db.path)
	}
	fi.SHA256 = strings.ToLower(fi.SHA256)
	now := toNS(time.Now())
	return db.write(ctx, "mark "+fi.Path+" pending", func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, `
INSERT INTO files (path, size, mtime, sha256, state, attempts, last_error, first_seen, updated)
VALUES (?1, ?2, ?3, ?4, 'pending', 0, '', ?5, ?5)
ON CONFLICT (path) DO UPDATE SET
    attempts   = CASE WHEN files.size = excluded.size AND files.mtime = excluded.mtime THEN files.attempts ELSE 0 END,
    last_error = CASE WHEN files.size = excluded.size AND files.mtime = excluded.mtime THEN files.last_error ELSE '' END,
    hit_id     = CASE WHEN files.size = excluded.size AND files.mtime = excluded.mtime THEN files.hit_id ELSE NULL END,
    sha256     = CASE WHEN excluded.sha256 <> '' THEN excluded.sha256
                      WHEN files.size = excluded.size AND files.mtime = excluded.mtime THEN files.sha256 ELSE '' END,
    size       = excluded.size,
    mtime      = excluded.mtime,
    state      = 'pending',
    updated    = excluded.updated`,
			fi.Path, fi.Size, toNS(fi.MTime), fi.SHA256, now)
		return err
	})
}

// RecordFailure notes a failed attempt at the file: attempts grows by one
// and last_error keeps the message. With final the file is given up
// (state failed, which Known treats as done until the file changes);
// otherwise it stays pending for a retry.
func (db *DB) RecordFailure(ctx context.Context, fi FileInfo, cause error, final bool) error {
	if fi.Path == "" {
		return fmt.Errorf("database %s: record failure: empty path", db.path)
	}
	msg := "unknown error"
	if cause != nil {
		msg = cause.Error()
	}
	state := StatePending
	if final {
		state = StateFailed
	}
	fi.SHA256 = strings.ToLower(fi.SHA256)
	now := toNS(time.Now())
	return db.write(ctx, "record failure of "+fi.Path, func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, `
INSERT INTO files (path, size, mtime, sha256, state, attempts, last_error, first_seen, updated)
VALUES (?1, ?2, ?3, ?4, ?5, 1, ?6, ?7, ?7)
ON CONFLICT (path) DO UPDATE SET
    attempts   = CASE WHEN files.size = excluded.size AND files.mtime = excluded.mtime THEN files.attempts + 1 ELSE 1 END,
    hit_id     = CASE WHEN files.size = excluded.size AND files.mtime = excluded.mtime THEN files.hit_id ELSE NULL END,
    sha256     = CASE WHEN excluded.sha256 <> '' THEN excluded.sha256
                      WHEN files.size = excluded.size AND files.mtime = excluded.mtime THEN files.sha256 ELSE '' END,
    size       = excluded.size,
    mtime      = excluded.mtime,
    state      = excluded.state,
    last_error = excluded.last_error,
    updated    = excluded.updated`,
			fi.Path, fi.Size, toNS(fi.MTime), fi.SHA256, string(state), msg, now)
		if err != nil || !final || !db.spool {
			return err
		}
		var attempts int
		if err := tx.QueryRowContext(ctx, "SELECT attempts FROM files WHERE path = ?", fi.Path).Scan(&attempts); err != nil {
			return err
		}
		return addToOutbox(ctx, tx, outboxFailure, fi, msg, attempts)
	})
}

// Vanished notes that a file was deleted before it was recorded: a
// pending row that never produced a hit is dropped (so the queue does not
// show it for ever); a pending row of a version already recorded goes back
// to analysed.
func (db *DB) Vanished(ctx context.Context, path string) error {
	return db.write(ctx, "forget vanished "+path, func(tx *sql.Tx) error {
		if _, err := tx.ExecContext(ctx, `DELETE FROM files WHERE path = ? AND state = 'pending' AND hit_id IS NULL`, path); err != nil {
			return err
		}
		_, err := tx.ExecContext(ctx, `UPDATE files SET state = 'analysed' WHERE path = ? AND state = 'pending' AND hit_id IS NOT NULL`, path)
		return err
	})
}

// Bounds of what int64 nanoseconds since 1970 can hold (years 1678 to
// 2262); times outside are clamped rather than wrapped.
var (
	minNSTime = time.Unix(0, math.MinInt64+1)
	maxNSTime = time.Unix(0, math.MaxInt64)
)

// toNS stores a time as nanoseconds since 1970 UTC; the zero time is 0.
// Times beyond what int64 nanoseconds hold are clamped.
func toNS(t time.Time) int64 {
	if t.IsZero() {
		return 0
	}
	if t.After(maxNSTime) {
		return math.MaxInt64
	}
	if t.Before(minNSTime) {
		return math.MinInt64 + 1
	}
	return t.UnixNano()
}

// fromNS is the inverse of toNS; 0 gives the zero time. Times come back in
// the local time zone.
func fromNS(ns int64) time.Time {
	if ns == 0 {
		return time.Time{}
	}
	return time.Unix(0, ns)
}
