package main

import (
	"context"
	"fmt"

	"github.com/ringlog/ringlog/db"
)

func init() {
	register(command{name: "migrate", summary: "create or upgrade the schema of a history (a lab server: as the owner role)", run: runMigrate})
}

// runMigrate applies the migrations a history lacks and prints its schema
// version. On a lab server the bay and analyst roles may not change the
// schema: the owner runs this once after installing a new ringlog.
func runMigrate(ctx context.Context, e *env, args []string) error {
	fs := newFlags("migrate", "--db PATH|URL | --config FILE", e.stderr)
	dbPath := fs.String("db", "", "history database: an SQLite file or a postgres:// URL")
	cfgPath := fs.String("config", "", "TOML configuration naming the database")
	rest, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return usagef("unexpected argument %q", rest[0])
	}
	path, err := dbFromFlags(*dbPath, *cfgPath)
	if err != nil {
		return err
	}
	store, err := db.Open(ctx, path)
	if err != nil {
		return err
	}
	defer store.Close()
	st, err := store.Status(ctx)
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "%s: schema version %d\n", store.Path(), st.Schema)
	return nil
}
