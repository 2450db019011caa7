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

// Filter selects hits. Empty fields select everything; string fields must
// match exactly.
type Filter struct {
	Prototype, Revision, Bay string
	Point, Direction         string
	// Revisions keeps hits of any of these revisions (beside Revision).
	Revisions []string
	// ModeLabels keeps hits whose current result has a mode with one of
	// these labels.
	ModeLabels []string
	// Since and Until bound the hit time: Since <= t < Until. Zero times
	// leave that side open.
	Since, Until time.Time
	// Verdicts keeps hits whose current verdict is one of these.
	Verdicts []pipeline.Verdict
	// Limit caps the number of hits returned (the oldest first); 0 is no cap.
	Limit int
	// ForStats loads only what the statistics read (see statsHits): no
	// estimates, intervals, reason messages or metadata.
	ForStats bool
	// Synthetic selects the synthetic hits (made for benchmarks, see
	// RecordSynthetic) instead of the real ones: a query never mixes them.
	Synthetic bool
	// WithSuperseded also selects the hits a later version of their file
	// superseded (see RecordResult); they are left out otherwise.
	WithSuperseded bool
}

// Hit is one stored hit with its current result.
type Hit struct {
	ID         int64
	SHA256     string
	Path       string // the first path the bytes were seen under
	Meta       HitMeta
	IngestedAt time.Time
	AnalysisID int64 // analyses row of the current result
	ResultID   int64 // the current result
	// Result is the current result, shaped like the analysis output:
	// verdict, reasons (with mode indices), modes in order with their
	// estimates, primary first.
	Result *pipeline.Result
	// ModeIDs holds the database id of each mode of Result.Modes, in the
	// same order, for SetModeLabel.
	ModeIDs []int64
	// SupersededBy is the hit that superseded this one (a later version
	// of its file), 0 while it is current; SupersededBySHA256 is that
	// hit's SHA-256 and SupersededAt when it was recorded. Loaded only
	// with Filter.WithSuperseded (other queries never return a superseded
	// hit).
	SupersededBy       int64
	SupersededBySHA256 string
	SupersededAt       time.Time
	// Excluded is the exclusion by hand in force ('ringlog exclude'), nil
	// when the hit is not excluded.
	Excluded *HandExclusion
}

// StoredFile is what a reanalysis needs to find a hit's bytes again.
type StoredFile struct {
	HitID  int64
	Path   string   // first path
	Others []string // other paths the same bytes were seen under (duplicates)
	SHA256 string
	Meta   HitMeta
}

// where builds the WHERE clause of f over hits h (and results r joined as
// the current result).
func (f Filter) where() (string, []any) {
	conds := []string{"h.first_path NOT LIKE '" + SyntheticPathPrefix + "%'"}
	if f.Synthetic {
		conds[0] = "h.first_path LIKE '" + SyntheticPathPrefix + "%'"
	}
	if !f.WithSuperseded {
		conds = append(conds, "h.superseded_by IS NULL")
	}
	var args []any
	eq := func(col, v string) {
		if v != "" {
			conds = append(conds, col+" = ?")
			args = append(args, v)
		}
	}
	eq("h.prototype", f.Prototype)
	eq("h.revision", f.Revision)
	in := func(col string, vs []string) {
		if len(vs) > 0 {
			conds = append(conds, col+" IN ("+placeholders(len(vs))+")")
			for _, v := range vs {
				args = append(args, v)
			}
		}
	}
	in("h.revision", f.Revisions)
	eq("h.bay", f.Bay)
	eq("h.point", f.Point)
	eq("h.direction", f.Direction)
	if !f.Since.IsZero() {
		conds = append(conds, "h.hit_time >= ?")
		args = append(args, toNS(f.Since))
	}
	if !f.Until.IsZero() {
		conds = append(conds, "h.hit_time < ?")
		args = append(args, toNS(f.Until))
	}
	if len(f.Verdicts) > 0 {
		conds = append(conds, "h.verdict IN ("+placeholders(len(f.Verdicts))+")")
		for _, v := range f.Verdicts {
			args = append(args, string(v))
		}
	}
	if len(f.ModeLabels) > 0 {
		conds = append(conds, "EXISTS (SELECT 1 FROM modes m WHERE m.label IN ("+placeholders(len(f.ModeLabels))+") AND m.result_id = r.id)")
		for _, l := range f.ModeLabels {
			args = append(args, l)
		}
	}
	return " WHERE " + strings.Join(conds, " AND "), args
}

func (f Filter) limit() string {
	if f.Limit > 0 {
		return fmt.Sprintf(" LIMIT %d", f.Limit)
	}
	return ""
}

func placeholders(n int) string {
	return strings.TrimSuffix(strings.Repeat("?,", n), ",")
}

// Hits returns the hits f selects, oldest hit time first, each with its
// current result. Duplicate files are not hits.
func (db *DB) Hits(ctx context.Context, f Filter) ([]Hit, error) {
	if f.ForStats {
		return db.statsHits(ctx, f)
	}
	return db.fullHits(ctx, f, nil)
}

// fullHits is Hits with every column; with ids, only of those hits (see
// EachHit).
func (db *DB) fullHits(ctx context.Context, f Filter, ids []any) ([]Hit, error) {
	var hits []Hit
	err := db.read(ctx, "querying hits", func(tx *sql.Tx) error {
		where, args := f.where()
		if ids != nil {
			where += " AND h.id IN (" + placeholders(len(ids)) + ")"
			args = append(args, ids...)
		}
		rows, err := tx.QueryContext(ctx, `
SELECT h.id, h.sha256, h.first_path, h.prototype, h.revision, h.bay, h.point, h.direction, h.hit_time, h.meta,
       h.ingested_at, r.analysis_id, r.id, r.verdict, r.file, r.format, r.channel, r.force_channel,
       r.sample_rate, r.duration, r.noise_rms, r.window_tau, r.meta, a.analysis_version
FROM hits h
JOIN results r ON r.hit_id = h.id AND r.superseded = 0
JOIN analyses a ON a.id = r.analysis_id`+where+`
ORDER BY h.hit_time, h.id`+f.limit(), args...)
		if err != nil {
			return err
		}
		defer rows.Close()
		for rows.Next() {
			var h Hit
			var res pipeline.Result
			var hitTime, ingested int64
			var hitMeta, resMeta string
			var sr, dur, noise, tau sql.NullFloat64
			if err := rows.Scan(&h.ID, &h.SHA256, &h.Path, &h.Meta.Prototype, &h.Meta.Revision, &h.Meta.Bay,
				&h.Meta.Point, &h.Meta.Direction, &hitTime, &hitMeta, &ingested, &h.AnalysisID, &h.ResultID,
				&res.Verdict, &res.File, &res.Format, &res.Channel, &res.ForceChannel, &sr, &dur, &noise, &tau,
				&resMeta, &res.AnalysisVersion); err != nil {
				return err
			}
			h.Meta.HitTime, h.IngestedAt = fromNS(hitTime), fromNS(ingested)
			if h.Meta.Extra, err = unmarshalMap(hitMeta); err != nil {
				return fmt.Errorf("hit %d: metadata: %w", h.ID, err)
			}
			if res.Meta, err = unmarshalMap(resMeta); err != nil {
				return fmt.Errorf("hit %d: result metadata: %w", h.ID, err)
			}
			res.SampleRate, res.DurationS, res.NoiseRMS, res.WindowTauS = orNaN(sr), orNaN(dur), orNaN(noise), orNaN(tau)
			res.Reasons, res.Modes = []pipeline.Reason{}, []pipeline.Mode{}
			h.Result = &res
			hits = append(hits, h)
		}
		if err := rows.Err(); err != nil {
			return err
		}
		rows.Close()
		if f.WithSuperseded {
			if err := loadSuperseded(ctx, tx, hits); err != nil {
				return err
			}
		}
		if err := attachExclusions(ctx, tx, hits); err != nil {
			return err
		}
		return loadDetails(ctx, tx, hits)
	})
	if err != nil {
		return nil, err
	}
	return hits, nil
}

// modeRef locates a loaded mode: its hit and its index in the result.
type modeRef struct {
	h   *Hit
	idx int
}

// chunk is how many ids go into one IN (...) list.
const chunk = 500

// loadDetails fills the modes, estimates and reasons of the hits' results.
func loadDetails(ctx context.Context, tx *sql.Tx, hits []Hit) error {
	byResult := make(map[int64]*Hit, len(hits))
	for i := range hits {
		byResult[hits[i].ResultID] = &hits[i]
	}
	for lo := 0; lo < len(hits); lo += chunk {
		hi := min(lo+chunk, len(hits))
		ids := make([]any, 0, hi-lo)
		for _, h := range hits[lo:hi] {
			ids = append(ids, h.ResultID)
		}
		modeAt := make(map[int64]modeRef)
		if err := loadModes(ctx, tx, ids, byResult, modeAt); err != nil {
			return err
		}
		if err := loadEstimates(ctx, tx, ids, modeAt); err != nil {
			return err
		}
		if err := loadReasons(ctx, tx, ids, byResult); err != nil {
			return err
		}
	}
	return nil
}

func loadModes(ctx context.Context, tx *sql.Tx, ids []any, byResult map[int64]*Hit, modeAt map[int64]modeRef) error {
	rows, err := tx.QueryContext(ctx, `
SELECT id, result_id, idx, label, frequency_hz, frequency_ci_low, frequency_ci_high,
       damping_ratio, damping_ratio_ci_low, damping_ratio_ci_high, damping_ratio_sd,
       amplitude, energy_share, cycles, snr_db, spread, dropped
FROM modes WHERE result_id IN (`+placeholders(len(ids))+`) ORDER BY result_id, idx`, ids...)
	if err != nil {
		return fmt.Errorf("modes: %w", err)
	}
	defer rows.Close()
	for rows.Next() {
		var id, resultID int64
		var idx int
		var label sql.NullString
		var v [12]sql.NullFloat64
		var m pipeline.Mode
		if err := rows.Scan(&id, &resultID, &idx, &label, &v[0], &v[1], &v[2], &v[3], &v[4], &v[5], &v[6],
			&v[7], &v[8], &v[9], &v[10], &v[11], &m.Dropped); err != nil {
			return fmt.Errorf("modes: %w", err)
		}
		h := byResult[resultID]
		if h == nil || idx != len(h.Result.Modes) {
			return fmt.Errorf("result %d: mode index %d out of sequence", resultID, idx)
		}
		m.Label = label.String
		m.FrequencyHz = orNaN(v[0])
		m.FrequencyCI95 = [2]float64{orNaN(v[1]), orNaN(v[2])}
		m.DampingRatio = orNaN(v[3])
		m.DampingRatioCI = [2]float64{orNaN(v[4]), orNaN(v[5])}
		m.DampingRatioSD = orNaN(v[6])
		m.Amplitude, m.EnergyShare, m.Cycles = orNaN(v[7]), orNaN(v[8]), orNaN(v[9])
		m.DecaySNRdB, m.Spread = orNaN(v[10]), orNaN(v[11])
		m.Estimates = []pipeline.Estimate{}
		h.Result.Modes = append(h.Result.Modes, m)
		h.ModeIDs = append(h.ModeIDs, id)
		modeAt[id] = modeRef{h, idx}
	}
	return rows.Err()
}

func loadEstimates(ctx context.Context, tx *sql.Tx, ids []any, modeAt map[int64]modeRef) error {
	rows, err := tx.QueryContext(ctx, `
SELECT e.mode_id, e.method, e.frequency_hz, e.damping_ratio, e.note
FROM estimates e JOIN modes m ON m.id = e.mode_id
WHERE m.result_id IN (`+placeholders(len(ids))+`) ORDER BY e.mode_id, e.idx`, ids...)
	if err != nil {
		return fmt.Errorf("estimates: %w", err)
	}
	defer rows.Close()
	for rows.Next() {
		var modeID int64
		var e pipeline.Estimate
		var f, z sql.NullFloat64
		if err := rows.Scan(&modeID, &e.Method, &f, &z, &e.Note); err != nil {
			return fmt.Errorf("estimates: %w", err)
		}
		at, ok := modeAt[modeID]
		if !ok {
			return fmt.Errorf("estimate of unknown mode %d", modeID)
		}
		e.FrequencyHz, e.DampingRatio = orNaN(f), orNaN(z)
		m := &at.h.Result.Modes[at.idx]
		m.Estimates = append(m.Estimates, e)
	}
	return rows.Err()
}

func loadReasons(ctx context.Context, tx *sql.Tx, ids []any, byResult map[int64]*Hit) error {
	rows, err := tx.QueryContext(ctx, `
SELECT result_id, code, message, severity, mode_idx
FROM reasons WHERE result_id IN (`+placeholders(len(ids))+`) ORDER BY result_id, idx`, ids...)
	if err != nil {
		return fmt.Errorf("reasons: %w", err)
	}
	defer rows.Close()
	for rows.Next() {
		var resultID int64
		var r pipeline.Reason
		var mode sql.NullInt64
		if err := rows.Scan(&resultID, &r.Code, &r.Message, &r.Severity, &mode); err != nil {
			return fmt.Errorf("reasons: %w", err)
		}
		if mode.Valid {
			r.Mode = pipeline.ModeRef(int(mode.Int64))
		}
		h := byResult[resultID]
		if h == nil {
			return fmt.Errorf("reason of unknown result %d", resultID)
		}
		h.Result.Reasons = append(h.Result.Reasons, r)
	}
	return rows.Err()
}

func orNaN(v sql.NullFloat64) float64 {
	if !v.Valid {
		return math.NaN()
	}
	return v.Float64
}

// StoredFiles returns, for the hits f selects, where their bytes can be
// read again and their metadata: what a reanalysis needs. Oldest first.
func (db *DB) StoredFiles(ctx context.Context, f Filter) ([]StoredFile, error) {
	var out []StoredFile
	err := db.read(ctx, "listing stored files", func(tx *sql.Tx) error {
		where, args := f.where()
		rows, err := tx.QueryContext(ctx, `
SELECT h.id, h.first_path, h.sha256, h.prototype, h.revision, h.bay, h.point, h.direction, h.hit_time, h.meta
FROM hits h
JOIN results r ON r.hit_id = h.id AND r.superseded = 0`+where+`
ORDER BY h.hit_time, h.id`+f.limit(), args...)
		if err != nil {
			return err
		}
		defer rows.Close()
		byHit := make(map[int64]int)
		for rows.Next() {
			var s StoredFile
			var t int64
			var meta string
			if err := rows.Scan(&s.HitID, &s.Path, &s.SHA256, &s.Meta.Prototype, &s.Meta.Revision, &s.Meta.Bay,
				&s.Meta.Point, &s.Meta.Direction, &t, &meta); err != nil {
				return err
			}
			s.Meta.HitTime = fromNS(t)
			if s.Meta.Extra, err = unmarshalMap(meta); err != nil {
				return fmt.Errorf("hit %d: metadata: %w", s.HitID, err)
			}
			byHit[s.HitID] = len(out)
			out = append(out, s)
		}
		if err := rows.Err(); err != nil {
			return err
		}
		rows.Close()
		for lo := 0; lo < len(out); lo += chunk {
			hi := min(lo+chunk, len(out))
			ids := make([]any, 0, hi-lo)
			for _, s := range out[lo:hi] {
				ids = append(ids, s.HitID)
			}
			if err := loadOthers(ctx, tx, ids, out, byHit); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	return out, nil
}

func loadOthers(ctx context.Context, tx *sql.Tx, ids []any, out []StoredFile, byHit map[int64]int) error {
	rows, err := tx.QueryContext(ctx, `
SELECT hit_id, path FROM files
WHERE state = 'duplicate' AND hit_id IN (`+placeholders(len(ids))+`) ORDER BY hit_id, first_seen, id`, ids...)
	if err != nil {
		return fmt.Errorf("duplicate paths: %w", err)
	}
	defer rows.Close()
	for rows.Next() {
		var id int64
		var p string
		if err := rows.Scan(&id, &p); err != nil {
			return err
		}
		if i, ok := byHit[id]; ok && p != out[i].Path {
			out[i].Others = append(out[i].Others, p)
		}
	}
	return rows.Err()
}

// Status is the state of the ingest queue and the history at a glance.
type Status struct {
	Files     map[State]int            // files per state
	Pending   int                      // queue length (files in state pending)
	Hits      int                      // distinct current hits
	Verdicts  map[pipeline.Verdict]int // hits per current verdict
	LastHit   *LastHit                 // most recently stored hit; nil when none
	LastError *LastError               // most recent failure not yet overcome; nil when none
	Schema    int                      // schema version of the database

	// Superseded counts the hits a later version of their file
	// superseded: kept as provenance, not counted in Hits.
	Superseded int
}

// LastHit describes the most recently stored hit.
type LastHit struct {
	ID         int64
	Path       string
	HitTime    time.Time
	IngestedAt time.Time
	Verdict    pipeline.Verdict
}

// LastError describes the most recent failed attempt at a file.
type LastError struct {
	Path     string
	Message  string
	Time     time.Time
	Attempts int
	Final    bool // the file was given up
}

// Status counts files per state and hits per verdict and finds the last
// hit and the last error.
func (db *DB) Status(ctx context.Context) (Status, error) {
	st := Status{Files: map[State]int{}, Verdicts: map[pipeline.Verdict]int{}}
	err := db.read(ctx, "status", func(tx *sql.Tx) error {
		if err := countInto(ctx, tx, "SELECT state, count(*) FROM files GROUP BY state", func(k string, n int) {
			st.Files[State(k)] = n
		}); err != nil {
			return err
		}
		st.Pending = st.Files[StatePending]
		if err := tx.QueryRowContext(ctx, "SELECT count(*) FROM hits WHERE superseded_by IS NOT NULL AND first_path NOT LIKE '"+SyntheticPathPrefix+"%'").
			Scan(&st.Superseded); err != nil {
			return err
		}
		if err := countInto(ctx, tx, "SELECT verdict, count(*) FROM hits WHERE first_path NOT LIKE '"+SyntheticPathPrefix+"%' AND superseded_by IS NULL GROUP BY verdict", func(k string, n int) {
			st.Verdicts[pipeline.Verdict(k)] = n
			st.Hits += n
		}); err != nil {
			return err
		}
		var lh LastHit
		var ht, ing int64
		err := tx.QueryRowContext(ctx,
			"SELECT id, first_path, hit_time, ingested_at, verdict FROM hits WHERE first_path NOT LIKE '"+SyntheticPathPrefix+"%' AND superseded_by IS NULL ORDER BY ingested_at DESC, id DESC LIMIT 1").
			Scan(&lh.ID, &lh.Path, &ht, &ing, &lh.Verdict)
		switch {
		case err == nil:
			lh.HitTime, lh.IngestedAt = fromNS(ht), fromNS(ing)
			st.LastHit = &lh
		case !errors.Is(err, sql.ErrNoRows):
			return err
		}
		var le LastError
		var t int64
		var state State
		err = tx.QueryRowContext(ctx,
			"SELECT path, last_error, updated, attempts, state FROM files WHERE last_error <> '' ORDER BY updated DESC, id DESC LIMIT 1").
			Scan(&le.Path, &le.Message, &t, &le.Attempts, &state)
		switch {
		case err == nil:
			le.Time, le.Final = fromNS(t), state == StateFailed
			st.LastError = &le
		case !errors.Is(err, sql.ErrNoRows):
			return err
		}
		st.Schema, err = db.dialect.schemaVersion(ctx, tx)
		return err
	})
	if err != nil {
		return Status{}, err
	}
	return st, nil
}

func countInto(ctx context.Context, tx *sql.Tx, q string, put func(string, int)) error {
	rows, err := tx.QueryContext(ctx, q)
	if err != nil {
		return err
	}
	defer rows.Close()
	for rows.Next() {
		var k string
		var n int
		if err := rows.Scan(&k, &n); err != nil {
			return err
		}
		put(k, n)
	}
	return rows.Err()
}

// Settings returns the settings JSON stored with an analyses row.
func (db *DB) Settings(ctx context.Context, analysisID int64) (version string, settings json.RawMessage, err error) {
	var s string
	err = db.r.QueryRowContext(ctx, "SELECT analysis_version, settings FROM analyses WHERE id = ?", analysisID).Scan(&version, &s)
	if errors.Is(err, sql.ErrNoRows) {
		return "", nil, fmt.Errorf("database %s: analysis %d: %w", db.path, analysisID, ErrNotFound)
	}
	if err != nil {
		return "", nil, fmt.Errorf("database %s: analysis %d: %w", db.path, analysisID, err)
	}
	return version, json.RawMessage(s), nil
}

// Results returns every result stored for a hit, oldest first, superseded
// ones included: the provenance of the hit's numbers.
func (db *DB) Results(ctx context.Context, hitID int64) ([]ResultInfo, error) {
	var out []ResultInfo
	err := db.read(ctx, fmt.Sprintf("results of hit %d", hitID), func(tx *sql.Tx) error {
		rows, err := tx.QueryContext(ctx, `
SELECT r.id, r.analysis_id, a.analysis_version, r.verdict, r.superseded, r.created_at
FROM results r JOIN analyses a ON a.id = r.analysis_id
WHERE r.hit_id = ? ORDER BY r.id`, hitID)
		if err != nil {
			return err
		}
		defer rows.Close()
		for rows.Next() {
			var ri ResultInfo
			var t int64
			if err := rows.Scan(&ri.ID, &ri.AnalysisID, &ri.AnalysisVersion, &ri.Verdict, &ri.Superseded, &t); err != nil {
				return err
			}
			ri.CreatedAt = fromNS(t)
			out = append(out, ri)
		}
		return rows.Err()
	})
	return out, err
}

// ResultInfo is the provenance of one stored result.
type ResultInfo struct {
	ID              int64
	AnalysisID      int64
	AnalysisVersion string
	Verdict         pipeline.Verdict
	Superseded      bool
	CreatedAt       time.Time
}
