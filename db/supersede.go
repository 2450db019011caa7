package db

// Superseded hits: a file that changes after it was recorded (appended,
// rewritten after a pause, replaced under the same name) gives a new hit,
// and the hit of its earlier bytes is no longer counted. One path, one
// current hit; the earlier hit and its results stay as provenance
// (hits.superseded_by, hits.superseded_at, migration 0002).

import (
	"context"
	"database/sql"
	"fmt"
	"time"

	"github.com/ringlog/ringlog/pipeline"
)

// Predecessor is a hit that a recording superseded: the same path held
// other bytes before.
type Predecessor struct {
	HitID   int64
	SHA256  string
	Verdict pipeline.Verdict
}

// supersedePath marks the current hits first recorded under path, except
// hitID, as superseded by hitID, and returns them.
func supersedePath(ctx context.Context, tx *sql.Tx, path string, hitID int64, now time.Time) ([]Predecessor, error) {
	rows, err := tx.QueryContext(ctx, `
SELECT id, sha256, verdict FROM hits WHERE first_path = ? AND id <> ? AND superseded_by IS NULL ORDER BY id`, path, hitID)
	if err != nil {
		return nil, fmt.Errorf("earlier hits of %s: %w", path, err)
	}
	var out []Predecessor
	for rows.Next() {
		var p Predecessor
		if err := rows.Scan(&p.HitID, &p.SHA256, &p.Verdict); err != nil {
			rows.Close()
			return nil, err
		}
		out = append(out, p)
	}
	err = rows.Err()
	rows.Close()
	if err != nil || len(out) == 0 {
		return nil, err
	}
	if _, err := tx.ExecContext(ctx, `
UPDATE hits SET superseded_by = ?, superseded_at = ? WHERE first_path = ? AND id <> ? AND superseded_by IS NULL`,
		hitID, toNS(now), path, hitID); err != nil {
		return nil, fmt.Errorf("superseding the earlier hits of %s: %w", path, err)
	}
	return out, nil
}

// revive makes a superseded hit current again: its file holds its bytes
// once more.
func revive(ctx context.Context, tx *sql.Tx, hitID int64) error {
	_, err := tx.ExecContext(ctx, "UPDATE hits SET superseded_by = NULL, superseded_at = NULL WHERE id = ?", hitID)
	if err != nil {
		return fmt.Errorf("hit %d current again: %w", hitID, err)
	}
	return nil
}

// loadSuperseded fills SupersededBy, SupersededBySHA256 and SupersededAt
// of the hits that are superseded.
func loadSuperseded(ctx context.Context, tx *sql.Tx, hits []Hit) error {
	byID := make(map[int64]*Hit, len(hits))
	for i := range hits {
		byID[hits[i].ID] = &hits[i]
	}
	for lo := 0; lo < len(hits); lo += chunk {
		hi := min(lo+chunk, len(hits))
		ids := make([]any, 0, hi-lo)
		for _, h := range hits[lo:hi] {
			ids = append(ids, h.ID)
		}
		rows, err := tx.QueryContext(ctx, `
SELECT o.id, o.superseded_by, o.superseded_at, n.sha256 FROM hits o JOIN hits n ON n.id = o.superseded_by
WHERE o.superseded_by IS NOT NULL AND o.id IN (`+placeholders(len(ids))+`)`, ids...)
		if err != nil {
			return fmt.Errorf("superseded hits: %w", err)
		}
		for rows.Next() {
			var id, by int64
			var at sql.NullInt64
			var sha string
			if err := rows.Scan(&id, &by, &at, &sha); err != nil {
				rows.Close()
				return err
			}
			if h := byID[id]; h != nil {
				h.SupersededBy, h.SupersededBySHA256, h.SupersededAt = by, sha, fromNS(at.Int64)
			}
		}
		err = rows.Err()
		rows.Close()
		if err != nil {
			return err
		}
	}
	return nil
}

// SupersededHit is a hit that a later version of its file superseded,
// with the hit that took its place.
type SupersededHit struct {
	ID           int64
	SHA256       string
	Path         string // the file, as first recorded
	Verdict      pipeline.Verdict
	HitTime      time.Time
	SupersededAt time.Time // when the newer version was recorded
	// By is the hit that superseded it: the file's newer content, or the
	// existing hit whose bytes the file now holds.
	ByID      int64
	BySHA256  string
	ByPath    string
	ByVerdict pipeline.Verdict
}

// SupersededBetween lists the hits superseded in [since, until) (by the
// time the newer version was recorded), oldest first. Synthetic hits are
// left out.
func (db *DB) SupersededBetween(ctx context.Context, since, until time.Time) ([]SupersededHit, error) {
	var out []SupersededHit
	err := db.read(ctx, "superseded hits", func(tx *sql.Tx) error {
		rows, err := tx.QueryContext(ctx, `
SELECT o.id, o.sha256, o.first_path, o.verdict, o.hit_time, o.superseded_at, n.id, n.sha256, n.first_path, n.verdict
FROM hits o JOIN hits n ON n.id = o.superseded_by
WHERE o.superseded_by IS NOT NULL AND o.superseded_at >= ? AND o.superseded_at < ?
  AND o.first_path NOT LIKE '`+SyntheticPathPrefix+`%'
ORDER BY o.superseded_at, o.id`, toNS(since), toNS(until))
		if err != nil {
			return err
		}
		defer rows.Close()
		for rows.Next() {
			var s SupersededHit
			var ht, at int64
			if err := rows.Scan(&s.ID, &s.SHA256, &s.Path, &s.Verdict, &ht, &at, &s.ByID, &s.BySHA256, &s.ByPath, &s.ByVerdict); err != nil {
				return err
			}
			s.HitTime, s.SupersededAt = fromNS(ht), fromNS(at)
			out = append(out, s)
		}
		return rows.Err()
	})
	return out, err
}
