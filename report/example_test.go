package report_test

import (
	"fmt"
	"math"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/report"
)

// Two modes at 1 Hz and 10 Hz, both 5 % damped. Reference values computed
// from the closed form published in Chopra, Dynamics of Structures, and
// Clough & Penzien, Dynamics of Structures: alpha = 0.5712 1/s,
// beta = 1.4469e-3 s, minimum 2.875 % at 3.162 Hz.
func ExampleRayleighClosedForm() {
	w1, w2 := 2*math.Pi*1, 2*math.Pi*10
	alpha, beta := report.RayleighClosedForm(w1, 0.05, w2, 0.05)
	fmt.Printf("alpha = %.4f 1/s, beta = %.4e s\n", alpha, beta)
	fmt.Printf("minimum %.3f %% at %.3f Hz\n", 100*math.Sqrt(alpha*beta), math.Sqrt(alpha/beta)/(2*math.Pi))
	// Output:
	// alpha = 0.5712 1/s, beta = 1.4469e-03 s
	// minimum 2.875 % at 3.162 Hz
}

// Three measured modes (mean damping ratio with the standard uncertainty of
// the mean): a weighted least-squares fit with alpha, beta >= 0. The
// coefficients agree with numpy.linalg.lstsq on the rows divided by SD
// (alpha 5.0380, beta 1.8120e-05, run once by hand).
func ExampleFitRayleigh() {
	modes := []report.RayleighMode{
		{Label: "m1", FrequencyHz: 42, Damping: 0.0121, SD: 0.0004, ScatterSD: 0.0013, N: 12},
		{Label: "m2", FrequencyHz: 118, Damping: 0.0098, SD: 0.0003, ScatterSD: 0.0011, N: 12},
		{Label: "m3", FrequencyHz: 265, Damping: 0.0171, SD: 0.0006, ScatterSD: 0.0020, N: 12},
	}
	fit, err := report.FitRayleigh(modes, report.RayleighOptions{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%s: alpha %.3g 1/s, beta %.3g s\n", fit.Method, fit.Alpha, fit.Beta)
	for _, m := range fit.Modes {
		fmt.Printf("%s %5.0f Hz measured %.4f fitted %.4f inside %v\n", m.Label, m.FrequencyHz, m.Damping, m.Fitted, m.Inside)
	}
	// Output:
	// weighted_least_squares: alpha 5.04 1/s, beta 1.81e-05 s
	// m1    42 Hz measured 0.0121 fitted 0.0119 inside true
	// m2   118 Hz measured 0.0098 fitted 0.0101 inside true
	// m3   265 Hz measured 0.0171 fitted 0.0166 inside true
}

// Welch's test on log damping ratios of two revisions: the ratio of the
// geometric means is exp(diff). The same numbers are checked against
// scipy.stats.ttest_ind(equal_var=False) in TestWelchScipy (t = 5.887,
// dof = 11.21, p = 9.73e-05).
func ExampleWelchTest() {
	a := []float64{0.0210, 0.0192, 0.0238, 0.0221, 0.0204, 0.0229, 0.0215, 0.0199}
	b := []float64{0.0262, 0.0251, 0.0293, 0.0244, 0.0270, 0.0281}
	la, lb := make([]float64, len(a)), make([]float64, len(b))
	for i, v := range a {
		la[i] = math.Log(v)
	}
	for i, v := range b {
		lb[i] = math.Log(v)
	}
	w := report.WelchTest(la, lb)
	fmt.Printf("t = %.3f, dof = %.2f, p = %.3g, ratio %.3f [%.3f, %.3f]\n", w.T, w.DOF, w.P,
		math.Exp(w.Diff), math.Exp(w.CI95[0]), math.Exp(w.CI95[1]))
	// Output:
	// t = 5.887, dof = 11.21, p = 9.73e-05, ratio 1.250 [1.150, 1.359]
}

// Outliers appends to dst the indices of values more than 3 scaled MADs
// from the median (median 1.02, MAD 0.07, limit 0.311, by hand).
func ExampleOutliers() {
	x := []float64{1.0, 1.1, 0.9, 1.05, 0.95, 1.02, 3.0}
	fmt.Println(report.Outliers(nil, x))
	// Output:
	// [6]
}

// Identify labels the modes of the history, Stats summarises them: here a
// campaign of eight invented hits with two modes, no expected modes
// configured, so the frequencies are clustered and named m1, m2. The
// interval and geometric mean agree with scipy.stats.t.interval and
// scipy.stats.gmean (run once by hand: 1.02504 to 1.12496 %, 1.07354 %).
func ExampleStats() {
	var hits []db.Hit
	start := time.Date(2024, 5, 6, 8, 0, 0, 0, time.UTC)
	for i := range 8 {
		j := 1 + 0.004*float64(i%3-1)
		z := 0.010 + 0.0005*float64(i%4)
		hits = append(hits, db.Hit{
			ID: int64(i + 1), SHA256: fmt.Sprintf("%064d", i+1), Path: fmt.Sprintf("hit%d.csv", i+1),
			Meta: db.HitMeta{Prototype: "bracket", Revision: "A", HitTime: start.Add(time.Duration(i) * time.Hour)},
			Result: &pipeline.Result{Verdict: pipeline.Accepted, AnalysisVersion: pipeline.AnalysisVersion, Modes: []pipeline.Mode{
				{FrequencyHz: 64 * j, DampingRatio: z, DampingRatioSD: 0.001},
				{FrequencyHz: 230 / j, DampingRatio: 2 * z, DampingRatioSD: 0.002},
			}},
		})
	}
	for _, rs := range report.Stats(report.Identify(hits, report.IdentifyOptions{})) {
		for _, m := range rs.Modes {
			d := m.Damping
			fmt.Printf("%s %s: n %d, zeta %.3f %% [%.3f, %.3f], geometric %.3f %%\n", rs.Revision, m.Name, d.N,
				100*d.Mean, 100*d.MeanCI95[0], 100*d.MeanCI95[1], 100*d.GeoMean)
		}
	}
	// Output:
	// A m1 (64 Hz): n 8, zeta 1.075 % [1.025, 1.125], geometric 1.074 %
	// A m2 (230 Hz): n 8, zeta 2.150 % [2.050, 2.250], geometric 2.147 %
}
