package main

import (
	"math"
	"strings"
	"testing"
)

// chopraTwoMode is the two-mode closed form of Rayleigh damping (Chopra,
// Dynamics of Structures, the Rayleigh damping section):
// alpha = 2 w1 w2 (z1 w2 - z2 w1)/(w2^2 - w1^2),
// beta = 2 (z2 w2 - z1 w1)/(w2^2 - w1^2), w = 2 pi f. Written out here
// apart from report.RayleighClosedForm so that the test does not check the
// code against itself.
func chopraTwoMode(f1, z1, f2, z2 float64) (alpha, beta float64) {
	w1, w2 := 2*math.Pi*f1, 2*math.Pi*f2
	d := w2*w2 - w1*w1
	return 2 * w1 * w2 * (z1*w2 - z2*w1) / d, 2 * (z2*w2 - z1*w1) / d
}

// TestRayleighKnownClosedForm: 1 % at 14.2 Hz and 2 % at 93 Hz, with no
// database, give Chopra's closed form (alpha = 1.269 1/s, beta =
// 6.474e-5 s), no interval (two values, two coefficients) and the warning
// that the interval holds no hit-to-hit scatter; the JSON has the keys of
// rayleigh --json.
func TestRayleighKnownClosedForm(t *testing.T) {
	alpha, beta := chopraTwoMode(14.2, 0.01, 93, 0.02)
	for _, args := range [][]string{
		{"rayleigh", "--mode", "14.2:1%", "--mode", "93:2%", "--json"},
		{"rayleigh", "--json", "--mode=93:0.02", "--mode", "14.2:0.01"},
	} {
		out, errOut, code := cli(t, args...)
		if code != 0 {
			t.Fatalf("%v: exit %d: %s", args, code, errOut)
		}
		lines := jsonLines(t, out)
		if len(lines) != 1 {
			t.Fatalf("%v: %d JSON lines, want 1:\n%s", args, len(lines), out)
		}
		r := lines[0]
		for _, k := range []string{"prototype", "revision", "n_hits", "method", "alpha", "beta", "alpha_ci95", "beta_ci95", "alpha_sd", "beta_sd",
			"cov_alpha_beta", "mc_alpha_ci95", "mc_beta_ci95", "mc_samples", "unconstrained", "constraint", "chi2", "dof", "covariance_scale",
			"modes", "band_hz", "minimum_damping_ratio", "minimum_frequency_hz", "stiffness_only", "units", "warnings", "cautions"} {
			if _, ok := r[k]; !ok {
				t.Errorf("%v: key %q missing", args, k)
			}
		}
		if r["method"] != "closed_form" {
			t.Errorf("method %v, want closed_form", r["method"])
		}
		if a := number(t, r["alpha"], "alpha"); math.Abs(a-alpha) > 1e-12*alpha {
			t.Errorf("alpha %.12g, want %.12g (Chopra's closed form)", a, alpha)
		}
		if b := number(t, r["beta"], "beta"); math.Abs(b-beta) > 1e-12*beta {
			t.Errorf("beta %.12g, want %.12g (Chopra's closed form)", b, beta)
		}
		if ci := r["alpha_ci95"].([]any); ci[0] != nil || ci[1] != nil {
			t.Errorf("alpha_ci95 %v: two exact values leave no interval, want [null, null]", ci)
		}
		if w := r["warnings"].([]any); len(w) != 1 || !strings.Contains(w[0].(string), "no hit-to-hit scatter") {
			t.Errorf("warnings %v, want one saying the interval holds no hit-to-hit scatter", w)
		}
		if c := r["cautions"].([]any); len(c) == 0 || !strings.Contains(strings.Join(anyStrings(c), " "), "rigid-body") {
			t.Errorf("cautions %v", c)
		}
		modes := r["modes"].([]any)
		if len(modes) != 2 || modes[0].(map[string]any)["frequency_hz"] != 14.2 || modes[0].(map[string]any)["damping_ratio_sd"] != nil {
			t.Errorf("modes %v: want 14.2 Hz first, no SD", modes)
		}
	}
	// Human output: the coefficients, the warning and the cautions.
	out, errOut, code := cli(t, "rayleigh", "--mode", "14.2:1%", "--mode", "93:2%")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	for _, want := range []string{"alpha = 1.269 ", "beta  = 6.474e-05 ", "warning: no SD given", "no hit-to-hit scatter", "cautions:", "rigid-body"} {
		if !strings.Contains(out, want) {
			t.Errorf("human output lacks %q:\n%s", want, out)
		}
	}
}

func anyStrings(v []any) []string {
	var s []string
	for _, x := range v {
		s = append(s, x.(string))
	}
	return s
}

// TestRayleighKnownWithSD: with an SD per value the covariance interval of
// the closed form is the linear propagation of the two SDs through it
// (propagation of uncertainty, GUM; the partial derivatives of Chopra's
// closed form: d alpha/d z1 = 2 w1 w2^2/d, d alpha/d z2 = -2 w1^2 w2/d,
// d beta/d z1 = -2 w1/d, d beta/d z2 = 2 w2/d, d = w2^2 - w1^2), there is
// no warning, and the stiffness-only fit is the weighted least squares
// beta = sum(w z/(2 sd^2)) / sum(w^2/(4 sd^2)) (normal equation of
// z = beta w/2, from memory).
func TestRayleighKnownWithSD(t *testing.T) {
	f1, z1, s1, f2, z2, s2 := 14.2, 0.01, 0.001, 93.0, 0.02, 0.003
	out, errOut, code := cli(t, "rayleigh", "--mode", "14.2:1%:0.1%", "--mode", "93:2%:0.003", "--json")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	r := jsonLines(t, out)[0]
	w1, w2 := 2*math.Pi*f1, 2*math.Pi*f2
	d := w2*w2 - w1*w1
	alphaSD := math.Hypot(2*w1*w2*w2/d*s1, 2*w1*w1*w2/d*s2)
	betaSD := math.Hypot(2*w1/d*s1, 2*w2/d*s2)
	if v := number(t, r["alpha_sd"], "alpha_sd"); math.Abs(v-alphaSD) > 1e-9*alphaSD {
		t.Errorf("alpha_sd %.10g, want %.10g", v, alphaSD)
	}
	if v := number(t, r["beta_sd"], "beta_sd"); math.Abs(v-betaSD) > 1e-9*betaSD {
		t.Errorf("beta_sd %.10g, want %.10g", v, betaSD)
	}
	if w := r["warnings"].([]any); len(w) != 0 {
		t.Errorf("warnings %v, want none with an SD per value", w)
	}
	if n := number(t, r["mc_samples"], "mc_samples"); n <= 0 {
		t.Errorf("mc_samples %v, want a Monte Carlo interval", n)
	}
	so := r["stiffness_only"].(map[string]any)
	num, den := w1*z1/(2*s1*s1)+w2*z2/(2*s2*s2), w1*w1/(4*s1*s1)+w2*w2/(4*s2*s2)
	if b := number(t, so["beta"], "stiffness-only beta"); math.Abs(b-num/den) > 1e-12*num/den {
		t.Errorf("stiffness-only beta %.12g, want %.12g", b, num/den)
	}
	// --stiffness-only makes it the main fit; one value is enough.
	out, errOut, code = cli(t, "rayleigh", "--mode", "93:2%", "--stiffness-only", "--json")
	if code != 0 {
		t.Fatalf("--stiffness-only: exit %d: %s", code, errOut)
	}
	r = jsonLines(t, out)[0]
	if b, want := number(t, r["beta"], "beta"), 2*z2/w2; r["method"] != "stiffness_only" || math.Abs(b-want) > 1e-12*want {
		t.Errorf("--stiffness-only: method %v beta %g, want stiffness_only, 2 z/w = %g", r["method"], b, want)
	}
}

// TestRayleighKnownUsage: bad values and a history beside --mode are usage
// errors (exit 2) that quote the value.
func TestRayleighKnownUsage(t *testing.T) {
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--mode", "14.2", "--mode", "93:2%"}, `"14.2"`},
		{[]string{"--mode", "14.2:abc", "--mode", "93:2%"}, `"abc"`},
		{[]string{"--mode", "x:1%", "--mode", "93:2%"}, `"x"`},
		{[]string{"--mode", "-14.2:1%", "--mode", "93:2%"}, `-14.2`},
		{[]string{"--mode", "14.2:-1%", "--mode", "93:2%"}, `-1%`},
		{[]string{"--mode", "14.2:1", "--mode", "93:2%"}, `"14.2:1"`},
		{[]string{"--mode", "14.2:100%", "--mode", "93:2%"}, `100%`},
		{[]string{"--mode", "14.2:1%:-0.1%", "--mode", "93:2%:0.1%"}, `-0.1%`},
		{[]string{"--mode", "14.2:NaN", "--mode", "93:2%"}, `NaN`},
		{[]string{"--mode", "14.2:1%:0.1%", "--mode", "93:2%"}, "every mode or for none"},
		{[]string{"--mode", "14.2:1%", "--mode", "14.2:2%"}, "same frequency"},
		{[]string{"--mode", "14.2:1%"}, "at least 2"},
		{[]string{"--mode", "14.2:1%", "--mode", "93:2%", "--db", "x.db"}, "--db"},
		{[]string{"--prototype", "p", "--mode", "14.2:1%", "--mode", "93:2%"}, "--prototype"},
	} {
		_, errOut, code := cli(t, append([]string{"rayleigh"}, c.args...)...)
		if code != exitUsage || !strings.Contains(errOut, c.want) {
			t.Errorf("%v: exit %d, stderr %q; want exit %d naming %s", c.args, code, errOut, exitUsage, c.want)
		}
	}
}
