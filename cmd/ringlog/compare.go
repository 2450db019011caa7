package main

import (
	"context"
	"fmt"
	"io"
	"slices"

	rpt "github.com/ringlog/ringlog/report"
)

func init() {
	register(command{name: "compare", summary: "compare the damping and frequency of every mode between two revisions", run: runCompare})
}

// compareJSON is the one line of 'compare --json'.
type compareJSON struct {
	Prototype string               `json:"prototype"`
	RevisionA string               `json:"revision_a"`
	RevisionB string               `json:"revision_b"`
	Modes     []rpt.ModeComparison `json:"modes"`
	// Excluded counts what was left out, per revision, by reason;
	// ExcludedByHand lists the hits of either revision excluded by hand.
	Excluded       map[string][]rpt.Exclusion `json:"excluded"`
	ExcludedByHand []rpt.ExcludedHit          `json:"excluded_by_hand"`
}

func runCompare(ctx context.Context, e *env, args []string) error {
	fs := newFlags("compare", "--db PATH --prototype P --revision A --revision B [--bay B] [--mode L] [--since DATE] [--until DATE] [--with-flagged] [--json] [--config FILE]", e.stderr)
	q := addQueryFlags(fs)
	fs.Lookup("revision").Usage = "a revision to compare; give it twice, the first is the reference A"
	asJSON := fs.Bool("json", false, "print one JSON object")
	rest, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return usagef("unexpected argument %q", rest[0])
	}
	revs := q.revisions
	if len(revs) != 2 {
		return usagef("give --revision exactly twice (reference first), got %d", len(revs))
	}
	a, b := revs[0], revs[1]
	if a == b {
		return usagef("--revision %s given twice: compare two different revisions", a)
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
	count := map[string]int{}
	for _, h := range hits {
		count[h.Meta.Revision]++
	}
	if count[a] == 0 || count[b] == 0 {
		for _, r := range []string{a, b} {
			if count[r] == 0 {
				noHits(e.stderr, src.prototype, r)
			}
		}
		return nil
	}
	// One identification over both revisions: a label names the same
	// mode in each.
	id := rpt.Identify(hits, src.identify)
	if !knownLabels(e, id, q.modes) {
		return nil
	}
	cs := keepCompared(rpt.Compare(id, a, b), q.modes)
	out := compareJSON{Prototype: src.prototype, RevisionA: a, RevisionB: b, Modes: cs, Excluded: map[string][]rpt.Exclusion{},
		ExcludedByHand: []rpt.ExcludedHit{}}
	for _, rs := range rpt.Stats(id) {
		out.Excluded[rs.Revision] = rs.Excluded
		out.ExcludedByHand = append(out.ExcludedByHand, rs.ExcludedByHand...)
	}
	if *asJSON {
		if out.Modes == nil {
			out.Modes = []rpt.ModeComparison{}
		}
		return writeReportJSON(e.stdout, out)
	}
	printCompare(e.stdout, out)
	return nil
}

func printCompare(w io.Writer, cj compareJSON) {
	proto, a, b, cs := cj.Prototype, cj.RevisionA, cj.RevisionB, cj.Modes
	fmt.Fprintf(w, "prototype %s: revision %s against %s\n", proto, b, a)
	if len(cs) == 0 {
		fmt.Fprintln(w, "  no usable mode in either revision")
	}
	for _, c := range cs {
		fmt.Fprintf(w, "\n  %s\n    %s\n", c.Name, c.Sentence)
		if c.NA >= 2 && c.NB >= 2 {
			fmt.Fprintf(w, "    geometric-mean zeta %s %% (%s, %d hits) -> %s %% (%s, %d hits); ratio %s [%s], %s\n",
				fpct(c.GeoMeanA), a, c.NA, fpct(c.GeoMeanB), b, c.NB, fnum("%.3f", c.Ratio),
				fint(func(x float64) string { return fnum("%.3f", x) }, c.RatioCI95), pvalue(c.P))
			fmt.Fprintf(w, "    %s\n", c.FrequencySentence)
		}
	}
	for _, r := range []string{a, b} {
		var byHand []rpt.ExcludedHit
		for _, h := range cj.ExcludedByHand {
			if h.Revision == r {
				byHand = append(byHand, h)
			}
		}
		if len(cj.Excluded[r]) > 0 {
			fmt.Fprintf(w, "\n  revision %s:\n", revLabel(r))
			printLeftOut(w, "    ", cj.Excluded[r], byHand)
		}
	}
	fmt.Fprintln(w, "\n  (Welch's t test on log damping ratio: the ratio is of geometric means; intervals 95 %)")
}

func pvalue(p float64) string {
	switch {
	case p != p:
		return "p = -"
	case p < 0.001:
		return "p < 0.001"
	default:
		return fmt.Sprintf("p = %.3f", p)
	}
}

// keepCompared keeps the comparisons of the modes labelled one of labels
// (all of them when labels is empty).
func keepCompared(cs []rpt.ModeComparison, labels []string) []rpt.ModeComparison {
	if len(labels) == 0 {
		return cs
	}
	var keep []rpt.ModeComparison
	for _, c := range cs {
		if slices.Contains(labels, c.Label) {
			keep = append(keep, c)
		}
	}
	return keep
}
