package main

// Helpers shared by the history reports: stats, compare, trend, rayleigh
// and export.

import (
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"slices"
	"strings"

	"github.com/ringlog/ringlog/db"
	rpt "github.com/ringlog/ringlog/report"
	"github.com/ringlog/ringlog/report/page"
)

// queryFlags is the one filter of the history commands (history, stats,
// compare, trend, rayleigh, export, report daily, report compare and,
// without the counting flags, reanalyze), declared here once, with the
// database flags --db and --config.
type queryFlags struct {
	dbPath, cfgPath string
	prototype       string
	// revisions holds every --revision given: one or more revisions to
	// keep; compare and report compare want exactly two (reference first).
	revisions stringList
	bay       string
	// modes holds every --mode given: mode labels. The reports keep only
	// the modes so labelled; history, reanalyze and the report pages keep
	// the hits with a mode stored under one of these labels.
	modes        stringList
	since, until string
	// withFlagged counts the modes that a flag doubts (see report.Identify).
	withFlagged bool
	synthetic   bool
	cfg         *Config // loaded by config
}

// queryOption leaves a flag out of a command's set.
type queryOption int

// withoutCounting leaves out --with-flagged and --synthetic for a command
// that selects hits but counts nothing (reanalyze).
const withoutCounting queryOption = 1

// addQueryFlags declares the shared filter and database flags on fs.
func addQueryFlags(fs *flag.FlagSet, opts ...queryOption) *queryFlags {
	q := &queryFlags{}
	fs.StringVar(&q.dbPath, "db", "", "history database (required unless --config names one)")
	fs.StringVar(&q.cfgPath, "config", "", "TOML configuration: the database and the expected modes of each prototype ([[prototype]] entries)")
	fs.StringVar(&q.prototype, "prototype", "", "only this prototype")
	fs.Var(&q.revisions, "revision", "only this revision; repeat it for several")
	fs.StringVar(&q.bay, "bay", "", "only this test bay")
	fs.Var(&q.modes, "mode", "only the mode with this label; repeat it for several")
	fs.StringVar(&q.since, "since", "", "only hits at or after this date (YYYY-MM-DD or RFC 3339)")
	fs.StringVar(&q.until, "until", "", "only hits before this date (YYYY-MM-DD or RFC 3339)")
	if !slices.Contains(opts, withoutCounting) {
		fs.BoolVar(&q.withFlagged, "with-flagged", false, "also count the modes a flag doubts (by default a mode named by a doubting flag is left out)")
		fs.BoolVar(&q.synthetic, "synthetic", false, "the synthetic hits made by synth-history instead of the real ones")
	}
	return q
}

// filter returns the database filter of the flags. The mode labels are
// not in it: each command applies them (see queryFlags.modes).
func (q *queryFlags) filter() (db.Filter, error) {
	f := db.Filter{Prototype: q.prototype, Bay: q.bay, Synthetic: q.synthetic}
	if len(q.revisions) == 1 {
		f.Revision = q.revisions[0]
	} else {
		f.Revisions = slices.Clone(q.revisions)
	}
	var ok bool
	if q.since != "" {
		if f.Since, ok = parseTime(q.since); !ok {
			return f, usagef("--since %q: write a date as YYYY-MM-DD or an RFC 3339 time", q.since)
		}
	}
	if q.until != "" {
		if f.Until, ok = parseTime(q.until); !ok {
			return f, usagef("--until %q: write a date as YYYY-MM-DD or an RFC 3339 time", q.until)
		}
	}
	return f, nil
}

// config reads the configuration named by --config once; nil without it.
func (q *queryFlags) config() (*Config, error) {
	if q.cfg != nil || q.cfgPath == "" {
		return q.cfg, nil
	}
	cfg, err := loadConfig(q.cfgPath)
	if err != nil {
		return nil, err
	}
	q.cfg = cfg
	return cfg, nil
}

// database returns the database path: --db, else the configuration's.
func (q *queryFlags) database() (string, error) {
	if q.dbPath != "" {
		return q.dbPath, nil
	}
	cfg, err := q.config()
	if err != nil {
		return "", err
	}
	if cfg == nil {
		return "", usagef("--db PATH or --config FILE is required")
	}
	if cfg.Database == "" {
		return "", fmt.Errorf("config %s: database is not set (or give --db PATH)", q.cfgPath)
	}
	return cfg.Database, nil
}

// identifyOptions returns how report.Identify counts for prototype: the
// configuration's expected modes and --with-flagged.
func (q *queryFlags) identifyOptions(prototype string) (rpt.IdentifyOptions, error) {
	opt := rpt.IdentifyOptions{WithFlagged: q.withFlagged}
	cfg, err := q.config()
	if err != nil {
		return opt, err
	}
	if cfg != nil {
		opt.Expected = expectedModes(cfg, prototype)
	}
	return opt, nil
}

// storeFilter is the database filter of the flags with the mode labels as
// a filter on the stored labels (history, reanalyze, the report pages).
func (q *queryFlags) storeFilter() (db.Filter, error) {
	f, err := q.filter()
	f.ModeLabels = slices.Clone(q.modes)
	return f, err
}

// reportSource is an opened history and what the configuration says about
// the prototype.
type reportSource struct {
	store     *db.DB
	prototype string
	filter    db.Filter
	identify  rpt.IdentifyOptions
}

// open checks the flags, reads the configuration (when given) and opens
// the database, which must exist, read-only. The reports need a prototype.
func (q *queryFlags) open(ctx context.Context) (*reportSource, error) {
	if q.prototype == "" {
		return nil, usagef("--prototype P is required")
	}
	f, err := q.filter()
	if err != nil {
		return nil, err
	}
	path, err := q.database()
	if err != nil {
		return nil, err
	}
	iopt, err := q.identifyOptions(q.prototype)
	if err != nil {
		return nil, err
	}
	store, err := openExisting(ctx, path)
	if err != nil {
		return nil, err
	}
	return &reportSource{store: store, prototype: q.prototype, filter: f, identify: iopt}, nil
}

func (s *reportSource) Close() error { return s.store.Close() }

// expectedModes returns the expected modes the configuration lists for
// prototype.
func expectedModes(cfg *Config, prototype string) []rpt.Expected {
	var out []rpt.Expected
	for _, p := range cfg.Prototypes {
		if p.Name != prototype {
			continue
		}
		for _, m := range p.Modes {
			out = append(out, rpt.Expected{Label: m.Label, FrequencyHz: m.FrequencyHz, Tolerance: m.Tolerance})
		}
	}
	return out
}

// hits returns the hits the flags select, with what the statistics read.
func (s *reportSource) hits(ctx context.Context) ([]db.Hit, error) {
	f := s.filter
	f.ForStats = true
	return s.store.Hits(ctx, f)
}

// keepModes keeps the statistics of the modes labelled one of labels (all
// of them when labels is empty).
func keepModes(all []rpt.RevisionStats, labels []string) {
	if len(labels) == 0 {
		return
	}
	for i := range all {
		var keep []rpt.ModeStat
		for _, m := range all[i].Modes {
			if slices.Contains(labels, m.Label) {
				keep = append(keep, m)
			}
		}
		all[i].Modes = keep
	}
}

// noHits tells the user that the filters matched nothing (exit status 0,
// as for history).
func noHits(w io.Writer, prototype string, revisions ...string) {
	what := "prototype " + prototype
	if len(revisions) > 0 {
		what += ", revision " + strings.Join(revisions, ", ")
	}
	fmt.Fprintf(w, "no hits match these filters (%s)\n", what)
}

// labelNames lists the modes of id for messages.
func labelNames(id *rpt.Identified) string {
	var names []string
	for _, l := range id.Labels {
		names = append(names, l.Name())
	}
	if len(names) == 0 {
		return "none"
	}
	return strings.Join(names, ", ")
}

// checkLabels returns a usage error when a label is not one of id's modes.
func checkLabels(id *rpt.Identified, labels []string) error {
	for _, l := range labels {
		if _, ok := id.Label(l); !ok {
			return usagef("no mode labelled %q; the modes are: %s", l, labelNames(id))
		}
	}
	return nil
}

// knownLabels tells the user (exit status 0) when a label is not one of
// id's modes and returns false then.
func knownLabels(e *env, id *rpt.Identified, labels []string) bool {
	for _, l := range labels {
		if _, ok := id.Label(l); !ok {
			fmt.Fprintf(e.stderr, "no mode labelled %q in these hits; the modes are: %s\n", l, labelNames(id))
			return false
		}
	}
	return true
}

// splitList splits a comma-separated flag value, dropping empty items.
func splitList(s string) []string {
	var out []string
	for _, p := range strings.Split(s, ",") {
		if p = strings.TrimSpace(p); p != "" {
			out = append(out, p)
		}
	}
	return out
}

// writeReportJSON writes v as one JSON line with rpt.JSON (NaN as null).
func writeReportJSON(w io.Writer, v any) error {
	b, err := rpt.JSON(v)
	if err != nil {
		return err
	}
	_, err = w.Write(append(b, '\n'))
	return err
}

// Number formats for the tables; "-" for a value that cannot be computed.
func fnum(format string, x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "-"
	}
	return fmt.Sprintf(format, x)
}

// fpct formats a damping ratio as a percentage.
func fpct(x float64) string { return fnum("%.3f", 100*x) }

// fint formats an interval with format f applied to each end.
func fint(f func(float64) string, ci [2]float64) string {
	if math.IsNaN(ci[0]) || math.IsNaN(ci[1]) {
		return "-"
	}
	return f(ci[0]) + " .. " + f(ci[1])
}

func revLabel(r string) string {
	if r == "" {
		return "(none)"
	}
	return r
}

// filteredSource narrows every query a report page makes to the shared
// filter: the page's own bounds and the filter's both hold.
type filteredSource struct {
	page.Source
	f db.Filter
}

// narrow returns q within s.f, and false when nothing can match both.
func (s filteredSource) narrow(q db.Filter) (db.Filter, bool) {
	for _, p := range []struct {
		dst *string
		src string
	}{
		{&q.Prototype, s.f.Prototype}, {&q.Revision, s.f.Revision}, {&q.Bay, s.f.Bay},
	} {
		switch {
		case p.src == "":
		case *p.dst == "":
			*p.dst = p.src
		case *p.dst != p.src:
			return q, false
		}
	}
	if len(q.Revisions) == 0 {
		q.Revisions = s.f.Revisions
	}
	if len(q.ModeLabels) == 0 {
		q.ModeLabels = s.f.ModeLabels
	}
	if s.f.Since.After(q.Since) {
		q.Since = s.f.Since
	}
	if !s.f.Until.IsZero() && (q.Until.IsZero() || s.f.Until.Before(q.Until)) {
		q.Until = s.f.Until
	}
	q.Synthetic = s.f.Synthetic
	return q, true
}

func (s filteredSource) Hits(ctx context.Context, f db.Filter) ([]db.Hit, error) {
	f, ok := s.narrow(f)
	if !ok {
		return nil, nil
	}
	return s.Source.Hits(ctx, f)
}

func (s filteredSource) StoredFiles(ctx context.Context, f db.Filter) ([]db.StoredFile, error) {
	f, ok := s.narrow(f)
	if !ok {
		return nil, nil
	}
	return s.Source.StoredFiles(ctx, f)
}
