package db

// Hits left out of the statistics by hand ('ringlog exclude'). The
// exclusions table keeps every exclusion: taking one back marks it undone,
// so who left a hit out, why and when stays in the history.

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"strconv"
	"strings"
	"time"
)

// HandExclusion is one exclusion of a hit by hand.
type HandExclusion struct {
	ID    int64
	HitID int64
	// Why is the reason the analyst gave; By the OS user; At the time.
	Why string
	By  string
	At  time.Time
	// UndoneBy and UndoneAt are set once the exclusion was taken back
	// (UndoneAt zero while it holds).
	UndoneBy string
	UndoneAt time.Time
}

// MinPrefix is the shortest SHA-256 prefix ResolveHit matches.
const MinPrefix = 4

// ErrAmbiguous is returned when a hit reference matches more than one hit.
var ErrAmbiguous = errors.New("ambiguous hit reference")

// HitRef is a hit named by ResolveHit: its id, SHA-256 and first path.
type HitRef struct {
	ID     int64
	SHA256 string
	Path   string
}

// ResolveHit finds the hit that ref names: a hit id (decimal digits) or a
// prefix of at least MinPrefix hex digits of its SHA-256. A reference that
// matches no hit wraps ErrNotFound; one that matches several (a prefix of
// two hashes, or digits that are one hit's id and another's hash prefix)
// wraps ErrAmbiguous and names the candidates.
func (db *DB) ResolveHit(ctx context.Context, ref string) (HitRef, error) {
	ref = strings.ToLower(strings.TrimSpace(ref))
	var found []HitRef
	err := db.read(ctx, "finding hit "+ref, func(tx *sql.Tx) error {
		add := func(rows *sql.Rows, err error) error {
			if err != nil {
				return err
			}
			defer rows.Close()
			for rows.Next() {
				var h HitRef
				if err := rows.Scan(&h.ID, &h.SHA256, &h.Path); err != nil {
					return err
				}
				if !containsHit(found, h.ID) {
					found = append(found, h)
				}
			}
			return rows.Err()
		}
		if id, err := strconv.ParseInt(ref, 10, 64); err == nil && id > 0 {
			if err := add(tx.QueryContext(ctx, "SELECT id, sha256, first_path FROM hits WHERE id = ?", id)); err != nil {
				return err
			}
		}
		if len(ref) >= MinPrefix && isHex(ref) {
			// At most a few candidates are needed to tell ambiguity.
			return add(tx.QueryContext(ctx, "SELECT id, sha256, first_path FROM hits WHERE sha256 LIKE ? ORDER BY id LIMIT 5", ref+"%"))
		}
		return nil
	})
	if err != nil {
		return HitRef{}, err
	}
	switch len(found) {
	case 0:
		if _, err := strconv.ParseInt(ref, 10, 64); err != nil && (len(ref) < MinPrefix || !isHex(ref)) {
			return HitRef{}, fmt.Errorf("hit %q: %w: give a hit id or at least %d hex digits of its SHA-256", ref, ErrNotFound, MinPrefix)
		}
		return HitRef{}, fmt.Errorf("hit %q: %w: no hit has this id or a SHA-256 starting with it", ref, ErrNotFound)
	case 1:
		return found[0], nil
	}
	var names []string
	for _, h := range found {
		names = append(names, fmt.Sprintf("hit %d (%s, %s)", h.ID, h.SHA256[:min(12, len(h.SHA256))], h.Path))
	}
	more := ""
	if len(found) >= 5 {
		more = ", ..."
	}
	return HitRef{}, fmt.Errorf("hit %q: %w: it matches %s%s; give more digits of the SHA-256", ref, ErrAmbiguous, strings.Join(names, ", "), more)
}

func containsHit(hs []HitRef, id int64) bool {
	for _, h := range hs {
		if h.ID == id {
			return true
		}
	}
	return false
}

func isHex(s string) bool {
	for _, c := range s {
		if !(c >= '0' && c <= '9' || c >= 'a' && c <= 'f') {
			return false
		}
	}
	return s != ""
}

// Exclude leaves hit hitID out of every statistic, recording why, by whom
// and when. A hit already excluded keeps its exclusion: Exclude returns it
// with added false.
func (db *DB) Exclude(ctx context.Context, hitID int64, why, by string, at time.Time) (ex HandExclusion, added bool, err error) {
	if strings.TrimSpace(why) == "" {
		return ex, false, errors.New("an exclusion needs a reason (why)")
	}
	err = db.write(ctx, "excluding a hit", func(tx *sql.Tx) error {
		var n int
		if err := tx.QueryRowContext(ctx, "SELECT COUNT(*) FROM hits WHERE id = ?", hitID).Scan(&n); err != nil {
			return err
		}
		if n == 0 {
			return fmt.Errorf("hit %d: %w", hitID, ErrNotFound)
		}
		cur, err := currentExclusion(ctx, tx, hitID)
		if err != nil || cur != nil {
			if cur != nil {
				ex = *cur
			}
			return err
		}
		ex = HandExclusion{HitID: hitID, Why: why, By: by, At: at}
		added = true
		return tx.QueryRowContext(ctx, `INSERT INTO exclusions (hit_id, why, excluded_by, excluded_at) VALUES (?, ?, ?, ?) RETURNING id`,
			hitID, why, by, toNS(at)).Scan(&ex.ID)
	})
	return ex, added, err
}

// Undo takes back the exclusion in force of hit hitID: the record stays,
// marked undone by by at at. A hit without an exclusion in force wraps
// ErrNotFound.
func (db *DB) Undo(ctx context.Context, hitID int64, by string, at time.Time) (HandExclusion, error) {
	var ex HandExclusion
	err := db.write(ctx, "taking back an exclusion", func(tx *sql.Tx) error {
		cur, err := currentExclusion(ctx, tx, hitID)
		if err != nil {
			return err
		}
		if cur == nil {
			return fmt.Errorf("hit %d is not excluded: %w", hitID, ErrNotFound)
		}
		ex = *cur
		ex.UndoneBy, ex.UndoneAt = by, at
		_, err = tx.ExecContext(ctx, "UPDATE exclusions SET undone_by = ?, undone_at = ? WHERE id = ?", by, toNS(at), ex.ID)
		return err
	})
	return ex, err
}

// Exclusions returns every exclusion of hit hitID, in force or undone,
// oldest first.
func (db *DB) Exclusions(ctx context.Context, hitID int64) ([]HandExclusion, error) {
	var out []HandExclusion
	err := db.read(ctx, "reading exclusions", func(tx *sql.Tx) error {
		rows, err := tx.QueryContext(ctx, `SELECT id, hit_id, why, excluded_by, excluded_at, undone_by, undone_at
FROM exclusions WHERE hit_id = ? ORDER BY excluded_at, id`, hitID)
		if err != nil {
			return err
		}
		defer rows.Close()
		for rows.Next() {
			ex, err := scanExclusion(rows)
			if err != nil {
				return err
			}
			out = append(out, ex)
		}
		return rows.Err()
	})
	return out, err
}

func scanExclusion(rows interface{ Scan(...any) error }) (HandExclusion, error) {
	var ex HandExclusion
	var at int64
	var undoneBy sql.NullString
	var undoneAt sql.NullInt64
	if err := rows.Scan(&ex.ID, &ex.HitID, &ex.Why, &ex.By, &at, &undoneBy, &undoneAt); err != nil {
		return ex, err
	}
	ex.At = fromNS(at)
	if undoneAt.Valid {
		ex.UndoneBy, ex.UndoneAt = undoneBy.String, fromNS(undoneAt.Int64)
	}
	return ex, nil
}

// currentExclusion returns the exclusion in force of a hit, nil when none.
func currentExclusion(ctx context.Context, tx *sql.Tx, hitID int64) (*HandExclusion, error) {
	row := tx.QueryRowContext(ctx, `SELECT id, hit_id, why, excluded_by, excluded_at, undone_by, undone_at
FROM exclusions WHERE hit_id = ? AND undone_at IS NULL`, hitID)
	ex, err := scanExclusion(row)
	if errors.Is(err, sql.ErrNoRows) {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	return &ex, nil
}

// attachExclusions sets Hit.Excluded of the hits excluded by hand. The
// exclusions in force are few (an analyst's decisions), so all are read.
func attachExclusions(ctx context.Context, tx *sql.Tx, hits []Hit) error {
	if len(hits) == 0 {
		return nil
	}
	rows, err := tx.QueryContext(ctx, `SELECT id, hit_id, why, excluded_by, excluded_at, undone_by, undone_at
FROM exclusions WHERE undone_at IS NULL`)
	if err != nil {
		return fmt.Errorf("exclusions: %w", err)
	}
	defer rows.Close()
	byHit := map[int64]*HandExclusion{}
	for rows.Next() {
		ex, err := scanExclusion(rows)
		if err != nil {
			return fmt.Errorf("exclusions: %w", err)
		}
		byHit[ex.HitID] = &ex
	}
	if err := rows.Err(); err != nil {
		return fmt.Errorf("exclusions: %w", err)
	}
	for i := range hits {
		hits[i].Excluded = byHit[hits[i].ID]
	}
	return nil
}
