package db

// The statistics' view of the history: Hits with Filter.ForStats loads
// only the columns the statistics, comparisons, trends, Rayleigh fits and
// exports read, so a long history answers quickly and in little memory.

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"runtime"
	"sync"

	"github.com/ringlog/ringlog/pipeline"
)

// statsHits is Hits for Filter.ForStats: per hit its identity (id,
// SHA-256, first path, prototype, revision, bay, point, direction, hit
// time) and a Result with the verdict, the analysis version, the modes
// (label, frequency, damping ratio and its standard error, amplitude,
// dropped; no intervals, no estimates) and the reasons (code, severity,
// mode; no message). Hit metadata JSON, result metadata, signal facts and
// estimates are not read.
func (db *DB) statsHits(ctx context.Context, f Filter) ([]Hit, error) {
	var hits []Hit
	err := db.read(ctx, "querying hits for statistics", func(tx *sql.Tx) error {
		versions, err := analysisVersions(ctx, tx)
		if err != nil {
			return err
		}
		where, args := f.where()
		// counted first, so that the hits and their results are one
		// allocation each, not a growing copy
		var n int
		if err := tx.QueryRowContext(ctx, `
SELECT count(*) FROM hits h
JOIN results r ON r.hit_id = h.id AND r.superseded = 0`+where, args...).Scan(&n); err != nil {
			return err
		}
		if f.Limit > 0 {
			n = min(n, f.Limit)
		}
		rows, err := tx.QueryContext(ctx, `
SELECT h.id, h.sha256, h.first_path, h.prototype, h.revision, h.bay, h.point, h.direction, h.hit_time,
       r.id, r.analysis_id, r.verdict
FROM hits h
JOIN results r ON r.hit_id = h.id AND r.superseded = 0`+where+`
ORDER BY h.hit_time, h.id`+f.limit(), args...)
		if err != nil {
			return err
		}
		defer rows.Close()
		in := interner{}
		// the Results live in one slice: one allocation, not one per hit
		hits = make([]Hit, 0, n)
		results := make([]pipeline.Result, 0, n)
		// scanned into once-allocated variables: Scan takes their addresses
		var h Hit
		var hitTime int64
		var proto, rev, bay, point, dir, verdict string
		for rows.Next() {
			h = Hit{}
			var res pipeline.Result
			if err := rows.Scan(&h.ID, &h.SHA256, &h.Path, &proto, &rev, &bay, &point, &dir, &hitTime,
				&h.ResultID, &h.AnalysisID, &verdict); err != nil {
				return err
			}
			h.Meta = HitMeta{Prototype: in.get(proto), Revision: in.get(rev), Bay: in.get(bay), Point: in.get(point),
				Direction: in.get(dir), HitTime: fromNS(hitTime)}
			res.Verdict = pipeline.Verdict(in.get(verdict))
			res.AnalysisVersion = versions[h.AnalysisID]
			res.File = h.Path
			res.Reasons, res.Modes = []pipeline.Reason{}, []pipeline.Mode{}
			hits = append(hits, h)
			results = append(results, res)
		}
		if err := rows.Err(); err != nil {
			return err
		}
		rows.Close()
		for i := range hits {
			hits[i].Result = &results[i]
		}
		return attachExclusions(ctx, tx, hits)
	})
	if err != nil {
		return nil, err
	}
	return hits, db.loadStatsDetails(ctx, hits)
}

// loadStatsDetails fills the modes and reasons of the hits, in chunks of
// lightChunk results spread over up to statsWorkers read transactions
// running at once. A result's modes and reasons never change once stored
// (a reanalysis adds a new result), so reading them in transactions other
// than the one that found the hits gives the same values.
func (db *DB) loadStatsDetails(ctx context.Context, hits []Hit) error {
	byResult := make(map[int64]*Hit, len(hits))
	for i := range hits {
		byResult[hits[i].ResultID] = &hits[i]
	}
	chunks := (len(hits) + lightChunk - 1) / lightChunk
	workers := min(runtime.GOMAXPROCS(0), statsWorkers, chunks)
	errs := make([]error, workers)
	var wg sync.WaitGroup
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			in := interner{}
			errs[w] = db.read(ctx, "querying modes for statistics", func(tx *sql.Tx) error {
				for c := w; c < chunks; c += workers {
					lo, hi := c*lightChunk, min((c+1)*lightChunk, len(hits))
					ids := make([]any, 0, hi-lo)
					for _, h := range hits[lo:hi] {
						ids = append(ids, h.ResultID)
					}
					if err := loadLightModes(ctx, tx, ids, byResult, &in); err != nil {
						return err
					}
					if err := loadLightReasons(ctx, tx, ids, byResult, &in); err != nil {
						return err
					}
				}
				return nil
			})
		}()
	}
	wg.Wait()
	return errors.Join(errs...)
}

// statsWorkers bounds the read transactions loadStatsDetails runs at once
// (the SQLite read pool holds four connections).
const statsWorkers = 2

// lightChunk is how many result ids go into one IN (...) list of the
// statistics' queries.
const lightChunk = 1000

// interner shares the storage of repeated strings (prototype, revision,
// labels, codes, ...) between hits.
type interner map[string]string

func (in interner) get(s string) string {
	if v, ok := in[s]; ok {
		return v
	}
	in[s] = s
	return s
}

func analysisVersions(ctx context.Context, tx *sql.Tx) (map[int64]string, error) {
	rows, err := tx.QueryContext(ctx, "SELECT id, analysis_version FROM analyses")
	if err != nil {
		return nil, fmt.Errorf("analyses: %w", err)
	}
	defer rows.Close()
	out := map[int64]string{}
	for rows.Next() {
		var id int64
		var v string
		if err := rows.Scan(&id, &v); err != nil {
			return nil, fmt.Errorf("analyses: %w", err)
		}
		out[id] = v
	}
	return out, rows.Err()
}

// loadLightModes fills the modes of the results ids (a chunk of
// consecutive hits). The modes of the chunk share one backing array, each
// result's a full slice of it: one allocation per chunk, not one per hit.
func loadLightModes(ctx context.Context, tx *sql.Tx, ids []any, byResult map[int64]*Hit, in *interner) error {
	rows, err := tx.QueryContext(ctx, `
SELECT result_id, idx, label, frequency_hz, damping_ratio, damping_ratio_sd, amplitude, dropped
FROM modes WHERE result_id IN (`+placeholders(len(ids))+`) ORDER BY result_id, idx`, ids...)
	if err != nil {
		return fmt.Errorf("modes: %w", err)
	}
	defer rows.Close()
	type span struct {
		h      *Hit
		lo, hi int
	}
	buf := make([]pipeline.Mode, 0, 4*len(ids))
	spans := make([]span, 0, len(ids))
	// scanned into once-allocated variables: Scan takes their addresses
	var resultID int64
	var idx int
	var label sql.NullString
	var f, z, sd, amp sql.NullFloat64
	var dropped bool
	for rows.Next() {
		if err := rows.Scan(&resultID, &idx, &label, &f, &z, &sd, &amp, &dropped); err != nil {
			return fmt.Errorf("modes: %w", err)
		}
		h := byResult[resultID]
		if h == nil {
			return fmt.Errorf("mode of unknown result %d", resultID)
		}
		if n := len(spans); n == 0 || spans[n-1].h != h {
			spans = append(spans, span{h: h, lo: len(buf)})
		}
		sp := &spans[len(spans)-1]
		if idx != len(buf)-sp.lo {
			return fmt.Errorf("result %d: mode index %d out of sequence", resultID, idx)
		}
		m := pipeline.Mode{Label: in.get(label.String), Dropped: dropped}
		m.FrequencyHz, m.DampingRatio, m.DampingRatioSD, m.Amplitude = orNaN(f), orNaN(z), orNaN(sd), orNaN(amp)
		m.FrequencyCI95, m.DampingRatioCI = nanPair, nanPair
		m.EnergyShare, m.Cycles, m.DecaySNRdB, m.Spread = nan, nan, nan, nan
		buf = append(buf, m)
		sp.hi = len(buf)
	}
	if err := rows.Err(); err != nil {
		return err
	}
	for _, sp := range spans {
		sp.h.Result.Modes = buf[sp.lo:sp.hi:sp.hi]
	}
	return nil
}

var (
	nan     = orNaN(sql.NullFloat64{})
	nanPair = [2]float64{nan, nan}
)

func loadLightReasons(ctx context.Context, tx *sql.Tx, ids []any, byResult map[int64]*Hit, in *interner) error {
	rows, err := tx.QueryContext(ctx, `
SELECT result_id, code, severity, mode_idx
FROM reasons WHERE result_id IN (`+placeholders(len(ids))+`) ORDER BY result_id, idx`, ids...)
	if err != nil {
		return fmt.Errorf("reasons: %w", err)
	}
	defer rows.Close()
	for rows.Next() {
		var resultID int64
		var code, sev string
		var mode sql.NullInt64
		if err := rows.Scan(&resultID, &code, &sev, &mode); err != nil {
			return fmt.Errorf("reasons: %w", err)
		}
		h := byResult[resultID]
		if h == nil {
			return fmt.Errorf("reason of unknown result %d", resultID)
		}
		r := pipeline.Reason{Code: in.get(code), Severity: pipeline.Severity(in.get(sev))}
		if mode.Valid {
			r.Mode = pipeline.ModeRef(int(mode.Int64))
		}
		h.Result.Reasons = append(h.Result.Reasons, r)
	}
	return rows.Err()
}

// eachHitPage is how many hits EachHit holds at a time (a variable for
// the tests).
var eachHitPage = 1000

// EachHit calls fn with each hit f selects, as Hits returns them (every
// column; f.ForStats is ignored) and in the same order, holding a page of
// eachHitPage hits at a time: it lists the ids of the hits in order first,
// then reads their columns, modes, estimates and reasons a page at a time,
// so its memory stays that of one page and the ids however long the
// history. A page is read in a transaction of its own: a hit that is
// superseded while the pages are read is left out of the later pages. An
// error of fn ends the listing and is returned.
func (db *DB) EachHit(ctx context.Context, f Filter, fn func(Hit) error) error {
	f.ForStats = false
	var ids []any
	err := db.read(ctx, "listing hits", func(tx *sql.Tx) error {
		where, args := f.where()
		rows, err := tx.QueryContext(ctx, `
SELECT h.id FROM hits h
JOIN results r ON r.hit_id = h.id AND r.superseded = 0`+where+`
ORDER BY h.hit_time, h.id`+f.limit(), args...)
		if err != nil {
			return err
		}
		defer rows.Close()
		var id int64
		for rows.Next() {
			if err := rows.Scan(&id); err != nil {
				return err
			}
			ids = append(ids, id)
		}
		return rows.Err()
	})
	if err != nil {
		return err
	}
	f.Limit = 0
	for lo := 0; lo < len(ids); lo += eachHitPage {
		page, err := db.fullHits(ctx, f, ids[lo:min(lo+eachHitPage, len(ids))])
		if err != nil {
			return err
		}
		for _, h := range page {
			if err := fn(h); err != nil {
				return err
			}
		}
	}
	return nil
}
