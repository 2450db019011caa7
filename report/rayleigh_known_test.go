package report

import (
	"math"
	"strings"
	"testing"
)

// TestRayleighOneHitWarning: a mode resting on one hit gets the warning
// that the interval holds no hit-to-hit scatter; modes with several hits
// do not.
func TestRayleighOneHitWarning(t *testing.T) {
	mode := func(label string, f, z float64, n int) ModeStat {
		ms := ModeStat{ModeLabel: ModeLabel{Label: label}, Name: label, HitSD: 0.1 * z}
		ms.Damping.N, ms.Damping.Mean, ms.Damping.SD = n, z, math.NaN()
		if n > 1 {
			ms.Damping.SD = 0.2 * z
		}
		ms.Frequency.N, ms.Frequency.Mean = n, f
		return ms
	}
	for _, c := range []struct {
		n    int
		warn bool
	}{{1, true}, {5, false}} {
		rs := RevisionStats{Prototype: "p", Revision: "A", Modes: []ModeStat{mode("m1", 14.2, 0.01, c.n), mode("m2", 93, 0.02, c.n)}}
		rep, err := RayleighFor(rs, nil, RayleighOptions{})
		if err != nil {
			t.Fatal(err)
		}
		got := strings.Contains(strings.Join(rep.Warnings, " "), "no hit-to-hit scatter")
		if got != c.warn {
			t.Errorf("%d hit(s) per mode: warnings %q, want the one-hit warning: %v", c.n, rep.Warnings, c.warn)
		}
	}
}

// TestRayleighUnknownSD: with no SD the covariance is scaled by chi2/dof
// whatever its size (least squares with an unknown variance), there is no
// Monte Carlo interval and no mode is judged inside a scatter; with dof 0
// there is no interval at all. Three modes on an exact Rayleigh curve give
// chi2 0 and a zero-width interval at the coefficients (the model itself
// is the check).
func TestRayleighUnknownSD(t *testing.T) {
	alpha, beta := 2.5, 3e-5
	var known []KnownMode
	for _, f := range []float64{40, 110, 260} {
		known = append(known, KnownMode{Label: "k", FrequencyHz: f, Damping: RayleighDamping(alpha, beta, twoPi*f)})
	}
	rep, err := RayleighKnown(known, RayleighOptions{})
	if err != nil {
		t.Fatal(err)
	}
	nearRel(t, "alpha", rep.Alpha, alpha, 1e-9)
	nearRel(t, "beta", rep.Beta, beta, 1e-9)
	if rep.DOF != 1 || rep.Scale > 1e-12 || rep.MCSamples != 0 || !math.IsNaN(rep.MCAlphaCI95[0]) {
		t.Errorf("dof %d scale %g mc %d %v: want 1, 0, no Monte Carlo", rep.DOF, rep.Scale, rep.MCSamples, rep.MCAlphaCI95)
	}
	nearRel(t, "alpha interval low end", rep.AlphaCI95[0], alpha, 1e-6)
	for _, m := range rep.Modes {
		if m.Inside || !math.IsNaN(m.ScatterSD) || !math.IsNaN(m.SD) {
			t.Errorf("mode %g Hz: inside %v scatter %g sd %g, want false, NaN, NaN", m.FrequencyHz, m.Inside, m.ScatterSD, m.SD)
		}
	}
	if len(rep.Warnings) != 1 {
		t.Errorf("warnings %q, want one", rep.Warnings)
	}
	// A value off the curve: the interval widens with the misfit, even
	// though chi2/dof (relative weights) is far below 1.
	known[1].Damping *= 1.1
	rep, err = RayleighKnown(known, RayleighOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if !(rep.Scale > 0 && rep.Scale < 1) || !(rep.AlphaCI95[1] > rep.Alpha) {
		t.Errorf("scale %g, alpha %g interval %v: want 0 < scale < 1 applied", rep.Scale, rep.Alpha, rep.AlphaCI95)
	}
	// Two values: exact, no interval, both inside.
	rep, err = RayleighKnown(known[:2], RayleighOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if rep.DOF != 0 || !math.IsNaN(rep.Scale) || !math.IsNaN(rep.AlphaCI95[0]) || !rep.Modes[0].Inside || !rep.Modes[1].Inside {
		t.Errorf("two values: dof %d scale %g interval %v inside %v %v", rep.DOF, rep.Scale, rep.AlphaCI95, rep.Modes[0].Inside, rep.Modes[1].Inside)
	}
	// Some with SD, some without: an error.
	known[0].SD = 0.001
	if _, err := RayleighKnown(known, RayleighOptions{}); err == nil {
		t.Error("SD for one mode only: no error")
	}
}
