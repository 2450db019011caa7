package main

import (
	"context"
	"fmt"
	"io"
	"slices"

	rpt "github.com/ringlog/ringlog/report"
)

func init() {
	register(command{name: "trend", summary: "drift of damping and frequency over time, with a warning when damping drifts", run: runTrend})
}

func runTrend(ctx context.Context, e *env, args []string) error {
	fs := newFlags("trend", "--db PATH --prototype P [--revision R] [--bay B] [--mode L] [--since DATE] [--until DATE] [--with-flagged] [--json] [--config FILE]", e.stderr)
	q := addQueryFlags(fs)
	fs.Lookup("revision").Usage = "only this revision; repeat it for several (default: every revision, one block each)"
	asJSON := fs.Bool("json", false, "print one JSON object per revision, one per line")
	rest, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return usagef("unexpected argument %q", rest[0])
	}
	src, err := q.open(ctx)
	if err != nil {
		return err
	}
	defer src.Close()
	limitQueryHeap()
	hits, err := src.hits(ctx)
	if err != nil {
		return err
	}
	if len(hits) == 0 {
		noHits(e.stderr, src.prototype, q.revisions...)
		return nil
	}
	id := rpt.Identify(hits, src.identify)
	if !knownLabels(e, id, q.modes) {
		return nil
	}
	for _, rt := range rpt.Trends(id) {
		if len(q.modes) > 0 {
			keep := []rpt.ModeTrend{}
			rt.Warnings = []string{}
			for _, m := range rt.Modes {
				if slices.Contains(q.modes, m.Label) {
					keep = append(keep, m)
					if m.Warning != "" {
						rt.Warnings = append(rt.Warnings, m.Warning)
					}
				}
			}
			rt.Modes = keep
		}
		if *asJSON {
			if err := writeReportJSON(e.stdout, rt); err != nil {
				return err
			}
			continue
		}
		printTrend(e.stdout, rt)
		for _, wn := range rt.Warnings {
			fmt.Fprintf(e.stderr, "ringlog trend: warning: revision %s: %s\n", revLabel(rt.Revision), wn)
		}
	}
	return nil
}

func printTrend(w io.Writer, rt rpt.RevisionTrend) {
	fmt.Fprintf(w, "prototype %s, revision %s\n", orDash(rt.Prototype), revLabel(rt.Revision))
	if len(rt.Modes) == 0 {
		fmt.Fprintln(w, "  no usable mode")
	}
	printLeftOut(w, "  ", rt.Excluded, rt.ExcludedByHand)
	for _, m := range rt.Modes {
		fmt.Fprintf(w, "  %s: %d hit(s) over %s days (%s to %s)\n", m.Name, m.N, fnum("%.3g", m.SpanDays),
			m.Start.Local().Format("2006-01-02 15:04"), m.End.Local().Format("2006-01-02 15:04"))
		if m.Note != "" {
			fmt.Fprintf(w, "    %s\n", m.Note)
			continue
		}
		d := m.Damping
		pp := func(x float64) string { return fnum("%+.4f", 100*x) }
		fmt.Fprintf(w, "    zeta:      least squares %s %%/day [%s], Sen %s %%/day (%s %% of the median per day), Mann-Kendall S %s, %s\n",
			pp(d.Linear.Slope), fint(pp, d.Linear.SlopeCI95), pp(d.SenSlope), fnum("%+.2g", 100*d.RelativePerDay),
			fnum("%.0f", d.MannKendall.S), pvalue(d.MannKendall.P))
		f := m.Frequency
		hz := func(x float64) string { return fnum("%+.3g", x) }
		fmt.Fprintf(w, "    frequency: least squares %s Hz/day [%s], Sen %s Hz/day (%s %% of the median per day), Mann-Kendall S %s, %s\n",
			hz(f.Linear.Slope), fint(hz, f.Linear.SlopeCI95), hz(f.SenSlope), fnum("%+.2g", 100*f.RelativePerDay),
			fnum("%.0f", f.MannKendall.S), pvalue(f.MannKendall.P))
		for _, q := range []struct {
			name string
			sen  rpt.SenInfo
		}{{"zeta", d.Sen}, {"frequency", f.Sen}} {
			if q.sen.Sample > 0 {
				fmt.Fprintf(w, "    Sen's slope of %s: median of %d random pairs of %d, at the %.2f %% point of all pair slopes (95 %% bound 50 +/- %.2f %%)\n",
					q.name, q.sen.Sample, q.sen.Pairs, 100*q.sen.Rank, 100*q.sen.RankBound95)
			}
		}
		if m.Warning != "" {
			fmt.Fprintf(w, "    WARNING: %s\n", m.Warning)
		}
	}
	fmt.Fprintln(w, "  (zeta slopes in percentage points of critical damping per day; intervals 95 %; drift warning when Mann-Kendall p < 0.05 and Sen's slope changes the damping by more than 10 % over the campaign)")
	fmt.Fprintln(w)
}
