package db

// Queries of the live page at the bay (package report/live): the hits in
// the order they were recorded, and the day's tally.

import (
	"context"
	"database/sql"
	"fmt"
	"time"

	"github.com/ringlog/ringlog/pipeline"
)

// MaxLiveHits caps the hits one live query returns.
const MaxLiveHits = 500

// RecentHits returns the n most recently recorded hits, newest first, each
// with its current result. Here and below, superseded hits (see
// RecordResult) are left out. n is capped at MaxLiveHits.
func (db *DB) RecentHits(ctx context.Context, n int) ([]Hit, error) {
	n = max(1, min(n, MaxLiveHits))
	return db.hitsByRecording(ctx, "recent hits", " WHERE h.superseded_by IS NULL ORDER BY h.ingested_at DESC, h.id DESC LIMIT ?", nil, n)
}

// HitsAfter returns the hits recorded after the hit with id afterID
// (those with a larger id), oldest first, at most limit of them (capped
// at MaxLiveHits). afterID 0 starts at the first hit.
func (db *DB) HitsAfter(ctx context.Context, afterID int64, limit int) ([]Hit, error) {
	limit = max(1, min(limit, MaxLiveHits))
	return db.hitsByRecording(ctx, "hits after an id", " WHERE h.id > ? AND h.superseded_by IS NULL ORDER BY h.id LIMIT ?", []any{afterID}, limit)
}

// hitsByRecording loads hits with their current results; tail is the
// WHERE/ORDER/LIMIT part, args its arguments before the limit.
func (db *DB) hitsByRecording(ctx context.Context, what, tail string, args []any, limit int) ([]Hit, error) {
	var hits []Hit
	err := db.read(ctx, what, func(tx *sql.Tx) error {
		rows, err := tx.QueryContext(ctx, `
SELECT h.id, h.sha256, h.first_path, h.prototype, h.revision, h.bay, h.point, h.direction, h.hit_time, h.meta,
       h.ingested_at, r.analysis_id, r.id, r.verdict, r.file, r.format, r.channel, r.force_channel,
       r.sample_rate, r.duration, r.noise_rms, r.window_tau, r.meta, a.analysis_version
FROM hits h
JOIN results r ON r.hit_id = h.id AND r.superseded = 0
JOIN analyses a ON a.id = r.analysis_id`+tail, append(args, limit)...)
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
		return loadDetails(ctx, tx, hits)
	})
	if err != nil {
		return nil, err
	}
	return hits, nil
}

// Tally is the count of hits per verdict of one prototype and revision.
type Tally struct {
	Prototype, Revision string
	Verdicts            map[pipeline.Verdict]int
	Total               int
}

// TallyRecorded counts the hits recorded in [since, until) (by the time
// they were recorded, not struck) per prototype, revision and current
// verdict, ordered by prototype and revision.
func (db *DB) TallyRecorded(ctx context.Context, since, until time.Time) ([]Tally, error) {
	var out []Tally
	err := db.read(ctx, "tally of the day", func(tx *sql.Tx) error {
		rows, err := tx.QueryContext(ctx, `
SELECT prototype, revision, verdict, count(*) FROM hits
WHERE ingested_at >= ? AND ingested_at < ? AND superseded_by IS NULL
GROUP BY prototype, revision, verdict ORDER BY prototype, revision, verdict`, toNS(since), toNS(until))
		if err != nil {
			return err
		}
		defer rows.Close()
		for rows.Next() {
			var p, r string
			var v pipeline.Verdict
			var n int
			if err := rows.Scan(&p, &r, &v, &n); err != nil {
				return err
			}
			if len(out) == 0 || out[len(out)-1].Prototype != p || out[len(out)-1].Revision != r {
				out = append(out, Tally{Prototype: p, Revision: r, Verdicts: map[pipeline.Verdict]int{}})
			}
			t := &out[len(out)-1]
			t.Verdicts[v] += n
			t.Total += n
		}
		return rows.Err()
	})
	return out, err
}
