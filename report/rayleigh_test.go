package report

import (
	"math"
	"strings"
	"testing"
)

const twoPi = 2 * math.Pi

// TestRayleighClosedFormPublished checks the two-mode closed form
// alpha = 2 w1 w2 (z1 w2 - z2 w1)/(w2^2 - w1^2),
// beta = 2 (z2 w2 - z1 w1)/(w2^2 - w1^2) (Chopra, Dynamics of Structures;
// Clough & Penzien, Dynamics of Structures) on modes at 1 Hz and 10 Hz,
// both 5 % damped. Values computed by hand from that published formula:
// alpha = 0.5712 1/s, beta = 1.4469e-3 s, curve minimum sqrt(alpha beta) =
// 2.875 % at sqrt(alpha/beta) = 2 pi * 3.162 Hz.
func TestRayleighClosedFormPublished(t *testing.T) {
	a, b := RayleighClosedForm(twoPi*1, 0.05, twoPi*10, 0.05)
	near(t, "alpha [1/s]", a, 0.5712, 0.00005)
	near(t, "beta [s]", b, 1.4469e-3, 0.00005e-3)
	near(t, "minimum damping ratio", math.Sqrt(a*b), 0.02875, 0.000005)
	near(t, "frequency of the minimum [Hz]", math.Sqrt(a/b)/twoPi, 3.162, 0.0005)
	// The curve gives back the two damping ratios.
	near(t, "zeta at 1 Hz", RayleighDamping(a, b, twoPi*1), 0.05, 1e-12)
	near(t, "zeta at 10 Hz", RayleighDamping(a, b, twoPi*10), 0.05, 1e-12)

	// FitRayleigh on two modes uses the closed form.
	fit, err := FitRayleigh([]RayleighMode{
		{Label: "m1", FrequencyHz: 1, Damping: 0.05, SD: 0.002, ScatterSD: 0.005, N: 6},
		{Label: "m2", FrequencyHz: 10, Damping: 0.05, SD: 0.002, ScatterSD: 0.005, N: 6},
	}, RayleighOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if fit.Method != MethodClosedForm || fit.DOF != 0 || fit.Scale != 1 {
		t.Errorf("method %s dof %d scale %g, want closed_form, 0, 1", fit.Method, fit.DOF, fit.Scale)
	}
	near(t, "fit alpha", fit.Alpha, 0.5712, 0.00005)
	near(t, "fit beta", fit.Beta, 1.4469e-3, 0.00005e-3)
	near(t, "fit minimum", fit.MinDamping, 0.02875, 0.000005)
	near(t, "fit minimum frequency", fit.MinFrequencyHz, 3.162, 0.0005)
}

// TestRayleighEqualRatio checks the equal-ratio special case of the closed
// form (Chopra; Clough & Penzien): the same z at both modes gives
// beta = 2 z/(w1 + w2), alpha = w1 w2 beta.
func TestRayleighEqualRatio(t *testing.T) {
	for _, c := range []struct{ f1, f2, z float64 }{{3, 17, 0.02}, {45, 180, 0.004}, {0.8, 2.5, 0.07}} {
		w1, w2 := twoPi*c.f1, twoPi*c.f2
		a, b := RayleighClosedForm(w1, c.z, w2, c.z)
		wantB := 2 * c.z / (w1 + w2)
		nearRel(t, "beta", b, wantB, 1e-12)
		nearRel(t, "alpha", a, w1*w2*wantB, 1e-12)
	}
}

// TestRayleighWLSExact: three modes lying exactly on a Rayleigh curve give
// its coefficients back, with zero chi-square and no covariance scaling.
// The check is against the model zeta = alpha/(2w) + beta w/2 itself.
func TestRayleighWLSExact(t *testing.T) {
	alpha, beta := 2.5, 3e-5
	var modes []RayleighMode
	for i, f := range []float64{40, 110, 260} {
		z := RayleighDamping(alpha, beta, twoPi*f)
		modes = append(modes, RayleighMode{Label: []string{"a", "b", "c"}[i], FrequencyHz: f, Damping: z, SD: 0.05 * z, ScatterSD: 0.2 * z, N: 8})
	}
	fit, err := FitRayleigh(modes, RayleighOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if fit.Method != MethodWeightedLS || fit.DOF != 1 || fit.Constraint != "" {
		t.Errorf("method %s dof %d constraint %q", fit.Method, fit.DOF, fit.Constraint)
	}
	nearRel(t, "alpha", fit.Alpha, alpha, 1e-9)
	nearRel(t, "beta", fit.Beta, beta, 1e-9)
	near(t, "chi2", fit.Chi2, 0, 1e-12)
	near(t, "scale", fit.Scale, 1, 0)
	for _, m := range fit.Modes {
		nearRel(t, "fitted "+m.Label, m.Fitted, m.Damping, 1e-9)
		if !m.Inside {
			t.Errorf("mode %s on the curve is not inside its scatter", m.Label)
		}
	}
	// The curve follows the measurements everywhere between the modes.
	nearRel(t, "band low", fit.BandHz[0], 40, 1e-12)
	nearRel(t, "band high", fit.BandHz[1], 260, 1e-12)
	// Covariance interval and Monte Carlo interval describe the same
	// linear propagation: they must agree to Monte Carlo accuracy (2000
	// draws: the 2.5 % point moves by about 5 % of the half-width).
	for _, c := range []struct {
		name   string
		ci, mc [2]float64
	}{{"alpha", fit.AlphaCI95, fit.MCAlphaCI95}, {"beta", fit.BetaCI95, fit.MCBetaCI95}} {
		half := (c.ci[1] - c.ci[0]) / 2
		near(t, c.name+" MC low", c.mc[0], c.ci[0], 0.15*half)
		near(t, c.name+" MC high", c.mc[1], c.ci[1], 0.15*half)
	}
}

// TestRayleighNonNegative: damping that rises faster than in proportion to
// frequency would need a negative alpha, damping that falls steeply a
// negative beta; the fit holds that coefficient at 0 instead, fits the
// other alone, and says so.
func TestRayleighNonNegative(t *testing.T) {
	// Rising faster than linear in w at the top: unconstrained alpha < 0.
	modes := []RayleighMode{
		{Label: "m1", FrequencyHz: 20, Damping: 0.004, SD: 0.0002, ScatterSD: 0.0006, N: 9},
		{Label: "m2", FrequencyHz: 60, Damping: 0.015, SD: 0.0005, ScatterSD: 0.0015, N: 9},
		{Label: "m3", FrequencyHz: 100, Damping: 0.027, SD: 0.001, ScatterSD: 0.003, N: 9},
	}
	fit, err := FitRayleigh(modes, RayleighOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if !(fit.Unconstrained[0] < 0) {
		t.Fatalf("test case broken: unconstrained alpha %g should be negative", fit.Unconstrained[0])
	}
	if fit.Alpha != 0 || !(fit.Beta > 0) {
		t.Errorf("alpha %g, beta %g: want alpha held at 0 and beta > 0", fit.Alpha, fit.Beta)
	}
	if fit.AlphaCI95 != [2]float64{0, 0} || fit.DOF != 2 {
		t.Errorf("alpha interval %v dof %d, want [0 0] and 3 modes - 1 free coefficient = 2", fit.AlphaCI95, fit.DOF)
	}
	if !strings.Contains(fit.Constraint, "alpha is held at 0") {
		t.Errorf("constraint note %q", fit.Constraint)
	}
	// beta alone is the weighted least-squares slope of zeta on w/2.
	num, den := 0.0, 0.0
	for _, m := range modes {
		x := twoPi * m.FrequencyHz / 2
		num += m.Damping * x / (m.SD * m.SD)
		den += x * x / (m.SD * m.SD)
	}
	nearRel(t, "beta alone", fit.Beta, num/den, 1e-12)
	if fit.MCAlphaCI95[0] < 0 || fit.MCBetaCI95[0] < 0 {
		t.Errorf("Monte Carlo intervals %v %v go below 0", fit.MCAlphaCI95, fit.MCBetaCI95)
	}

	// Two modes whose damping falls steeply: closed-form beta < 0.
	two := []RayleighMode{
		{Label: "m1", FrequencyHz: 5, Damping: 0.05, SD: 0.002, ScatterSD: 0.006, N: 9},
		{Label: "m2", FrequencyHz: 20, Damping: 0.005, SD: 0.0005, ScatterSD: 0.001, N: 9},
	}
	fit, err = FitRayleigh(two, RayleighOptions{})
	if err != nil {
		t.Fatal(err)
	}
	a, b := RayleighClosedForm(twoPi*5, 0.05, twoPi*20, 0.005)
	if !(b < 0) || fit.Unconstrained != [2]float64{a, b} {
		t.Fatalf("unconstrained %v, closed form (%g, %g)", fit.Unconstrained, a, b)
	}
	if fit.Beta != 0 || !(fit.Alpha > 0) || !strings.Contains(fit.Constraint, "beta is held at 0") {
		t.Errorf("alpha %g beta %g constraint %q: want beta held at 0", fit.Alpha, fit.Beta, fit.Constraint)
	}
}

// TestRayleighStiffnessOnly: alpha = 0 and beta the weighted least-squares
// fit of zeta = beta w/2; one mode is enough.
func TestRayleighStiffnessOnly(t *testing.T) {
	fit, err := FitRayleigh([]RayleighMode{{Label: "m1", FrequencyHz: 50, Damping: 0.01, SD: 0.001, ScatterSD: 0.003, N: 9}},
		RayleighOptions{StiffnessOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	nearRel(t, "beta", fit.Beta, 2*0.01/(twoPi*50), 1e-12)
	if fit.Alpha != 0 || fit.Method != MethodStiffnessOnly || !math.IsNaN(fit.MinDamping) {
		t.Errorf("alpha %g method %s minimum %g", fit.Alpha, fit.Method, fit.MinDamping)
	}
	// One parameter, one mode: beta's sd is that of zeta scaled by 2/w.
	nearRel(t, "beta sd", fit.BetaSD, 2*0.001/(twoPi*50), 1e-12)
	if _, err := FitRayleigh(nil, RayleighOptions{}); err == nil {
		t.Error("a fit of no modes did not fail")
	}
	if _, err := FitRayleigh([]RayleighMode{{Label: "m1", FrequencyHz: 50, Damping: 0.01, SD: 0.001}}, RayleighOptions{}); err == nil {
		t.Error("a two-coefficient fit of one mode did not fail")
	}
}

// TestRayleighScaledCovariance: when the modes scatter about the curve
// more than their uncertainties allow (chi2/dof > 1), the covariance is
// scaled by chi2/dof and the interval uses Student t with dof degrees of
// freedom: the half-width is t(0.975, dof) * sqrt(scale * C_bb).
func TestRayleighScaledCovariance(t *testing.T) {
	modes := []RayleighMode{
		{Label: "a", FrequencyHz: 30, Damping: 0.010, SD: 0.0002, ScatterSD: 0.0006, N: 9},
		{Label: "b", FrequencyHz: 80, Damping: 0.006, SD: 0.0002, ScatterSD: 0.0006, N: 9},
		{Label: "c", FrequencyHz: 150, Damping: 0.012, SD: 0.0002, ScatterSD: 0.0006, N: 9},
		{Label: "d", FrequencyHz: 300, Damping: 0.014, SD: 0.0002, ScatterSD: 0.0006, N: 9},
	}
	fit, err := FitRayleigh(modes, RayleighOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if fit.DOF != 2 || !(fit.Chi2/2 > 1) {
		t.Fatalf("dof %d chi2 %g: test case broken", fit.DOF, fit.Chi2)
	}
	nearRel(t, "scale", fit.Scale, fit.Chi2/2, 1e-12)
	cov, err := rayleighCov([]float64{twoPi * 30, twoPi * 80, twoPi * 150, twoPi * 300}, []float64{0.0002, 0.0002, 0.0002, 0.0002}, true, true)
	if err != nil {
		t.Fatal(err)
	}
	half := TQuantile(0.975, 2) * math.Sqrt(fit.Scale*cov[1][1])
	nearRel(t, "beta half-width", (fit.BetaCI95[1]-fit.BetaCI95[0])/2, half, 1e-9)
	// The middle modes sit off the curve: the band cannot span them all.
	if !math.IsNaN(fit.BandHz[0]) && fit.BandHz[0] <= 30 && fit.BandHz[1] >= 300 {
		t.Errorf("band %v spans every mode although mode b is off the curve", fit.BandHz)
	}
}
