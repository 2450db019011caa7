package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"strings"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/read"
)

func init() {
	register(command{name: "status", summary: "show the queue, counts per state, the last hit and the last error of a history", run: runStatus})
}

func runStatus(ctx context.Context, e *env, args []string) error {
	fs := newFlags("status", "--db PATH | --config FILE [--failed] [--json]", e.stderr)
	dbPath := fs.String("db", "", "history database")
	cfgPath := fs.String("config", "", "TOML configuration naming the database")
	asJSON := fs.Bool("json", false, "print one JSON object")
	failedOnly := fs.Bool("failed", false, "list the files that could not be read or analysed, with their error")
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
	var folders []folderHealth
	if *cfgPath != "" {
		if cfg, err := loadConfig(*cfgPath); err == nil {
			folders = foldersHealth(cfg)
		}
	}
	spoolPath, fst := labSpoolStatus(ctx, *cfgPath) // a lab bay: its spool's backlog (lab.go)
	store, err := openExisting(ctx, path)
	if err != nil {
		if fst != nil { // the central history is away: the spool still answers
			if *asJSON {
				writeJSONLine(e.stdout, map[string]any{"database": path, "error": err.Error(), "forwarding": forwardJSON(spoolPath, *fst)})
			} else {
				printForwardStatus(e.stdout, spoolPath, *fst)
			}
		}
		return err
	}
	defer store.Close()
	if fst == nil && !store.Postgres() {
		if fs, err := store.ForwardStatus(ctx); err == nil && fs.Spool {
			spoolPath, fst = path, &fs
		}
	}
	st, err := store.Status(ctx)
	if err != nil {
		return err
	}
	if *failedOnly {
		failed, err := store.FailedFiles(ctx, 0)
		if err != nil {
			return err
		}
		if *asJSON {
			list := make([]map[string]any, 0, len(failed))
			for _, f := range failed {
				list = append(list, map[string]any{"file": f.Path, "error": read.Clip(f.Error, maxErrorText), "attempts": f.Attempts, "time": f.Updated})
			}
			writeJSONLine(e.stdout, map[string]any{"database": path, "failed": list})
			return nil
		}
		if len(failed) == 0 {
			fmt.Fprintf(e.stdout, "no failed files in %s\n", path)
		}
		for _, f := range failed {
			fmt.Fprintf(e.stdout, "%s: %s (%s, %d attempt(s))\n", f.Path, read.Clip(withoutPath(f.Path, f.Error), maxErrorText), f.Updated.Local().Format(time.DateTime), f.Attempts)
		}
		return nil
	}
	var held bool
	var pid int
	var since time.Time
	var herr error
	var bays []db.BayHolder
	if store.Postgres() {
		// A lab history: one daemon per bay, each holding its bay's lock.
		bays, herr = store.BayHolders(ctx)
		held = len(bays) > 0
	} else {
		held, pid, since, herr = db.HolderInfo(path)
	}
	if *asJSON {
		out := map[string]any{
			"database": path, "pending": st.Pending, "files": st.Files, "hits": st.Hits, "superseded": st.Superseded, "verdicts": st.Verdicts,
			"daemon_running": held, "schema": st.Schema, "folders": nil,
			// documented keys are always present, null when empty
			"daemon_pid": nil, "daemon_since": nil, "last_hit": nil, "last_error": nil,
		}
		if folders != nil {
			out["folders"] = folders
		}
		if store.Postgres() {
			list := []map[string]any{}
			for _, b := range bays {
				list = append(list, map[string]any{"bay": b.Bay, "pid": b.PID, "host": b.Host, "since": b.Since})
			}
			out["bay_daemons"] = list
		} else if held {
			out["daemon_pid"] = pid
			if !since.IsZero() {
				out["daemon_since"] = since
			}
		}
		if fst != nil {
			out["forwarding"] = forwardJSON(spoolPath, *fst)
		}
		if st.LastHit != nil {
			out["last_hit"] = map[string]any{"file": st.LastHit.Path, "hit_time": st.LastHit.HitTime, "ingested_at": st.LastHit.IngestedAt, "verdict": st.LastHit.Verdict}
		}
		if st.LastError != nil {
			out["last_error"] = map[string]any{"file": st.LastError.Path, "error": read.Clip(st.LastError.Message, maxErrorText), "time": st.LastError.Time, "attempts": st.LastError.Attempts, "final": st.LastError.Final}
		}
		writeJSONLine(e.stdout, out)
		return nil
	}
	fmt.Fprintf(e.stdout, "database  %s\n", store.Path())
	switch {
	case store.Postgres() && herr == nil:
		if len(bays) == 0 {
			fmt.Fprintf(e.stdout, "daemons   none recording\n")
		}
		for _, b := range bays {
			fmt.Fprintf(e.stdout, "daemon    bay %s: pid %d on %s, since %s\n", b.Bay, b.PID, b.Host, b.Since.Local().Format(time.DateTime))
		}
	case herr != nil:
		fmt.Fprintf(e.stdout, "daemon    unknown (%v)\n", herr)
	case held:
		s := fmt.Sprintf("running (pid %d", pid)
		if !since.IsZero() {
			s += ", since " + since.Local().Format(time.DateTime)
		}
		fmt.Fprintf(e.stdout, "daemon    %s)\n", s)
	default:
		fmt.Fprintf(e.stdout, "daemon    not running\n")
	}
	for _, f := range folders {
		if f.OK {
			fmt.Fprintf(e.stdout, "folder    %s  ok\n", f.Path)
		} else {
			fmt.Fprintf(e.stdout, "folder    %s  cannot be read: %s\n", f.Path, f.Problem)
		}
	}
	printStatus(e.stdout, st)
	if fst != nil {
		printForwardStatus(e.stdout, spoolPath, *fst)
	}
	return nil
}

// folderHealth is one watched folder as status sees it.
type folderHealth struct {
	Path    string `json:"path"`
	OK      bool   `json:"ok"`
	Problem string `json:"problem"`
}

// foldersHealth looks at each configured folder: can it be read now?
func foldersHealth(cfg *Config) []folderHealth {
	out := make([]folderHealth, 0, len(cfg.Folders))
	for _, f := range cfg.Folders {
		h := folderHealth{Path: f.Path, OK: true}
		if _, err := os.ReadDir(f.Path); err != nil {
			h.OK, h.Problem = false, err.Error()
		}
		out = append(out, h)
	}
	return out
}

// printStatus writes the counts of a Status.
func printStatus(w io.Writer, st db.Status) {
	fmt.Fprintf(w, "queue     %d file(s) waiting\n", st.Pending)
	fmt.Fprintf(w, "files     %d analysed, %d duplicate, %d failed, %d pending\n",
		st.Files[db.StateAnalysed], st.Files[db.StateDuplicate], st.Files[db.StateFailed], st.Files[db.StatePending])
	fmt.Fprintf(w, "hits      %d: %d accepted, %d flagged, %d rejected\n", st.Hits,
		st.Verdicts[pipeline.Accepted], st.Verdicts[pipeline.Flagged], st.Verdicts[pipeline.Rejected])
	if st.Superseded > 0 {
		fmt.Fprintf(w, "          %d earlier hit(s) superseded by a changed file, not counted (history --superseded)\n", st.Superseded)
	}
	if lh := st.LastHit; lh != nil {
		fmt.Fprintf(w, "last hit  %s  %s (recorded %s)\n", lh.Path, lh.Verdict, lh.IngestedAt.Local().Format(time.DateTime))
	}
	if le := st.LastError; le != nil {
		fmt.Fprintf(w, "last error %s: %s (%s, %d attempt(s))\n", le.Path, read.Clip(withoutPath(le.Path, le.Message), maxErrorText), le.Time.Local().Format(time.DateTime), le.Attempts)
	}
}

// dbFromFlags returns the database path given by --db or by --config.
func dbFromFlags(dbPath, cfgPath string) (string, error) {
	if dbPath != "" {
		return dbPath, nil
	}
	if cfgPath != "" {
		cfg, err := loadConfig(cfgPath)
		if err != nil {
			return "", err
		}
		if cfg.Database == "" {
			return "", fmt.Errorf("config %s: database is not set", cfgPath)
		}
		return cfg.Database, nil
	}
	return "", usagef("--db PATH or --config FILE is required")
}

// withoutPath drops the "PATH: " that a reader's error starts with when
// the line already names the file (the stored text keeps it).
func withoutPath(path, msg string) string {
	return strings.TrimPrefix(msg, path+": ")
}
