package main

// rayleigh --mode FREQ:ZETA[:SD]: Rayleigh coefficients from damping ratios
// the analyst already has, without a history.

import (
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"

	rpt "github.com/ringlog/ringlog/report"
)

// knownSourceFlags are the flags that choose a history; none goes with
// --mode FREQ:ZETA.
var knownSourceFlags = []string{"db", "config", "prototype"}

// knownArgs is what a first look at rayleigh's arguments finds: the --mode
// values and which history flags are given.
type knownArgs struct {
	modes   []string
	sources []string
}

// scanKnownArgs finds the --mode values and the history flags in args
// without parsing them (so that either form of rayleigh can then parse
// its own flags).
func scanKnownArgs(args []string) knownArgs {
	var k knownArgs
	for i := 0; i < len(args); i++ {
		a := args[i]
		if a == "--" {
			break
		}
		if !strings.HasPrefix(a, "-") {
			continue
		}
		name, val, hasVal := strings.Cut(strings.TrimPrefix(strings.TrimPrefix(a, "-"), "-"), "=")
		switch {
		case name == "mode":
			if !hasVal && i+1 < len(args) {
				i++
				val = args[i]
			}
			k.modes = append(k.modes, val)
		case slices.Contains(knownSourceFlags, name):
			k.sources = append(k.sources, "--"+name)
		}
	}
	return k
}

// isKnownRayleigh says whether rayleigh's arguments ask for a fit of known
// values: a --mode value with a colon, or --mode without any flag that
// chooses a history.
func isKnownRayleigh(args []string) bool {
	k := scanKnownArgs(args)
	if len(k.modes) == 0 {
		return false
	}
	for _, m := range k.modes {
		if strings.Contains(m, ":") {
			return true
		}
	}
	return len(k.sources) == 0
}

// runRayleighKnown is 'ringlog rayleigh --mode FREQ:ZETA[:SD] ...'.
func runRayleighKnown(e *env, args []string) error {
	if k := scanKnownArgs(args); len(k.sources) > 0 {
		return usagef("--mode FREQ:ZETA fits the values given and reads no history: leave out %s (or use --modes LABELS with a history)", strings.Join(k.sources, ", "))
	}
	fs := newFlags("rayleigh", "--mode FREQ:ZETA[:SD] --mode FREQ:ZETA[:SD] ... [--stiffness-only] [--json]", e.stderr)
	var values stringList
	fs.Var(&values, "mode", "a known mode, FREQ:ZETA[:SD]: frequency in Hz, damping ratio and its optional standard uncertainty, each as a fraction (0.01) or in % (1%); repeat for each mode")
	stiff := fs.Bool("stiffness-only", false, "fit beta alone (alpha = 0): no damping of rigid-body motion")
	asJSON := fs.Bool("json", false, "print the fit as one JSON object")
	rest, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return usagef("unexpected argument %q", rest[0])
	}
	known := make([]rpt.KnownMode, 0, len(values))
	withSD := 0
	for _, v := range values {
		k, err := parseKnownMode(v)
		if err != nil {
			return err
		}
		for _, o := range known {
			if o.FrequencyHz == k.FrequencyHz {
				return usagef("--mode %s and --mode %s have the same frequency: one value per mode", o.Label, k.Label)
			}
		}
		if k.SD > 0 {
			withSD++
		}
		known = append(known, k)
	}
	need := 2
	if *stiff {
		need = 1
	}
	if len(known) < need {
		return usagef("a Rayleigh fit needs at least %d --mode FREQ:ZETA value(s), got %d", need, len(known))
	}
	if withSD != 0 && withSD != len(known) {
		return usagef("%d of %d --mode values give an SD: give FREQ:ZETA:SD for every mode or for none", withSD, len(known))
	}
	rep, err := rpt.RayleighKnown(known, rpt.RayleighOptions{StiffnessOnly: *stiff})
	if err != nil {
		return fmt.Errorf("rayleigh: %w", err)
	}
	if *asJSON {
		return writeReportJSON(e.stdout, rep)
	}
	printRayleighKnown(e.stdout, rep)
	return nil
}

// parseKnownMode reads FREQ:ZETA[:SD]; every problem is a usage error that
// quotes the value.
func parseKnownMode(v string) (rpt.KnownMode, error) {
	bad := func(format string, args ...any) error {
		return usagef("--mode %q: %s", v, fmt.Sprintf(format, args...))
	}
	parts := strings.Split(v, ":")
	if len(parts) < 2 || len(parts) > 3 {
		return rpt.KnownMode{}, bad("want FREQ:ZETA or FREQ:ZETA:SD, for example 14.2:1%% or 14.2:0.01:0.002")
	}
	k := rpt.KnownMode{Label: v}
	f, err := strconv.ParseFloat(strings.TrimSpace(parts[0]), 64)
	if err != nil || math.IsNaN(f) || math.IsInf(f, 0) {
		return k, bad("frequency %q is not a number of Hz", parts[0])
	}
	if f <= 0 {
		return k, bad("frequency %s Hz must be positive", parts[0])
	}
	k.FrequencyHz = f
	if k.Damping, err = parseRatio(parts[1]); err != nil {
		return k, bad("damping ratio %v", err)
	}
	if len(parts) == 3 {
		if k.SD, err = parseRatio(parts[2]); err != nil {
			return k, bad("SD %v", err)
		}
	}
	return k, nil
}

// parseRatio reads a fraction of critical damping, "0.01" or "1%", which
// must be above 0 and below 1.
func parseRatio(s string) (float64, error) {
	t := strings.TrimSpace(s)
	scale := 1.0
	if p, ok := strings.CutSuffix(t, "%"); ok {
		t, scale = strings.TrimSpace(p), 0.01
	}
	x, err := strconv.ParseFloat(t, 64)
	if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
		return 0, fmt.Errorf("%q is not a number (write a fraction such as 0.01 or a percentage such as 1%%)", s)
	}
	x *= scale
	switch {
	case x <= 0:
		return 0, fmt.Errorf("%s must be above 0", s)
	case x >= 1:
		return 0, fmt.Errorf("%s is not below 1 (critical damping); for one percent write 0.01 or 1%%", s)
	}
	return x, nil
}

// printRayleighKnown prints the fit of known values as printRayleigh does
// a history's.
func printRayleighKnown(w io.Writer, r rpt.RayleighReport) {
	what := "Rayleigh fit, zeta(w) = alpha/(2w) + beta w/2"
	if r.Method == rpt.MethodStiffnessOnly {
		what = "stiffness-only fit, zeta(w) = beta w/2"
	}
	fmt.Fprintf(w, "damping ratios given with --mode: %s over %d mode(s) (%s)\n", what, len(r.Modes), r.Method)
	printRayleighBody(w, r)
}
