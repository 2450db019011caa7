package main

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"sync/atomic"
	"time"

	"github.com/rs/zerolog"
	"golang.org/x/term"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
)

func init() {
	register(command{name: "ingest", summary: "analyse files once and record them in the history (same rules as the daemon)", run: runIngest})
}

func runIngest(ctx context.Context, e *env, args []string) error {
	fs := newFlags("ingest", "--db PATH [--prototype P] [--revision R] [--bay B] [--config FILE] FILE...", e.stderr)
	dbPath := fs.String("db", "", "history database (required unless --config names one)")
	cfgPath := fs.String("config", "", "TOML configuration for analysis settings (optional)")
	proto := fs.String("prototype", "", "prototype name recorded with every hit")
	rev := fs.String("revision", "", "prototype revision recorded with every hit")
	bay := fs.String("bay", "", "test bay recorded with every hit")
	quiet := fs.Bool("quiet", false, "no per-file lines, only the summary")
	files, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(files) == 0 {
		return usagef("no FILE given")
	}
	cfg := defaultConfig()
	if *cfgPath != "" {
		if cfg, err = loadConfig(*cfgPath); err != nil {
			return err
		}
	}
	if *dbPath != "" {
		cfg.Database = *dbPath
	}
	if cfg.Database == "" {
		return usagef("--db PATH is required")
	}
	store, err := db.Open(ctx, cfg.Database)
	if err != nil {
		return err
	}
	defer store.Close()

	var n, failed, dups, skipped, superseded atomic.Int64
	verdicts := map[pipeline.Verdict]int{}
	tty := false
	if f, ok := e.stderr.(*os.File); ok && term.IsTerminal(int(f.Fd())) {
		tty = true
	}
	eng := newEngine(cfg, store, zerolog.Nop())
	start := time.Now()
	eng.recorded = func(o outcome, rec db.Outcome, err error) {
		n.Add(1)
		switch {
		case err != nil || o.err != nil:
			failed.Add(1)
			msg := o.err
			if msg == nil {
				msg = err
			}
			fmt.Fprintf(e.stderr, "%s%s: %v\n", clearLine(tty), o.path, msg)
		case rec.Duplicate:
			dups.Add(1)
			if !*quiet {
				fmt.Fprintf(e.stdout, "%s%s: duplicate of hit %d\n", clearLine(tty), o.path, rec.HitID)
			}
		default:
			verdicts[o.res.Verdict]++
			if !*quiet {
				fmt.Fprintf(e.stdout, "%s%s: %s, %d mode(s)\n", clearLine(tty), o.path, o.res.Verdict, len(o.res.Modes))
			}
		}
		if err == nil && o.err == nil {
			superseded.Add(int64(len(rec.Superseded)))
			if !*quiet {
				for _, p := range rec.Superseded {
					fmt.Fprintf(e.stdout, "%s: the file changed since it was recorded: supersedes hit %d (%s, SHA-256 %.12s), no longer counted\n",
						o.path, p.HitID, p.Verdict, p.SHA256)
				}
			}
		}
		if tty && len(files) > 20 {
			fmt.Fprintf(e.stderr, "\r%d/%d files, %.0f s", n.Load()+skipped.Load(), len(files), time.Since(start).Seconds())
		}
	}
	meta := map[string]string{"prototype": *proto, "revision": *rev, "bay": *bay}
	jobs := make(chan job, eng.workers)
	go func() {
		defer close(jobs)
		for _, f := range files {
			if ctx.Err() != nil {
				return
			}
			abs, err := filepath.Abs(f)
			if err != nil {
				abs = f
			}
			if st, err := os.Stat(abs); err == nil {
				if known, _ := store.Known(ctx, abs, st.Size(), st.ModTime()); known {
					skipped.Add(1)
					if !*quiet {
						fmt.Fprintf(e.stdout, "%s: already recorded\n", f)
					}
					continue
				}
			}
			jobs <- job{path: abs, meta: meta}
		}
	}()
	if err := eng.run(ctx, jobs); err != nil {
		return err
	}
	if tty && len(files) > 20 {
		fmt.Fprint(e.stderr, clearLine(true))
	}
	fmt.Fprintf(e.stdout, "%d file(s): %d accepted, %d flagged, %d rejected, %d duplicate(s), %d already recorded, %d unreadable; database %s\n",
		len(files), verdicts[pipeline.Accepted], verdicts[pipeline.Flagged], verdicts[pipeline.Rejected], dups.Load(), skipped.Load(), failed.Load(), cfg.Database)
	if k := superseded.Load(); k > 0 {
		fmt.Fprintf(e.stdout, "%d earlier hit(s) superseded by the changed file(s)\n", k)
	}
	if failed.Load() > 0 {
		return errReported
	}
	return ctx.Err()
}

func clearLine(tty bool) string {
	if tty {
		return "\r\033[K"
	}
	return ""
}

// defaultConfig is the configuration used when no file is given.
func defaultConfig() *Config {
	c := &Config{path: "(defaults)"}
	c.Settle.Duration = 2 * time.Second
	c.ScanInterval.Duration = 30 * time.Second
	c.Thresholds = defaultThresholds()
	_ = c.validate()
	return c
}
