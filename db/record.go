package db

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"strings"
	"time"

	"github.com/ringlog/ringlog/pipeline"
)

// HitMeta is what is known of a hit besides its analysis: where and on
// what it was struck, and when.
type HitMeta struct {
	Prototype, Revision, Bay, Point, Direction string
	// HitTime is when the hit was struck; the zero time means unknown, and
	// the file's modification time is stored instead.
	HitTime time.Time
	// Extra holds any further metadata (operator, tip, window, ...).
	Extra map[string]string
}

// Outcome tells what RecordResult stored.
type Outcome struct {
	HitID    int64 // the hit the file produced, or duplicates
	ResultID int64 // the hit's current result
	// Duplicate is true when the bytes were already stored under another
	// path: the file is linked to the existing hit and nothing else is
	// stored.
	Duplicate bool
	// Repeat is true when this same path with the same bytes had already
	// been recorded: nothing new was stored.
	Repeat bool
	// Superseded lists the hits this recording superseded: the path held
	// other bytes before, whose hit is no longer counted.
	Superseded []Predecessor
	// Revived is true when the path holds again the bytes of a hit that a
	// later version had superseded: that hit is current again.
	Revived bool
}

// RecordResult stores the analysis of one file in a single immediate
// transaction. The identity of a hit is the SHA-256 of the file's bytes:
//   - when a hit with fi.SHA256 exists under another path, the file row
//     becomes a duplicate linked to it (Outcome.Duplicate);
//   - when it exists under this path, nothing new is stored (Outcome.Repeat);
//   - otherwise the hit, its result with modes, estimates and reasons, and
//     the analyses row for (analysis version, settings) are stored and the
//     file row becomes analysed.
//
// One path has one current hit: when the path held other bytes before (the
// file was appended, rewritten or replaced), the hits first recorded under
// it are superseded by the hit it holds now (Outcome.Superseded), new or
// duplicate; they stay as provenance and queries leave them out. A path
// that holds again the bytes of a hit it superseded makes that hit current
// again (Outcome.Revived).
//
// settings is the analysis configuration, stored as JSON for provenance;
// nil stores {}.
func (db *DB) RecordResult(ctx context.Context, fi FileInfo, meta HitMeta, res *pipeline.Result, settings any) (Outcome, error) {
	var out Outcome
	in, err := prepareRecord(fi, meta, res, settings)
	if err != nil {
		return out, fmt.Errorf("database %s: record result%s: %w", db.path, ofPath(fi.Path), err)
	}
	err = db.write(ctx, "record result of "+in.fi.Path, func(tx *sql.Tx) error {
		var err error
		if out, err = recordTx(ctx, tx, in, time.Now()); err != nil {
			return err
		}
		if db.spool && !out.Repeat { // a supersede or revival travels with its result
			return addToOutbox(ctx, tx, outboxResult, in.fi, "", 0)
		}
		return nil
	})
	if err != nil {
		return Outcome{}, err
	}
	return out, nil
}

func ofPath(p string) string {
	if p == "" {
		return ""
	}
	return " of " + p
}

// recordInput is a checked result ready to store.
type recordInput struct {
	fi              FileInfo
	meta            HitMeta
	res             *pipeline.Result
	settings, extra string // JSON
	hitTime         time.Time
}

// prepareRecord checks what RecordResult is given and turns it into what
// the tables hold.
func prepareRecord(fi FileInfo, meta HitMeta, res *pipeline.Result, settings any) (recordInput, error) {
	in := recordInput{fi: fi, meta: meta, res: res}
	in.fi.SHA256 = strings.ToLower(fi.SHA256)
	if fi.Path == "" {
		return in, errors.New("empty path")
	}
	if strings.HasPrefix(fi.Path, SyntheticPathPrefix) {
		return in, fmt.Errorf("path %q: the prefix %q marks synthetic hits", fi.Path, SyntheticPathPrefix)
	}
	if !validSHA256(in.fi.SHA256) {
		return in, fmt.Errorf("SHA-256 %q is not 64 hex digits", in.fi.SHA256)
	}
	if err := checkResult(res); err != nil {
		return in, err
	}
	var err error
	if in.settings, err = marshalSettings(settings); err != nil {
		return in, fmt.Errorf("settings: %w", err)
	}
	if in.extra, err = marshalMap(meta.Extra); err != nil {
		return in, fmt.Errorf("metadata: %w", err)
	}
	in.hitTime = meta.HitTime
	if in.hitTime.IsZero() {
		in.hitTime = fi.MTime
	}
	return in, nil
}

// recordTx stores one checked result inside the transaction tx; now is
// the time of recording.
func recordTx(ctx context.Context, tx *sql.Tx, in recordInput, now time.Time) (Outcome, error) {
	var out Outcome
	m := in.meta
	if in.hitTime.IsZero() {
		in.hitTime = now
	}
	// Two writers may store the same bytes at once (two bays of one
	// PostgreSQL history): the insert then finds the other's hit, and
	// the second pass records this file as its duplicate.
	for pass := 0; ; pass++ {
		out = Outcome{}
		var firstPath string
		var supersededBy sql.NullInt64
		err := tx.QueryRowContext(ctx, "SELECT id, first_path, superseded_by FROM hits WHERE sha256 = ?", in.fi.SHA256).
			Scan(&out.HitID, &firstPath, &supersededBy)
		switch {
		case err == nil:
			if err := tx.QueryRowContext(ctx, "SELECT id FROM results WHERE hit_id = ? AND superseded = 0", out.HitID).
				Scan(&out.ResultID); err != nil {
				return out, fmt.Errorf("current result of hit %d: %w", out.HitID, err)
			}
			state := StateDuplicate
			switch {
			case firstPath != in.fi.Path:
				out.Duplicate = true
			case supersededBy.Valid:
				// The file holds its earlier bytes again.
				if err := revive(ctx, tx, out.HitID); err != nil {
					return out, err
				}
				state, out.Revived = StateAnalysed, true
			default:
				state, out.Repeat = StateAnalysed, true
			}
			if !out.Repeat {
				if out.Superseded, err = supersedePath(ctx, tx, in.fi.Path, out.HitID, now); err != nil {
					return out, err
				}
			}
			return out, upsertFile(ctx, tx, in.fi, state, out.HitID, now)
		case !errors.Is(err, sql.ErrNoRows):
			return out, err
		}

		analysisID, err := analysisID(ctx, tx, in.res.AnalysisVersion, in.settings, now)
		if err != nil {
			return out, err
		}
		err = tx.QueryRowContext(ctx, `
INSERT INTO hits (sha256, first_path, prototype, revision, bay, point, direction, hit_time, meta,
                  format, channel, force_channel, sample_rate, duration, noise_rms, verdict, analysis_id, ingested_at)
VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)
ON CONFLICT (sha256) DO NOTHING
RETURNING id`,
			in.fi.SHA256, in.fi.Path, m.Prototype, m.Revision, m.Bay, m.Point, m.Direction, toNS(in.hitTime), in.extra,
			in.res.Format, in.res.Channel, in.res.ForceChannel, sqlReal(in.res.SampleRate), sqlReal(in.res.DurationS), sqlReal(in.res.NoiseRMS),
			string(in.res.Verdict), analysisID, toNS(now)).Scan(&out.HitID)
		if errors.Is(err, sql.ErrNoRows) && pass == 0 {
			continue // stored meanwhile by another writer
		}
		if err != nil {
			return out, fmt.Errorf("inserting hit: %w", err)
		}
		if out.ResultID, err = insertResult(ctx, tx, out.HitID, analysisID, in.res, now); err != nil {
			return out, err
		}
		if out.Superseded, err = supersedePath(ctx, tx, in.fi.Path, out.HitID, now); err != nil {
			return out, err
		}
		return out, upsertFile(ctx, tx, in.fi, StateAnalysed, out.HitID, now)
	}
}

// Supersede stores res as the new current result of the hit, in one
// immediate transaction. The previous result stays, marked superseded, with
// the analyses row that produced it.
func (db *DB) Supersede(ctx context.Context, hitID int64, res *pipeline.Result, settings any) error {
	if err := checkResult(res); err != nil {
		return fmt.Errorf("database %s: supersede result of hit %d: %w", db.path, hitID, err)
	}
	settingsJSON, err := marshalSettings(settings)
	if err != nil {
		return fmt.Errorf("database %s: supersede result of hit %d: settings: %w", db.path, hitID, err)
	}
	now := time.Now()
	return db.write(ctx, fmt.Sprintf("supersede result of hit %d", hitID), func(tx *sql.Tx) error {
		var one int
		err := tx.QueryRowContext(ctx, "SELECT 1 FROM hits WHERE id = ?", hitID).Scan(&one)
		if errors.Is(err, sql.ErrNoRows) {
			return fmt.Errorf("hit %d: %w", hitID, ErrNotFound)
		}
		if err != nil {
			return err
		}
		analysisID, err := analysisID(ctx, tx, res.AnalysisVersion, settingsJSON, now)
		if err != nil {
			return err
		}
		if _, err := tx.ExecContext(ctx, "UPDATE results SET superseded = 1 WHERE hit_id = ? AND superseded = 0", hitID); err != nil {
			return err
		}
		if _, err := insertResult(ctx, tx, hitID, analysisID, res, now); err != nil {
			return err
		}
		_, err = tx.ExecContext(ctx, `
UPDATE hits SET format = ?, channel = ?, force_channel = ?, sample_rate = ?, duration = ?, noise_rms = ?,
                verdict = ?, analysis_id = ?
WHERE id = ?`,
			res.Format, res.Channel, res.ForceChannel, sqlReal(res.SampleRate), sqlReal(res.DurationS), sqlReal(res.NoiseRMS),
			string(res.Verdict), analysisID, hitID)
		return err
	})
}

// SetModeLabel sets the expected-mode label of one stored mode; "" clears it.
func (db *DB) SetModeLabel(ctx context.Context, modeID int64, label string) error {
	return db.write(ctx, fmt.Sprintf("label mode %d", modeID), func(tx *sql.Tx) error {
		r, err := tx.ExecContext(ctx, "UPDATE modes SET label = NULLIF(?, '') WHERE id = ?", label, modeID)
		if err != nil {
			return err
		}
		n, err := r.RowsAffected()
		if err != nil {
			return err
		}
		if n == 0 {
			return fmt.Errorf("mode %d: %w", modeID, ErrNotFound)
		}
		return nil
	})
}

func upsertFile(ctx context.Context, tx *sql.Tx, fi FileInfo, state State, hitID int64, now time.Time) error {
	_, err := tx.ExecContext(ctx, `
INSERT INTO files (path, size, mtime, sha256, state, attempts, last_error, first_seen, updated, hit_id)
VALUES (?1, ?2, ?3, ?4, ?5, 0, '', ?6, ?6, ?7)
ON CONFLICT (path) DO UPDATE SET
    attempts   = CASE WHEN files.size = excluded.size AND files.mtime = excluded.mtime THEN files.attempts ELSE 0 END,
    size       = excluded.size,
    mtime      = excluded.mtime,
    sha256     = excluded.sha256,
    state      = excluded.state,
    last_error = '',
    updated    = excluded.updated,
    hit_id     = excluded.hit_id`,
		fi.Path, fi.Size, toNS(fi.MTime), fi.SHA256, string(state), toNS(now), hitID)
	if err != nil {
		return fmt.Errorf("file row: %w", err)
	}
	return nil
}

// analysisID returns the id of the analyses row for this version and
// settings, creating it the first time.
func analysisID(ctx context.Context, tx *sql.Tx, version, settings string, now time.Time) (int64, error) {
	if version == "" {
		version = pipeline.AnalysisVersion
	}
	var id int64
	for pass := 0; ; pass++ {
		err := tx.QueryRowContext(ctx, "SELECT id FROM analyses WHERE analysis_version = ? AND settings = ?", version, settings).Scan(&id)
		if err == nil {
			return id, nil
		}
		if !errors.Is(err, sql.ErrNoRows) {
			return 0, err
		}
		// Another writer (another bay) may insert the same row meanwhile:
		// then nothing is inserted here and the next pass finds it.
		err = tx.QueryRowContext(ctx, `
INSERT INTO analyses (analysis_version, settings, created_at) VALUES (?, ?, ?)
ON CONFLICT (analysis_version, settings) DO NOTHING
RETURNING id`, version, settings, toNS(now)).Scan(&id)
		if errors.Is(err, sql.ErrNoRows) && pass == 0 {
			continue
		}
		if err != nil {
			return 0, fmt.Errorf("inserting analysis: %w", err)
		}
		return id, nil
	}
}

// insertResult stores res with its modes, estimates and reasons as a
// current result of the hit.
func insertResult(ctx context.Context, tx *sql.Tx, hitID, analysisID int64, res *pipeline.Result, now time.Time) (int64, error) {
	meta, err := marshalMap(res.Meta)
	if err != nil {
		return 0, fmt.Errorf("result metadata: %w", err)
	}
	var resultID int64
	err = tx.QueryRowContext(ctx, `
INSERT INTO results (hit_id, analysis_id, verdict, superseded, file, format, channel, force_channel,
                     sample_rate, duration, noise_rms, window_tau, meta, created_at)
VALUES (?, ?, ?, 0, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)
RETURNING id`,
		hitID, analysisID, string(res.Verdict), res.File, res.Format, res.Channel, res.ForceChannel,
		sqlReal(res.SampleRate), sqlReal(res.DurationS), sqlReal(res.NoiseRMS), sqlReal(res.WindowTauS), meta, toNS(now)).Scan(&resultID)
	if err != nil {
		return 0, fmt.Errorf("inserting result: %w", err)
	}
	// The modes one statement each (their ids are needed), then every
	// estimate of the result in one statement: on a PostgreSQL server
	// each statement is a round trip, and a four-mode result has sixteen
	// estimates (forwarding a spool's backlog is bound by round trips).
	modeIDs := make([]int64, len(res.Modes))
	nEst := 0
	for i, m := range res.Modes {
		err := tx.QueryRowContext(ctx, `
INSERT INTO modes (result_id, idx, label, frequency_hz, frequency_ci_low, frequency_ci_high,
                   damping_ratio, damping_ratio_ci_low, damping_ratio_ci_high, damping_ratio_sd,
                   amplitude, energy_share, cycles, snr_db, spread, dropped)
VALUES (?, ?, NULLIF(?, ''), ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)
RETURNING id`, resultID, i, m.Label,
			sqlReal(m.FrequencyHz), sqlReal(m.FrequencyCI95[0]), sqlReal(m.FrequencyCI95[1]),
			sqlReal(m.DampingRatio), sqlReal(m.DampingRatioCI[0]), sqlReal(m.DampingRatioCI[1]), sqlReal(m.DampingRatioSD),
			sqlReal(m.Amplitude), sqlReal(m.EnergyShare), sqlReal(m.Cycles), sqlReal(m.DecaySNRdB), sqlReal(m.Spread), m.Dropped).Scan(&modeIDs[i])
		if err != nil {
			return 0, fmt.Errorf("inserting mode %d: %w", i, err)
		}
		nEst += len(m.Estimates)
	}
	for lo := 0; lo < nEst; lo += estimatesPerStatement {
		if err := insertEstimates(ctx, tx, res.Modes, modeIDs, lo, min(lo+estimatesPerStatement, nEst)); err != nil {
			return 0, err
		}
	}
	for i, rs := range res.Reasons {
		var modeIdx any
		if rs.Mode != nil {
			modeIdx = int64(*rs.Mode)
		}
		if _, err := tx.ExecContext(ctx,
			"INSERT INTO reasons (result_id, idx, code, message, severity, mode_idx) VALUES (?, ?, ?, ?, ?, ?)",
			resultID, i, rs.Code, rs.Message, string(rs.Severity), modeIdx); err != nil {
			return 0, fmt.Errorf("inserting reason %d (%s): %w", i, rs.Code, err)
		}
	}
	return resultID, nil
}

// estimatesPerStatement bounds the rows of one INSERT of estimates (six
// parameters each: SQLite allows 32,766 parameters a statement).
const estimatesPerStatement = 1000

// insertEstimates inserts the estimates lo to hi-1 of modes, counted
// through the modes in order, in one statement; modeIDs are the modes'
// ids.
func insertEstimates(ctx context.Context, tx *sql.Tx, modes []pipeline.Mode, modeIDs []int64, lo, hi int) error {
	var b strings.Builder
	b.WriteString("INSERT INTO estimates (mode_id, idx, method, frequency_hz, damping_ratio, note) VALUES ")
	args := make([]any, 0, 6*(hi-lo))
	k := 0
	for i, m := range modes {
		for j, e := range m.Estimates {
			if k >= lo && k < hi {
				if len(args) > 0 {
					b.WriteString(", ")
				}
				b.WriteString("(?, ?, ?, ?, ?, ?)")
				args = append(args, modeIDs[i], j, e.Method, sqlReal(e.FrequencyHz), sqlReal(e.DampingRatio), e.Note)
			}
			k++
		}
	}
	if _, err := tx.ExecContext(ctx, b.String(), args...); err != nil {
		return fmt.Errorf("inserting estimates %d to %d: %w", lo, hi-1, err)
	}
	return nil
}

// checkResult refuses a result the schema cannot hold faithfully.
func checkResult(res *pipeline.Result) error {
	if res == nil {
		return errors.New("no result")
	}
	switch res.Verdict {
	case pipeline.Accepted, pipeline.Flagged, pipeline.Rejected:
	default:
		return fmt.Errorf("verdict %q is not accepted, flagged or rejected (was Decide called?)", res.Verdict)
	}
	for i, rs := range res.Reasons {
		switch rs.Severity {
		case pipeline.SeverityFlag, pipeline.SeverityDrop, pipeline.SeverityReject:
		default:
			return fmt.Errorf("reason %d (%s): severity %q is not flag, drop or reject", i, rs.Code, rs.Severity)
		}
		if rs.Code == "" {
			return fmt.Errorf("reason %d: empty code", i)
		}
	}
	for i, m := range res.Modes {
		for j, e := range m.Estimates {
			if e.Method == "" {
				return fmt.Errorf("mode %d, estimate %d: empty method", i, j)
			}
		}
	}
	return nil
}

// sqlReal stores a float64; NaN becomes NULL (SQLite would do the same
// silently) and reads back as NaN.
func sqlReal(x float64) any {
	if math.IsNaN(x) {
		return nil
	}
	return x
}

func marshalSettings(settings any) (string, error) {
	if settings == nil {
		return "{}", nil
	}
	b, err := json.Marshal(settings)
	if err != nil {
		return "", err
	}
	return string(b), nil
}

func marshalMap(m map[string]string) (string, error) {
	if len(m) == 0 {
		return "{}", nil
	}
	b, err := json.Marshal(m) // keys sorted: the same map gives the same text
	return string(b), err
}

func unmarshalMap(s string) (map[string]string, error) {
	if s == "" || s == "{}" {
		return nil, nil
	}
	var m map[string]string
	if err := json.Unmarshal([]byte(s), &m); err != nil {
		return nil, err
	}
	return m, nil
}

func validSHA256(s string) bool {
	if len(s) != 64 {
		return false
	}
	for i := 0; i < len(s); i++ {
		c := s[i]
		if !('0' <= c && c <= '9' || 'a' <= c && c <= 'f' || 'A' <= c && c <= 'F') {
			return false
		}
	}
	return true
}
