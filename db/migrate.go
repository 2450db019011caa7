package db

import (
	"context"
	"database/sql"
	"embed"
	"fmt"
	"io/fs"
	"path"
	"sort"
	"strconv"
	"strings"
)

// migrationFS holds the schema migrations, applied in order of their
// number. A migration, once released, is never edited: a change to the
// schema is a new file with the next number.
//
//go:embed migrations/*.sql
var migrationFS embed.FS

type migration struct {
	version int
	name    string
	sql     string
}

// loadMigrations reads NNNN_name.sql files from the migrations folder of
// fsys; their numbers must run 1, 2, 3, ... without a gap.
func loadMigrations(fsys fs.FS) ([]migration, error) {
	entries, err := fs.ReadDir(fsys, "migrations")
	if err != nil {
		return nil, fmt.Errorf("migrations: %w", err)
	}
	var ms []migration
	for _, e := range entries {
		if e.IsDir() || !strings.HasSuffix(e.Name(), ".sql") {
			continue
		}
		num, _, ok := strings.Cut(e.Name(), "_")
		v, err := strconv.Atoi(num)
		if !ok || err != nil || v <= 0 {
			return nil, fmt.Errorf("migration %s: name must start with a positive number and '_'", e.Name())
		}
		b, err := fs.ReadFile(fsys, path.Join("migrations", e.Name()))
		if err != nil {
			return nil, fmt.Errorf("migration %s: %w", e.Name(), err)
		}
		ms = append(ms, migration{version: v, name: e.Name(), sql: string(b)})
	}
	sort.Slice(ms, func(i, j int) bool { return ms[i].version < ms[j].version })
	for i, m := range ms {
		if m.version != i+1 {
			return nil, fmt.Errorf("migration %s: expected number %d (numbers must run 1, 2, 3, ... without gaps or repeats)", m.name, i+1)
		}
	}
	return ms, nil
}

// SchemaVersion is the schema version this build of ringlog writes.
func SchemaVersion() int {
	ms, err := loadMigrations(migrationFS)
	if err != nil {
		return 0
	}
	return len(ms)
}

// migrate applies the migrations the database lacks, each in its own
// immediate transaction together with the PRAGMA user_version that records
// it, so a failed migration leaves the database as it was.
func migrate(ctx context.Context, w *sql.DB, fsys fs.FS) error {
	ms, err := loadMigrations(fsys)
	if err != nil {
		return err
	}
	for _, m := range ms {
		if err := applyMigration(ctx, w, m, len(ms)); err != nil {
			return err
		}
	}
	return nil
}

func applyMigration(ctx context.Context, w *sql.DB, m migration, latest int) error {
	tx, err := w.BeginTx(ctx, nil) // BEGIN IMMEDIATE: no other process migrates meanwhile
	if err != nil {
		return fmt.Errorf("migration %s: %w", m.name, describe(err))
	}
	defer tx.Rollback()
	var have int
	if err := tx.QueryRowContext(ctx, "PRAGMA user_version").Scan(&have); err != nil {
		return fmt.Errorf("reading schema version: %w", describe(err))
	}
	if have > latest {
		return fmt.Errorf("schema version %d is newer than this ringlog knows (%d): use a newer ringlog", have, latest)
	}
	if have >= m.version {
		return nil
	}
	if have != m.version-1 {
		return fmt.Errorf("migration %s: schema version is %d, expected %d", m.name, have, m.version-1)
	}
	if _, err := tx.ExecContext(ctx, m.sql); err != nil {
		return fmt.Errorf("migration %s: %w", m.name, err)
	}
	// PRAGMA takes no bound parameters; the version is our own integer.
	if _, err := tx.ExecContext(ctx, "PRAGMA user_version = "+strconv.Itoa(m.version)); err != nil {
		return fmt.Errorf("migration %s: setting schema version: %w", m.name, err)
	}
	if err := tx.Commit(); err != nil {
		return fmt.Errorf("migration %s: commit: %w", m.name, err)
	}
	return nil
}
