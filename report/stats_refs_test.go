package report

import (
	"encoding/json"
	"os"
	"path/filepath"
	"testing"
)

// statsRefs is testdata/scipy/stats_refs.json, written once by
// testdata/scipy/make_stats_refs.py with Debian's python3-scipy 1.10.1.
type statsRefs struct {
	TQuantiles []struct{ P, DOF, Q float64 } `json:"t_quantiles"`
	Welch      []struct {
		Name      string
		A, B      []float64
		T, P, DOF float64
		Diff      float64
		CI95      [2]float64
	} `json:"welch"`
	Trends []struct {
		Name        string
		T, X        []float64
		MKS         float64    `json:"mk_s"`
		MKVar       float64    `json:"mk_var"`
		MKZ         float64    `json:"mk_z"`
		MKP         float64    `json:"mk_p"`
		SenSlope    float64    `json:"sen_slope"`
		LRSlope     float64    `json:"lr_slope"`
		LRIntercept float64    `json:"lr_intercept"`
		LRStderr    float64    `json:"lr_stderr"`
		LRSlopeCI95 [2]float64 `json:"lr_slope_ci95"`
	} `json:"trends"`
}

func loadStatsRefs(t *testing.T) statsRefs {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "testdata", "scipy", "stats_refs.json"))
	if err != nil {
		t.Fatal(err)
	}
	var r statsRefs
	if err := json.Unmarshal(b, &r); err != nil {
		t.Fatal(err)
	}
	if len(r.TQuantiles) == 0 || len(r.Welch) == 0 || len(r.Trends) == 0 {
		t.Fatal("stats_refs.json lacks cases")
	}
	return r
}

// TestTQuantilePublishedTable checks Student t quantiles against the
// two-sided 95 % column of a published t table (any statistics text:
// t(0.975, 4) = 2.776, t(0.975, 8) = 2.306, t(0.975, 1) = 12.706,
// t(0.975, 30) = 2.042), to the table's three decimals.
func TestTQuantilePublishedTable(t *testing.T) {
	for _, c := range []struct{ dof, want float64 }{{1, 12.706}, {4, 2.776}, {8, 2.306}, {30, 2.042}} {
		near(t, "t(0.975, dof)", TQuantile(0.975, c.dof), c.want, 0.0005)
	}
}

// TestTQuantileScipy checks against scipy.stats.t.ppf, including a
// fractional dof as Welch's test produces.
func TestTQuantileScipy(t *testing.T) {
	for _, c := range loadStatsRefs(t).TQuantiles {
		nearRel(t, "t quantile", TQuantile(c.P, c.DOF), c.Q, 1e-9)
	}
}

// TestWelchScipy checks WelchTest against scipy.stats.ttest_ind(b, a,
// equal_var=False) and the Welch-Satterthwaite dof and interval computed
// by the script.
func TestWelchScipy(t *testing.T) {
	for _, c := range loadStatsRefs(t).Welch {
		t.Run(c.Name, func(t *testing.T) {
			w := WelchTest(c.A, c.B)
			nearRel(t, "t", w.T, c.T, 1e-10)
			nearRel(t, "dof", w.DOF, c.DOF, 1e-10)
			nearRel(t, "p", w.P, c.P, 1e-7)
			nearRel(t, "diff", w.Diff, c.Diff, 1e-10)
			nearRel(t, "ci low", w.CI95[0], c.CI95[0], 1e-8)
			nearRel(t, "ci high", w.CI95[1], c.CI95[1], 1e-8)
		})
	}
}

// TestTrendScipy checks Mann-Kendall (textbook definition, computed by the
// script and cross-checked there with scipy.stats.kendalltau), Sen's slope
// (scipy.stats.theilslopes) and the least-squares slope and its interval
// (scipy.stats.linregress).
func TestTrendScipy(t *testing.T) {
	for _, c := range loadStatsRefs(t).Trends {
		t.Run(c.Name, func(t *testing.T) {
			mk := MannKendallTest(c.X)
			near(t, "S", mk.S, c.MKS, 0)
			nearRel(t, "var S", mk.Var, c.MKVar, 1e-12)
			nearRel(t, "Z", mk.Z, c.MKZ, 1e-12)
			nearRel(t, "p", mk.P, c.MKP, 1e-9)
			nearRel(t, "Sen's slope", SenSlope(c.T, c.X), c.SenSlope, 1e-10)
			lt := LinearFit(c.T, c.X)
			nearRel(t, "slope", lt.Slope, c.LRSlope, 1e-9)
			nearRel(t, "intercept", lt.Intercept, c.LRIntercept, 1e-9)
			nearRel(t, "slope se", lt.SE, c.LRStderr, 1e-8)
			nearRel(t, "slope ci low", lt.SlopeCI95[0], c.LRSlopeCI95[0], 1e-8)
			nearRel(t, "slope ci high", lt.SlopeCI95[1], c.LRSlopeCI95[1], 1e-8)
		})
	}
}
