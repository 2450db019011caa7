package main

import (
	"context"
	"fmt"
	"io"
	"strconv"
	"strings"

	rpt "github.com/ringlog/ringlog/report"
)

func init() {
	register(command{name: "stats", summary: "per-mode scatter of damping and frequency over the history of a prototype", run: runStats})
}

func runStats(ctx context.Context, e *env, args []string) error {
	fs := newFlags("stats", "--db PATH --prototype P [--revision R] [--bay B] [--mode L] [--since DATE] [--until DATE] [--with-flagged] [--json|--csv] [--config FILE]", e.stderr)
	q := addQueryFlags(fs)
	fs.Lookup("revision").Usage = "only this revision; repeat it for several (default: every revision, one block each)"
	asJSON := fs.Bool("json", false, "print one JSON object per revision, one per line")
	asCSV := fs.Bool("csv", false, "print one CSV row per revision and mode")
	decimalComma := fs.Bool("decimal-comma", false, "with --csv: decimal comma and ';' between cells, for spreadsheets in such locales")
	rest, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return usagef("unexpected argument %q", rest[0])
	}
	if *asJSON && *asCSV {
		return usagef("--json and --csv exclude each other")
	}
	if *decimalComma && !*asCSV {
		return usagef("--decimal-comma goes with --csv")
	}
	src, err := q.open(ctx)
	if err != nil {
		return err
	}
	defer src.Close()
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
	all := rpt.Stats(id)
	keepModes(all, q.modes)
	addLevelTables(all, id, hits)
	switch {
	case *asJSON:
		for _, rs := range all {
			if err := writeReportJSON(e.stdout, rs); err != nil {
				return err
			}
		}
	case *asCSV:
		return writeStatsCSV(e.stdout, all, rpt.CSVOptions{DecimalComma: *decimalComma})
	default:
		for _, rs := range all {
			printStats(e.stdout, rs)
		}
	}
	return nil
}

// printStats writes the table of one revision.
func printStats(w io.Writer, rs rpt.RevisionStats) {
	fmt.Fprintf(w, "prototype %s, revision %s: %d hit(s), %d used\n", orDash(rs.Prototype), revLabel(rs.Revision), rs.HitsSeen, rs.HitsUsed)
	if len(rs.Modes) > 0 {
		fmt.Fprintf(w, "  %-18s %4s  %-15s %8s %-19s %8s %6s %8s  %-29s %s\n", "mode", "n", "quantity", "mean", "95 % interval", "sd", "cv", "median",
			"geometric mean (95 %)", "bootstrap 95 %")
	}
	for _, m := range rs.Modes {
		d, f := m.Damping, m.Frequency
		fmt.Fprintf(w, "  %-18s %4d  %-15s %8s %-19s %8s %6s %8s  %-29s %s\n", m.Name, d.N, "zeta [%]", fpct(d.Mean),
			fint(fpct, d.MeanCI95), fpct(d.SD), fnum("%.0f%%", 100*d.CV), fpct(d.Median),
			fpct(d.GeoMean)+" ("+fint(fpct, d.GeoMeanCI)+")", fint(fpct, d.BootstrapCI95))
		hz := func(x float64) string { return fnum("%.5g", x) }
		fmt.Fprintf(w, "  %-18s %4s  %-15s %8s %-19s %8s %6s %8s  %-29s %s\n", "", "", "frequency [Hz]", hz(f.Mean),
			fint(hz, f.MeanCI95), fnum("%.3g", f.SD), fnum("%.1f%%", 100*f.CV), hz(f.Median), "", fint(hz, f.BootstrapCI95))
	}
	for _, m := range rs.Modes {
		for _, o := range m.Outliers {
			v, med := fnum("%.4g Hz", o.Value), fnum("%.4g Hz", o.Median)
			if o.Quantity == "damping_ratio" {
				v, med = fpct(o.Value)+" %", fpct(o.Median)+" %"
			}
			fmt.Fprintf(w, "  outlier  %s %s %s (median %s, %.1f scaled MADs): hit %d %s\n", m.Name, strings.ReplaceAll(o.Quantity, "_", " "), v, med, o.Score, o.HitID, o.File)
		}
	}
	if len(rs.Unmatched) > 0 {
		fmt.Fprintf(w, "  %d unmatched mode(s), kept but in no mode's statistics:\n", len(rs.Unmatched))
		for _, o := range rs.Unmatched {
			fmt.Fprintf(w, "    %10.4g Hz  zeta %7.3f %%  hit %d %s\n", o.FrequencyHz, 100*o.DampingRatio, o.HitID, o.File)
		}
	}
	printLeftOut(w, "  ", rs.Excluded, rs.ExcludedByHand)
	if len(rs.Modes) == 0 {
		fmt.Fprintln(w, "  no usable mode")
	}
	printLevelTables(w, rs.DampingVsLevel)
	fmt.Fprintln(w, "  (zeta = damping ratio in % of critical; intervals 95 %; outliers: more than 3 x 1.4826 x MAD from the median, listed, not removed)")
	fmt.Fprintln(w)
}

// statsCSVHeader is the header of 'stats --csv'.
var statsCSVHeader = []string{"prototype", "revision", "label", "name", "label_source", "n",
	"damping_ratio_mean", "damping_ratio_ci95_low", "damping_ratio_ci95_high", "damping_ratio_sd", "damping_ratio_cv", "damping_ratio_median",
	"damping_ratio_geometric_mean", "damping_ratio_geometric_ci95_low", "damping_ratio_geometric_ci95_high",
	"damping_ratio_bootstrap_ci95_low", "damping_ratio_bootstrap_ci95_high",
	"frequency_hz_mean", "frequency_hz_ci95_low", "frequency_hz_ci95_high", "frequency_hz_sd", "frequency_hz_cv", "frequency_hz_median",
	"outliers", "unmatched_in_revision"}

func writeStatsCSV(w io.Writer, all []rpt.RevisionStats, opt rpt.CSVOptions) error {
	cw := rpt.NewCSVWriter(w, opt)
	num := cw.Num
	cw.Write(statsCSVHeader)
	for _, rs := range all {
		for _, m := range rs.Modes {
			d, f := m.Damping, m.Frequency
			cw.Write([]string{rs.Prototype, rs.Revision, m.Label, m.Name, string(m.Source), strconv.Itoa(d.N),
				num(d.Mean), num(d.MeanCI95[0]), num(d.MeanCI95[1]), num(d.SD), num(d.CV), num(d.Median),
				num(d.GeoMean), num(d.GeoMeanCI[0]), num(d.GeoMeanCI[1]), num(d.BootstrapCI95[0]), num(d.BootstrapCI95[1]),
				num(f.Mean), num(f.MeanCI95[0]), num(f.MeanCI95[1]), num(f.SD), num(f.CV), num(f.Median),
				strconv.Itoa(len(m.Outliers)), strconv.Itoa(len(rs.Unmatched))})
		}
	}
	return cw.Flush()
}
