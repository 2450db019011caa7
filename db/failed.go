package db

import (
	"context"
	"database/sql"
	"time"
)

// FailedFile is a file that could not be read or analysed, with the reason.
type FailedFile struct {
	Path     string
	Error    string
	Attempts int
	Updated  time.Time
}

// FailedFiles lists the files in state failed, the most recent first, at
// most limit of them (all when limit <= 0).
func (db *DB) FailedFiles(ctx context.Context, limit int) ([]FailedFile, error) {
	q := "SELECT path, last_error, attempts, updated FROM files WHERE state = ? ORDER BY updated DESC, id DESC"
	args := []any{string(StateFailed)}
	if limit > 0 {
		q += " LIMIT ?"
		args = append(args, limit)
	}
	var out []FailedFile
	err := db.read(ctx, "failed files", func(tx *sql.Tx) error {
		rows, err := tx.QueryContext(ctx, q, args...)
		if err != nil {
			return err
		}
		out, err = scanFailed(rows)
		return err
	})
	return out, err
}

// FailedBetween lists the files given up (state failed) whose last attempt
// was in [since, until), oldest first: the failures of a day.
func (db *DB) FailedBetween(ctx context.Context, since, until time.Time) ([]FailedFile, error) {
	var out []FailedFile
	err := db.read(ctx, "failed files of a period", func(tx *sql.Tx) error {
		rows, err := tx.QueryContext(ctx, `
SELECT path, last_error, attempts, updated FROM files
WHERE state = ? AND updated >= ? AND updated < ? ORDER BY updated, id`, string(StateFailed), toNS(since), toNS(until))
		if err != nil {
			return err
		}
		out, err = scanFailed(rows)
		return err
	})
	return out, err
}

// scanFailed reads the rows of a failed-files query (path, last_error,
// attempts, updated) and closes them.
func scanFailed(rows *sql.Rows) ([]FailedFile, error) {
	defer rows.Close()
	var out []FailedFile
	for rows.Next() {
		var f FailedFile
		var t int64
		if err := rows.Scan(&f.Path, &f.Error, &f.Attempts, &t); err != nil {
			return nil, err
		}
		f.Updated = fromNS(t)
		out = append(out, f)
	}
	return out, rows.Err()
}
