package main

import (
	"context"
	"fmt"
	"os"
	"os/user"
	"strings"
	"time"

	"github.com/ringlog/ringlog/db"
)

func init() {
	register(command{name: "exclude", summary: "leave hits out of every statistic by hand (--why), or take that back (--undo)", run: runExclude})
}

func runExclude(ctx context.Context, e *env, args []string) error {
	fs := newFlags("exclude", "--db PATH --why TEXT HIT...   or   ringlog exclude --undo --db PATH HIT...", e.stderr)
	d := addDBFlags(fs)
	fs.Lookup("config").Usage = "TOML configuration naming the database"
	why := fs.String("why", "", "why the hits are left out (required unless --undo); kept with the user and the time")
	undo := fs.Bool("undo", false, "take back the exclusion of the hits (the record is kept, marked undone)")
	hits, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(hits) == 0 {
		return usagef("name at least one HIT: a hit id or a unique prefix of its SHA-256 (see 'ringlog history')")
	}
	switch {
	case *undo && *why != "":
		return usagef("--why and --undo exclude each other")
	case !*undo && strings.TrimSpace(*why) == "":
		return usagef("--why TEXT is required: say why the hits are left out")
	}
	store, err := d.openWrite(ctx)
	if err != nil {
		return err
	}
	defer store.Close()
	// Every HIT must name one hit before anything changes.
	var refs []db.HitRef
	for _, h := range hits {
		r, err := store.ResolveHit(ctx, h)
		if err != nil {
			return err
		}
		refs = append(refs, r)
	}
	by, now := osUser(), time.Now().UTC()
	for _, r := range refs {
		name := fmt.Sprintf("hit %d (%s, %s)", r.ID, r.SHA256[:min(12, len(r.SHA256))], r.Path)
		if *undo {
			ex, err := store.Undo(ctx, r.ID, by, now)
			if err != nil {
				return fmt.Errorf("%s: %w", name, err)
			}
			fmt.Fprintf(e.stdout, "%s counts again (it was excluded by %s at %s: %s)\n", name, ex.By, ex.At.Local().Format("2006-01-02 15:04"), ex.Why)
			continue
		}
		ex, added, err := store.Exclude(ctx, r.ID, *why, by, now)
		if err != nil {
			return fmt.Errorf("%s: %w", name, err)
		}
		if !added {
			fmt.Fprintf(e.stdout, "%s was already excluded by %s at %s: %s (kept; --undo first to give another reason)\n", name, ex.By,
				ex.At.Local().Format("2006-01-02 15:04"), ex.Why)
			continue
		}
		fmt.Fprintf(e.stdout, "%s excluded from every statistic: %s\n", name, ex.Why)
	}
	return nil
}

// osUser names the user running ringlog for the record of an exclusion:
// the operating system's account name, else $USER or $USERNAME.
func osUser() string {
	if u, err := user.Current(); err == nil && u.Username != "" {
		return u.Username
	}
	for _, k := range []string{"USER", "USERNAME"} {
		if v := os.Getenv(k); v != "" {
			return v
		}
	}
	return "unknown"
}
