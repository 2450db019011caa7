package main

// Helpers shared by the history reports: stats, compare, trend, rayleigh
// and export.

import (
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"github.com/ringlog/ringlog/db"
	rpt "github.com/ringlog/ringlog/report"
)

// reportFlags are the flags every history report has.
type reportFlags struct {
	dbPath, cfgPath, prototype *string
	synthetic                  *bool
}

func addReportFlags(fs *flag.FlagSet) *reportFlags {
	return &reportFlags{
		dbPath:    fs.String("db", "", "history database (required unless --config names one)"),
		cfgPath:   fs.String("config", "", "TOML configuration: the database and the expected modes of the prototype ([[prototype]] entries)"),
		prototype: fs.String("prototype", "", "the prototype to report on (required)"),
		synthetic: fs.Bool("synthetic", false, "report on the synthetic hits made by synth-history instead of the real ones"),
	}
}

// reportSource is an opened history and what the configuration says about
// the prototype.
type reportSource struct {
	store     *db.DB
	prototype string
	synthetic bool
	identify  rpt.IdentifyOptions
}

// open checks the flags, reads the configuration (when given) and opens
// the database, which must exist.
func (rf *reportFlags) open(ctx context.Context) (*reportSource, error) {
	if *rf.prototype == "" {
		return nil, usagef("--prototype P is required")
	}
	path := *rf.dbPath
	src := &reportSource{prototype: *rf.prototype, synthetic: *rf.synthetic}
	if *rf.cfgPath != "" {
		cfg, err := loadConfig(*rf.cfgPath)
		if err != nil {
			return nil, err
		}
		if path == "" {
			if cfg.Database == "" {
				return nil, fmt.Errorf("config %s: database is not set (or give --db PATH)", *rf.cfgPath)
			}
			path = cfg.Database
		}
		src.identify.Expected = expectedModes(cfg, *rf.prototype)
	}
	if path == "" {
		return nil, usagef("--db PATH or --config FILE is required")
	}
	store, err := openExisting(ctx, path)
	if err != nil {
		return nil, err
	}
	src.store = store
	return src, nil
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

// hits returns the hits of the prototype that f (whose Prototype is set
// here) selects; with revisions, only those revisions.
func (s *reportSource) hits(ctx context.Context, f db.Filter, revisions ...string) ([]db.Hit, error) {
	f.Prototype = s.prototype
	f.Synthetic = s.synthetic
	f.ForStats = true
	hits, err := s.store.Hits(ctx, f)
	if err != nil {
		return nil, err
	}
	if len(revisions) == 0 {
		return hits, nil
	}
	keep := hits[:0]
	for _, h := range hits {
		for _, r := range revisions {
			if h.Meta.Revision == r {
				keep = append(keep, h)
				break
			}
		}
	}
	return keep, nil
}

// noHits tells the user that the filters matched nothing (exit status 0,
// as for history).
func noHits(w io.Writer, prototype, revision string) {
	what := "prototype " + prototype
	if revision != "" {
		what += ", revision " + revision
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

// csvNum formats a number for CSV: 6 significant digits, empty when it
// cannot be computed.
func csvNum(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return ""
	}
	return strconv.FormatFloat(x, 'g', 6, 64)
}

func revLabel(r string) string {
	if r == "" {
		return "(none)"
	}
	return r
}
