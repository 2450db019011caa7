package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/ringlog/ringlog/report/page"
)

func init() {
	register(command{name: "report", summary: "write a page to look at: the daily summary or the revision report (one HTML file)", run: runReport})
}

// reportUsage lists the pages of 'ringlog report'.
func reportUsage(w io.Writer) {
	fmt.Fprint(w, `usage: ringlog report daily   --db PATH [--day YYYY-MM-DD] [--out FILE] [--config FILE]
       ringlog report compare --db PATH --prototype P --revision A --revision B [--out FILE] [--config FILE]

Each page is one self-contained HTML file (inline plots and styles, no
script, nothing fetched) that reads on screen and prints on A4 or Letter.
Run 'ringlog report daily -h' or 'ringlog report compare -h' for the options.
`)
}

func runReport(ctx context.Context, e *env, args []string) error {
	if len(args) == 0 {
		reportUsage(e.stderr)
		return usagef("name the page: daily or compare")
	}
	switch args[0] {
	case "-h", "--help", "help":
		reportUsage(e.stderr)
		return flag.ErrHelp
	case "daily":
		return runReportDaily(ctx, e, args[1:])
	case "compare":
		return runReportCompare(ctx, e, args[1:])
	}
	return usagef("unknown page %q: use 'report daily' or 'report compare'", args[0])
}

func runReportDaily(ctx context.Context, e *env, args []string) error {
	fs := newFlags("report daily", "--db PATH [--day YYYY-MM-DD] [--prototype P] [--revision R] [--bay B] [--mode L] [--since DATE] [--until DATE] [--with-flagged] [--out FILE] [--config FILE]", e.stderr)
	q := addQueryFlags(fs)
	fs.Lookup("config").Usage = "TOML configuration: the database, the expected modes of each prototype, the report folder and how files are read"
	fs.Lookup("mode").Usage = "only hits with a mode stored under this label; repeat it for several"
	fs.Lookup("since").Usage = "leave out hits before this date, also from the campaign plots (YYYY-MM-DD or RFC 3339)"
	dayFlag := fs.String("day", "", "the day to report on, YYYY-MM-DD in local time (default: today)")
	out := fs.String("out", "", "the page to write (default: ringlog-daily-YYYY-MM-DD.html in the configured report folder, or in the current folder)")
	rest, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return usagef("unexpected argument %q", rest[0])
	}
	day := time.Now()
	if *dayFlag != "" {
		if day, err = time.ParseInLocation("2006-01-02", *dayFlag, time.Local); err != nil {
			return usagef("--day %q: write the day as YYYY-MM-DD", *dayFlag)
		}
	}
	f, err := q.storeFilter()
	if err != nil {
		return err
	}
	cfg, err := q.config()
	if err != nil {
		return err
	}
	path, err := q.database()
	if err != nil {
		return err
	}
	target := *out
	if target == "" {
		target = dailyName(day)
		if cfg != nil && cfg.Report.Folder != "" {
			target = filepath.Join(cfg.Report.Folder, target)
		}
	}
	store, err := openExisting(ctx, path)
	if err != nil {
		return err
	}
	defer store.Close()
	opt := dailyOptions(cfg, day, path)
	opt.WithFlagged = q.withFlagged
	sum, err := writeDaily(ctx, filteredSource{store, f}, opt, target)
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "daily summary of %s: %s (%d accepted, %d flagged, %d rejected)\n  %s\n",
		sum.Day, reportPlural(sum.Hits, "hit"), sum.Accepted, sum.Flagged, sum.Rejected, target)
	if sum.Superseded > 0 || sum.Failed > 0 {
		fmt.Fprintf(e.stdout, "  %s superseded by a changed file, %s given up on that day; the page lists them\n",
			reportPlural(sum.Superseded, "earlier hit"), reportPlural(sum.Failed, "file"))
	}
	if sum.Unplotted > 0 {
		fmt.Fprintf(e.stdout, "  %s of flagged or rejected hits could not be re-read; the page says why\n", reportPlural(sum.Unplotted, "file"))
	}
	printLeftOutCounts(e.stdout, sum.LeftOutHits, sum.LeftOutModes)
	return nil
}

// printLeftOutCounts says how many hits and modes a page's statistics
// left out; the page says why.
func printLeftOutCounts(w io.Writer, hits, modes int) {
	if hits > 0 || modes > 0 {
		fmt.Fprintf(w, "  left out of the statistics: %s, %s; the page says why\n", reportPlural(hits, "hit"), reportPlural(modes, "mode"))
	}
}

func runReportCompare(ctx context.Context, e *env, args []string) error {
	fs := newFlags("report compare", "--db PATH --prototype P --revision A --revision B [--bay B] [--mode L] [--since DATE] [--until DATE] [--with-flagged] [--out FILE] [--config FILE]", e.stderr)
	q := addQueryFlags(fs)
	fs.Lookup("prototype").Usage = "the prototype (required)"
	fs.Lookup("revision").Usage = "a revision; give it twice, the first is the reference A"
	fs.Lookup("mode").Usage = "only hits with a mode stored under this label; repeat it for several"
	out := fs.String("out", "", "the page to write (default: ringlog-compare-P-A-B.html in the current folder)")
	rest, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return usagef("unexpected argument %q", rest[0])
	}
	proto, revs := &q.prototype, q.revisions
	if *proto == "" {
		return usagef("--prototype P is required")
	}
	if len(revs) != 2 {
		return usagef("give --revision exactly twice (reference first), got %d", len(revs))
	}
	if revs[0] == revs[1] {
		return usagef("--revision %s given twice: compare two different revisions", revs[0])
	}
	f, err := q.storeFilter()
	if err != nil {
		return err
	}
	cfg, err := q.config()
	if err != nil {
		return err
	}
	path, err := q.database()
	if err != nil {
		return err
	}
	target := *out
	if target == "" {
		target = "ringlog-compare-" + fileSafe(*proto) + "-" + fileSafe(revs[0]) + "-" + fileSafe(revs[1]) + ".html"
	}
	store, err := openExisting(ctx, path)
	if err != nil {
		return err
	}
	defer store.Close()
	opt := page.CompareOptions{Prototype: *proto, RevisionA: revs[0], RevisionB: revs[1],
		Generator: versionString(), Database: path, WithFlagged: q.withFlagged}
	if cfg != nil {
		opt.Expected = dailyOptions(cfg, time.Now(), path).Expected(*proto)
	}
	var buf strings.Builder
	sum, err := page.Compare(ctx, &buf, filteredSource{store, f}, opt)
	if errors.Is(err, page.ErrNoHits) {
		return fmt.Errorf("%w (no page written)", err)
	}
	if err != nil {
		return err
	}
	if err := writeFileAtomic(target, []byte(buf.String())); err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "revision report of %s, %s against %s: %s compared, a difference in damping shown for %d\n  %s\n",
		*proto, revs[1], revs[0], reportPlural(sum.Modes, "mode"), sum.Shown, target)
	printLeftOutCounts(e.stdout, sum.LeftOutHits, sum.LeftOutModes)
	return nil
}

// fileSafe keeps letters, digits, '.', '-' and '_' of s for a file name.
func fileSafe(s string) string {
	b := []byte(s)
	for i, c := range b {
		ok := c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '.' || c == '-' || c == '_'
		if !ok {
			b[i] = '_'
		}
	}
	if len(b) == 0 {
		return "_"
	}
	return string(b)
}

// writeFileAtomic writes data to path through a temporary file in the
// same folder, so the path never holds a partial page.
func writeFileAtomic(path string, data []byte) error {
	return writeAtomic(path, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
}

// writeAtomic lets fill write into a temporary file in path's folder and
// renames it to path once complete.
func writeAtomic(path string, fill func(w io.Writer) error) error {
	tmp, err := os.CreateTemp(filepath.Dir(path), ".ringlog-report-*.tmp")
	if err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	err = fill(tmp)
	if cerr := tmp.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Chmod(tmp.Name(), 0o644)
	}
	if err == nil {
		err = os.Rename(tmp.Name(), path)
	}
	if err != nil {
		os.Remove(tmp.Name())
		return fmt.Errorf("writing %s: %w", path, err)
	}
	return nil
}

// reportPlural writes n and the noun, with an s when n is not 1.
func reportPlural(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}
