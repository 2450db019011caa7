package main

import (
	"context"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"

	rpt "github.com/ringlog/ringlog/report"
)

func init() {
	register(command{name: "rayleigh", summary: "Rayleigh damping coefficients alpha, beta with intervals from the per-mode history", run: runRayleigh})
}

func runRayleigh(ctx context.Context, e *env, args []string) error {
	if isKnownRayleigh(args) {
		return runRayleighKnown(e, args)
	}
	fs := newFlags("rayleigh", "--db PATH --prototype P [--revision R] [--bay B] [--mode L]... [--modes L1,L2,...] [--since DATE] [--until DATE] [--with-flagged] [--stiffness-only] [--json] [--config FILE]", e.stderr)
	q := addQueryFlags(fs)
	fs.Lookup("revision").Usage = "only this revision; repeat it for several (default: every revision, one fit each)"
	fs.Lookup("mode").Usage = "the label of a mode to fit; repeat it for several (default: every labelled mode). --mode FREQ:ZETA[:SD] instead fits damping ratios you give, without a database (see 'ringlog rayleigh --mode 1:1% -h')"
	modes := fs.String("modes", "", "comma-separated labels of the modes to fit, the same as --mode given for each")
	stiff := fs.Bool("stiffness-only", false, "fit beta alone (alpha = 0): no damping of rigid-body motion")
	asJSON := fs.Bool("json", false, "print one JSON object per revision, one per line")
	rest, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return usagef("unexpected argument %q", rest[0])
	}
	labels := append(slices.Clone(q.modes), splitList(*modes)...)
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
	if err := checkLabels(id, labels); err != nil {
		return err
	}
	fitted := 0
	for _, rs := range rpt.Stats(id) {
		rep, err := rpt.RayleighFor(rs, labels, rpt.RayleighOptions{StiffnessOnly: *stiff})
		if err != nil {
			fmt.Fprintf(e.stderr, "ringlog rayleigh: prototype %s: %v\n", src.prototype, err)
			continue
		}
		fitted++
		if *asJSON {
			if err := writeReportJSON(e.stdout, rep); err != nil {
				return err
			}
			continue
		}
		printRayleigh(e.stdout, rep)
	}
	if fitted == 0 {
		return errReported
	}
	return nil
}

func printRayleigh(w io.Writer, r rpt.RayleighReport) {
	what := "Rayleigh fit, zeta(w) = alpha/(2w) + beta w/2"
	if r.Method == rpt.MethodStiffnessOnly {
		what = "stiffness-only fit, zeta(w) = beta w/2"
	}
	fmt.Fprintf(w, "prototype %s, revision %s: %s over %d mode(s) from %d hit(s) (%s)\n", orDash(r.Prototype), revLabel(r.Revision), what,
		len(r.Modes), r.NHits, r.Method)
	printRayleighBody(w, r)
}

// printRayleighBody prints a fit's coefficients, modes, warnings and
// cautions below its heading.
func printRayleighBody(w io.Writer, r rpt.RayleighReport) {
	g := func(x float64) string { return fnum("%.4g", x) }
	fmt.Fprintf(w, "  alpha = %-10s 1/s  95 %% interval %s (covariance), %s (Monte Carlo)\n", g(r.Alpha), fint(g, r.AlphaCI95), fint(g, r.MCAlphaCI95))
	fmt.Fprintf(w, "  beta  = %-10s s    95 %% interval %s (covariance), %s (Monte Carlo)\n", g(r.Beta), fint(g, r.BetaCI95), fint(g, r.MCBetaCI95))
	if r.Constraint != "" {
		fmt.Fprintf(w, "  note: %s\n", r.Constraint)
	}
	scaled := "not scaled"
	switch {
	case math.IsNaN(r.Scale):
		scaled = "no interval: as many coefficients as values"
	case r.Scale != 1:
		scaled = fmt.Sprintf("covariance scaled by chi2/dof = %.3g, Student t with %d dof", r.Scale, r.DOF)
	}
	fmt.Fprintf(w, "  chi2 %s with %d dof (%s)\n", g(r.Chi2), r.DOF, scaled)
	if r.Scale > 1 && r.MCSamples > 0 {
		fmt.Fprintln(w, "  the modes scatter about the curve more than their uncertainties allow: the covariance interval is the one to quote, the Monte Carlo one ignores the misfit")
	}
	if r.MinDamping == r.MinDamping {
		fmt.Fprintf(w, "  curve minimum %s %% at %s Hz\n", fpct(r.MinDamping), g(r.MinFrequencyHz))
	}
	fmt.Fprintf(w, "  %-18s %10s %4s %14s %10s %12s  %s\n", "mode", "f [Hz]", "n", "zeta [%]", "+- sd [%]", "fitted [%]", "inside scatter (2 sd)")
	for _, m := range r.Modes {
		in := "yes"
		switch {
		case m.Inside:
		case math.IsNaN(m.ScatterSD):
			in = "-" // no scatter to judge against
		default:
			in = "NO"
		}
		n := "-"
		if m.N > 0 {
			n = strconv.Itoa(m.N)
		}
		fmt.Fprintf(w, "  %-18s %10s %4s %14s %10s %12s  %s\n", m.Name, g(m.FrequencyHz), n, fpct(m.Damping), fpct(m.SD), fpct(m.Fitted), in)
	}
	if r.MCSamples == 0 && r.DOF > 0 {
		fmt.Fprintln(w, "  without an SD per mode there is no scatter to judge the curve against")
	} else if r.BandHz[0] == r.BandHz[0] {
		fmt.Fprintf(w, "  the curve stays inside the measured scatter from %s Hz to %s Hz\n", g(r.BandHz[0]), g(r.BandHz[1]))
	} else {
		fmt.Fprintln(w, "  the curve stays inside the measured scatter nowhere between the modes")
	}
	if so := r.StiffnessOnly; so != nil && r.Method != rpt.MethodStiffnessOnly {
		inside := 0
		for _, m := range so.Modes {
			if m.Inside {
				inside++
			}
		}
		within := fmt.Sprintf("%d of %d mode(s) inside their scatter", inside, len(so.Modes))
		if so.MCSamples == 0 && so.DOF > 0 {
			within = "no SD per mode to judge it against"
		}
		fmt.Fprintf(w, "  stiffness-only (alpha = 0): beta = %s s, 95 %% interval %s (covariance), %s (Monte Carlo); chi2/dof %s, %s\n",
			g(so.Beta), fint(g, so.BetaCI95), fint(g, so.MCBetaCI95), fnum("%.3g", so.Chi2/float64(max(so.DOF, 1))), within)
	}
	for _, x := range r.Warnings {
		fmt.Fprintf(w, "  warning: %s\n", x)
	}
	printLeftOut(w, "  ", r.Excluded, r.ExcludedByHand)
	fmt.Fprintln(w, "  cautions:")
	for _, c := range r.Cautions {
		fmt.Fprintf(w, "  - %s\n", c)
	}
	fmt.Fprintln(w)
}
