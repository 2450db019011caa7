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
	"time"
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
// transaction together with the record of the schema version (PRAGMA
// user_version on SQLite, the schema_version table on PostgreSQL), so a
// failed migration leaves the database as it was. Every migration must be
// portable (checkPortable); on PostgreSQL it is translated (translate).
func migrate(ctx context.Context, w *sql.DB, fsys fs.FS, d dialect) error {
	ms, err := loadMigrations(fsys)
	if err != nil {
		return err
	}
	for _, m := range ms {
		if err := checkPortable(m.name, m.sql); err != nil {
			return err
		}
	}
	applied := false
	for _, m := range ms {
		done, err := applyMigration(ctx, w, m, len(ms), d)
		if err != nil {
			return err
		}
		applied = applied || done
	}
	if applied && d == postgresDialect {
		// A migration that adds a column leaves the planner without
		// statistics of it until autovacuum next analyses the table, which
		// on a large history may be long: it then guesses (0.5 % of the
		// hits for "superseded_by IS NULL") and picks nested loops where
		// the query reads every hit (measured at 100,000 hits: 1.4 s
		// instead of 0.8 s for the statistics' hit list). The statistics
		// only speed queries up, so a role that may not analyse (the
		// server then warns and skips) changes nothing.
		if _, err := w.ExecContext(ctx, "ANALYZE"); err != nil {
			return fmt.Errorf("analysing the tables after the migrations: %w", describe(err))
		}
	}
	return nil
}

// migrationLockKey is the PostgreSQL advisory lock that keeps two
// processes from migrating the same database at once (any 64-bit number
// of our own; "ringlog" in ASCII).
const migrationLockKey = 0x72696e676c6f67

// applyMigration applies m unless the database has it already, and says
// whether it did.
func applyMigration(ctx context.Context, w *sql.DB, m migration, latest int, d dialect) (applied bool, err error) {
	tx, err := w.BeginTx(ctx, nil) // SQLite: BEGIN IMMEDIATE, no other process migrates meanwhile
	if err != nil {
		return false, fmt.Errorf("migration %s: %w", m.name, describe(err))
	}
	defer tx.Rollback()
	if d == postgresDialect {
		// Held until the transaction ends; a second daemon waits here and
		// then finds the migration applied.
		if _, err := tx.ExecContext(ctx, "SELECT pg_advisory_xact_lock(?)", int64(migrationLockKey)); err != nil {
			return false, fmt.Errorf("migration %s: taking the migration lock: %w", m.name, err)
		}
		// Created only when missing: a role that may not create tables
		// (a bay's) can open a history whose schema is current.
		var exists bool
		if err := tx.QueryRowContext(ctx, "SELECT to_regclass('schema_version') IS NOT NULL").Scan(&exists); err != nil {
			return false, fmt.Errorf("migration %s: schema_version table: %w", m.name, err)
		}
		if !exists {
			if _, err := tx.ExecContext(ctx, "CREATE TABLE schema_version (version BIGINT NOT NULL PRIMARY KEY, applied_at BIGINT NOT NULL)"); err != nil {
				return false, fmt.Errorf("migration %s: schema_version table: %w", m.name, err)
			}
		}
	}
	have, err := d.schemaVersion(ctx, tx)
	if err != nil {
		return false, fmt.Errorf("reading schema version: %w", describe(err))
	}
	if have > latest {
		return false, fmt.Errorf("schema version %d is newer than this ringlog knows (%d): use a newer ringlog", have, latest)
	}
	if have >= m.version {
		return false, nil
	}
	if have != m.version-1 {
		return false, fmt.Errorf("migration %s: schema version is %d, expected %d", m.name, have, m.version-1)
	}
	if _, err := tx.ExecContext(ctx, translate(d, m.sql)); err != nil {
		return false, fmt.Errorf("migration %s: %w", m.name, err)
	}
	if d == postgresDialect {
		_, err = tx.ExecContext(ctx, "INSERT INTO schema_version (version, applied_at) VALUES (?, ?)", m.version, time.Now().UnixNano())
	} else {
		// PRAGMA takes no bound parameters; the version is our own integer.
		_, err = tx.ExecContext(ctx, "PRAGMA user_version = "+strconv.Itoa(m.version))
	}
	if err != nil {
		return false, fmt.Errorf("migration %s: setting schema version: %w", m.name, err)
	}
	if err := tx.Commit(); err != nil {
		return false, fmt.Errorf("migration %s: commit: %w", m.name, err)
	}
	return true, nil
}
