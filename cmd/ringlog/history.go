package main

import (
	"bufio"
	"context"
	"errors"
	"flag"
	"fmt"
	"io/fs"
	"os"
	"strings"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
)

func init() {
	register(command{name: "history", summary: "list the recorded hits with their verdicts and modes", run: runHistory})
}

// addVerdictFlag declares --verdict of history and reanalyze.
func addVerdictFlag(fs *flag.FlagSet) *string {
	return fs.String("verdict", "", "only these verdicts, comma separated (accepted,flagged,rejected)")
}

// verdictFilter adds the verdicts of --verdict to f.
func verdictFilter(f *db.Filter, verdicts string) error {
	if verdicts == "" {
		return nil
	}
	for _, v := range strings.Split(verdicts, ",") {
		switch vv := pipeline.Verdict(strings.TrimSpace(v)); vv {
		case pipeline.Accepted, pipeline.Flagged, pipeline.Rejected:
			f.Verdicts = append(f.Verdicts, vv)
		default:
			return usagef("--verdict %q: use accepted, flagged or rejected", v)
		}
	}
	return nil
}

// openExisting opens a database that must already exist, read-only:
// queries never create, migrate or write one.
func openExisting(ctx context.Context, path string) (*db.DB, error) {
	return db.OpenReadOnly(ctx, path)
}

// openExistingWritable opens a database that must already exist for a
// command that writes to it (reanalyze, exclude).
func openExistingWritable(ctx context.Context, path string) (*db.DB, error) {
	if db.IsPostgres(path) {
		return db.Open(ctx, path)
	}
	if _, err := os.Stat(path); errors.Is(err, fs.ErrNotExist) {
		return nil, fmt.Errorf("database %s does not exist (run 'ringlog ingest' or 'ringlog watch' first)", path)
	}
	return db.Open(ctx, path)
}

// hitJSON is one line of 'history --json'. The keys file, sha256,
// verdict, prototype, revision and modes are a contract.
type hitJSON struct {
	ID        int64             `json:"id"`
	File      string            `json:"file"`
	SHA256    string            `json:"sha256"`
	Verdict   pipeline.Verdict  `json:"verdict"`
	Prototype string            `json:"prototype"`
	Revision  string            `json:"revision"`
	Bay       string            `json:"bay"`
	Point     string            `json:"point"`
	Direction string            `json:"direction"`
	HitTime   time.Time         `json:"hit_time"`
	Ingested  time.Time         `json:"ingested_at"`
	Reasons   []pipeline.Reason `json:"reasons"`
	Modes     []pipeline.Mode   `json:"modes"`
	Channel   string            `json:"channel"`
	Analysis  string            `json:"analysis_version"`
	Meta      map[string]string `json:"meta"`
	// Superseded is null for a current hit; for a hit that a later
	// version of its file superseded (history --superseded), by what and
	// when.
	Superseded *supersededJSON `json:"superseded"`
	// Excluded is the exclusion by hand in force, null when none.
	Excluded *exclusionJSON `json:"excluded"`
}

// supersededJSON tells what superseded a hit: the SHA-256 of the file's
// newer content and when it was recorded.
type supersededJSON struct {
	BySHA256 string    `json:"by_sha256"`
	At       time.Time `json:"at"`
}

// exclusionJSON is a hand exclusion in 'history --json'.
type exclusionJSON struct {
	Why string    `json:"why"`
	By  string    `json:"by"`
	At  time.Time `json:"at"`
}

func runHistory(ctx context.Context, e *env, args []string) error {
	fl := newFlags("history", "--db PATH [--prototype P] [--revision R] [--bay B] [--mode LABEL] [--since DATE] [--until DATE] [--verdict V,...] [--superseded] [--json]", e.stderr)
	q := addQueryFlags(fl)
	fl.Lookup("mode").Usage = "only hits with a mode stored under this label; repeat it for several"
	verdict := addVerdictFlag(fl)
	asJSON := fl.Bool("json", false, "print one JSON object per hit, one per line")
	superseded := fl.Bool("superseded", false, "also list the hits a later version of their file superseded (not counted anywhere), marked as such")
	rest, err := parseInterleaved(fl, args)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return usagef("unexpected argument %q", rest[0])
	}
	f, err := q.storeFilter()
	if err != nil {
		return err
	}
	if err := verdictFilter(&f, *verdict); err != nil {
		return err
	}
	f.WithSuperseded = *superseded
	store, err := q.openRead(ctx)
	if err != nil {
		return err
	}
	defer store.Close()
	cfg, err := q.config()
	if err != nil {
		return err
	}
	// hits are listed a page at a time as they are read, through a
	// buffer: a long history is never held whole
	out := bufio.NewWriter(e.stdout)
	n := 0
	err = store.EachHit(ctx, f, func(h db.Hit) error {
		n++
		if cfg != nil {
			// The configuration's labels for modes stored without one.
			cfg.labelModes(h.Meta.Prototype, h.Result)
		}
		if *asJSON {
			return writeReportJSON(out, toHitJSON(h))
		}
		r := h.Result
		fmt.Fprintf(out, "%s  %-8s %s/%s %s  %s  (hit %d, %s)\n", h.Meta.HitTime.Local().Format("2006-01-02 15:04:05"), r.Verdict,
			orDash(h.Meta.Prototype), orDash(h.Meta.Revision), orDash(h.Meta.Bay), h.Path, h.ID, h.SHA256[:min(12, len(h.SHA256))])
		if h.SupersededBy != 0 {
			fmt.Fprintf(out, "    superseded %s: the file changed, its content is now the hit with SHA-256 %.12s; not counted\n",
				h.SupersededAt.Local().Format("2006-01-02 15:04:05"), h.SupersededBySHA256)
		}
		for i, m := range r.Modes {
			label := m.Label
			if label == "" {
				label = fmt.Sprintf("#%d", i+1)
			}
			drop := ""
			if m.Dropped {
				drop = "  (dropped)"
			}
			fmt.Fprintf(out, "    %-10s %10.3f Hz  zeta %7.3f %%  [%.3f, %.3f]%s\n", label, m.FrequencyHz, 100*m.DampingRatio,
				100*m.DampingRatioCI[0], 100*m.DampingRatioCI[1], drop)
		}
		printReasons(out, "    ", r.Reasons)
		if x := h.Excluded; x != nil {
			fmt.Fprintf(out, "    excluded by hand by %s at %s: %s\n", x.By, x.At.Local().Format("2006-01-02 15:04"), x.Why)
		}
		return nil
	})
	if ferr := out.Flush(); err == nil {
		err = ferr
	}
	if err != nil {
		return err
	}
	if n == 0 {
		fmt.Fprintln(e.stderr, "no hits match these filters")
		return nil
	}
	if !*asJSON {
		fmt.Fprintf(e.stdout, "%d hit(s)\n", n)
	}
	return nil
}

func toHitJSON(h db.Hit) hitJSON {
	r := h.Result
	var ex *exclusionJSON
	if x := h.Excluded; x != nil {
		ex = &exclusionJSON{Why: x.Why, By: x.By, At: x.At}
	}
	return hitJSON{ID: h.ID, Excluded: ex,
		File: h.Path, SHA256: h.SHA256, Verdict: r.Verdict, Prototype: h.Meta.Prototype, Revision: h.Meta.Revision,
		Bay: h.Meta.Bay, Point: h.Meta.Point, Direction: h.Meta.Direction, HitTime: h.Meta.HitTime, Ingested: h.IngestedAt,
		Reasons: nonNil(r.Reasons), Modes: nonNil(r.Modes), Channel: r.Channel, Analysis: r.AnalysisVersion, Meta: h.Meta.Extra,
		Superseded: supersededOf(h),
	}
}

func supersededOf(h db.Hit) *supersededJSON {
	if h.SupersededBy == 0 {
		return nil
	}
	return &supersededJSON{BySHA256: h.SupersededBySHA256, At: h.SupersededAt}
}

func nonNil[T any](s []T) []T {
	if s == nil {
		return []T{}
	}
	return s
}

func orDash(s string) string {
	if s == "" {
		return "-"
	}
	return s
}
