package main

import (
	"context"
	"fmt"
	"time"

	"github.com/ringlog/ringlog/db"
)

func init() {
	register(command{name: "synth-history", summary: "fill a database of its own with synthetic hits, for benchmarks (read with --synthetic)", run: runSynthHistory})
}

func runSynthHistory(ctx context.Context, e *env, args []string) error {
	fs := newFlags("synth-history", "--db PATH --hits N [--prototype P] [--revisions A,B] [--seed S] [--per-year N] [--end DATE]", e.stderr)
	dbPath := fs.String("db", "", "the database to fill (created when missing; it must hold no real hits)")
	n := fs.Int("hits", 0, "number of synthetic hits (required)")
	proto := fs.String("prototype", "synthetic-frame", "prototype of the hits")
	revs := fs.String("revisions", "A,B", "revisions, comma separated: consecutive blocks of the history")
	seed := fs.Uint64("seed", 1, "seed of the generator: the same flags make the same hits")
	perYear := fs.Float64("per-year", 10000, "hits per year: the hits reach back hits/per-year years from --end")
	end := fs.String("end", "", "time of the last hit, YYYY-MM-DD (noon) or RFC 3339 (default: now)")
	rest, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return usagef("unexpected argument %q", rest[0])
	}
	if *dbPath == "" {
		return usagef("--db PATH is required")
	}
	if *n <= 0 {
		return usagef("--hits N is required and must be positive")
	}
	if !(*perYear > 0) {
		return usagef("--per-year must be positive")
	}
	var endAt time.Time
	if *end != "" {
		var ok bool
		if endAt, ok = parseTime(*end); !ok {
			return usagef("--end %q: write a date as YYYY-MM-DD or an RFC 3339 time", *end)
		}
		if len(*end) == len("2006-01-02") {
			endAt = endAt.Add(12 * time.Hour)
		}
	}
	store, err := db.Open(ctx, *dbPath)
	if err != nil {
		return err
	}
	defer store.Close()
	// one writer at a time: the file lock on SQLite, a bay of its own on a
	// PostgreSQL server (a synthetic history never shares a database with
	// bays that record real hits)
	if db.IsPostgres(*dbPath) {
		lock, err := store.LockBay(ctx, "synth-history")
		if err != nil {
			return err
		}
		defer lock.Release()
	} else {
		release, err := store.LockWriter()
		if err != nil {
			return err
		}
		defer release()
	}
	start := time.Now()
	opt := db.SyntheticOptions{Hits: *n, Prototype: *proto, Revisions: splitList(*revs), Seed: *seed, PerYear: *perYear, End: endAt,
		Progress: func(done int) {
			if done%10000 == 0 || done == *n {
				fmt.Fprintf(e.stderr, "  %d of %d hits\n", done, *n)
			}
		}}
	stored, err := store.RecordSynthetic(ctx, opt)
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "%d synthetic hit(s) of prototype %s stored in %s (%d already there) in %.1f s\n",
		stored, *proto, store.Path(), *n-stored, time.Since(start).Seconds())
	fmt.Fprintf(e.stdout, "they are not measurements: the history commands read them only with --synthetic, e.g.\n  ringlog stats --db %s --prototype %s --synthetic\n",
		*dbPath, *proto)
	return nil
}
