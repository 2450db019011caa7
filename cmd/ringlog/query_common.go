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
	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/check"
	rpt "github.com/ringlog/ringlog/report"
	"github.com/ringlog/ringlog/report/page"
)

// dbFlags are --db and --config, the database of a command that reads or
// changes the history.
type dbFlags struct {
	dbPath, cfgPath string
	cfg             *Config // loaded by config
}

// addDBFlags declares --db and --config on fs.
func addDBFlags(fs *flag.FlagSet) *dbFlags {
	d := &dbFlags{}
	fs.StringVar(&d.dbPath, "db", "", "history database (required unless --config names one)")
	fs.StringVar(&d.cfgPath, "config", "", "TOML configuration: the database and the expected modes of each prototype ([[prototype]] entries)")
	return d
}

// config reads the configuration named by --config once; nil without it.
func (d *dbFlags) config() (*Config, error) {
	if d.cfg != nil || d.cfgPath == "" {
		return d.cfg, nil
	}
	cfg, err := loadConfig(d.cfgPath)
	if err != nil {
		return nil, err
	}
	d.cfg = cfg
	return cfg, nil
}

// database returns the database path: --db, else the configuration's.
func (d *dbFlags) database() (string, error) {
	if d.dbPath != "" {
		return d.dbPath, nil
	}
	cfg, err := d.config()
	if err != nil {
		return "", err
	}
	if cfg == nil {
		return "", usagef("--db PATH or --config FILE is required")
	}
	if cfg.Database == "" {
		return "", fmt.Errorf("config %s: database is not set (or give --db PATH)", d.cfgPath)
	}
	return cfg.Database, nil
}

// openRead opens the database of --db or the configuration read-only; it
// must exist (see openExisting).
func (d *dbFlags) openRead(ctx context.Context) (*db.DB, error) {
	path, err := d.database()
	if err != nil {
		return nil, err
	}
	return openExisting(ctx, path)
}

// openWrite opens the database of --db or the configuration to change it;
// it must exist (see openExistingWritable).
func (d *dbFlags) openWrite(ctx context.Context) (*db.DB, error) {
	path, err := d.database()
	if err != nil {
		return nil, err
	}
	return openExistingWritable(ctx, path)
}

// queryFlags is the one filter of the history commands (history, stats,
// compare, trend, rayleigh, export, report daily, report compare and,
// without the counting flags, reanalyze), declared here once, with the
// database flags.
type queryFlags struct {
	*dbFlags
	prototype string
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
}

// queryOption leaves a flag out of a command's set.
type queryOption int

// withoutCounting leaves out --with-flagged and --synthetic for a command
// that selects hits but counts nothing (reanalyze).
const withoutCounting queryOption = 1

// addQueryFlags declares the shared filter and database flags on fs.
func addQueryFlags(fs *flag.FlagSet, opts ...queryOption) *queryFlags {
	q := &queryFlags{dbFlags: addDBFlags(fs)}
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
	iopt, err := q.identifyOptions(q.prototype)
	if err != nil {
		return nil, err
	}
	store, err := q.openRead(ctx)
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

// printLeftOut writes what a report left out and why, after indent: one
// line of counts by reason code, then each hit excluded by hand with its
// reason. Nothing when nothing was left out.
func printLeftOut(w io.Writer, indent string, excluded []rpt.Exclusion, byHand []rpt.ExcludedHit) {
	if len(excluded) == 0 {
		return
	}
	var parts []string
	for _, x := range excluded {
		parts = append(parts, fmt.Sprintf("%d %s (%s)", x.Count, leftOutWhat(x), x.Code))
	}
	fmt.Fprintf(w, "%sleft out: %s\n", indent, strings.Join(parts, ", "))
	for _, h := range byHand {
		fmt.Fprintf(w, "%s  excluded by hand: hit %d %s, by %s at %s: %s\n", indent, h.HitID, h.File, h.By,
			h.At.Local().Format("2006-01-02 15:04"), h.Why)
	}
}

// leftOutWhat says what an exclusion left out, e.g. "hit(s) rejected".
func leftOutWhat(x rpt.Exclusion) string {
	switch {
	case x.What == "hit" && x.Code == rpt.CodeExcludedByHand:
		return "hit(s) excluded by hand"
	case x.What == "hit":
		return "hit(s) rejected"
	case x.Code == rpt.CodeNoEstimate:
		return "mode(s) without a usable estimate"
	case severityOf(x.Code) == pipeline.SeverityFlag:
		return "mode(s) doubted"
	}
	return "mode(s) dropped"
}

// severityOf returns the severity of a reason code of the quality rules
// ("" for a code they do not give).
func severityOf(code string) pipeline.Severity {
	for _, r := range check.Describe() {
		if r.Code == code {
			return r.Severity
		}
	}
	return ""
}
