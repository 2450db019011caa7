package report

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"
)

// Welch is the outcome of Welch's unequal-variance t test of mean(b) -
// mean(a).
type Welch struct {
	Diff float64    `json:"diff"` // mean(b) - mean(a)
	SE   float64    `json:"se"`   // sqrt(var_a/n_a + var_b/n_b)
	DOF  float64    `json:"dof"`  // Welch-Satterthwaite degrees of freedom
	T    float64    `json:"t"`
	P    float64    `json:"p"` // two-sided
	CI95 [2]float64 `json:"ci95"`
}

// WelchTest compares the means of a and b without assuming equal
// variances: t = (mean_b - mean_a)/se with se^2 = s_a^2/n_a + s_b^2/n_b and
// the Welch-Satterthwaite degrees of freedom
// se^4 / ((s_a^2/n_a)^2/(n_a-1) + (s_b^2/n_b)^2/(n_b-1)). Both samples need
// at least two values; otherwise every field is NaN.
func WelchTest(a, b []float64) Welch {
	w := Welch{Diff: math.NaN(), SE: math.NaN(), DOF: math.NaN(), T: math.NaN(), P: math.NaN(), CI95: nan2}
	na, nb := float64(len(a)), float64(len(b))
	if na < 2 || nb < 2 {
		return w
	}
	ma, va := stat.MeanVariance(a, nil)
	mb, vb := stat.MeanVariance(b, nil)
	qa, qb := va/na, vb/nb
	w.Diff = mb - ma
	w.SE = math.Sqrt(qa + qb)
	if !(w.SE > 0) {
		// Both samples constant: no scatter to test against.
		return Welch{Diff: w.Diff, SE: 0, DOF: math.NaN(), T: math.NaN(), P: math.NaN(), CI95: [2]float64{w.Diff, w.Diff}}
	}
	w.DOF = (qa + qb) * (qa + qb) / (qa*qa/(na-1) + qb*qb/(nb-1))
	w.T = w.Diff / w.SE
	w.P = 2 * tCDF(-math.Abs(w.T), w.DOF)
	h := TQuantile(0.5+Level/2, w.DOF) * w.SE
	w.CI95 = [2]float64{w.Diff - h, w.Diff + h}
	return w
}

// Sample-size convention of Compare: the difference to detect and the
// error rates.
const (
	DetectRatio = 1.10 // a 10 % difference in geometric-mean damping
	SizeAlpha   = 0.05 // two-sided significance level
	SizePower   = 0.80 // power
)

// HitsNeeded returns the number of hits per revision that a two-sample
// comparison of log zeta needs to show a ratio of geometric means of ratio
// (e.g. 1.1) with two-sided significance alpha and the given power, when
// log zeta scatters with standard deviation sdLog: the normal
// approximation n = 2 (z_{1-alpha/2} + z_{power})^2 sdLog^2 / ln(ratio)^2,
// rounded up.
func HitsNeeded(sdLog, ratio, alpha, power float64) int {
	d := math.Log(ratio)
	if !(sdLog > 0) || d == 0 || math.IsNaN(d) {
		return 0
	}
	z := distuv.UnitNormal.Quantile(1-alpha/2) + distuv.UnitNormal.Quantile(power)
	n := 2 * z * z * sdLog * sdLog / (d * d)
	return int(math.Ceil(n - 1e-9))
}

// ModeComparison compares one mode between two revisions.
type ModeComparison struct {
	ModeLabel
	Name      string `json:"name"`
	RevisionA string `json:"revision_a"`
	RevisionB string `json:"revision_b"`
	NA        int    `json:"n_a"`
	NB        int    `json:"n_b"`
	// GeoMeanA and GeoMeanB are the geometric-mean damping ratios.
	GeoMeanA float64 `json:"geometric_mean_a"`
	GeoMeanB float64 `json:"geometric_mean_b"`
	// Ratio is GeoMeanB / GeoMeanA with its 95 % interval and the
	// p-value of Welch's test on log zeta.
	Ratio     float64    `json:"damping_ratio_ratio"`
	RatioCI95 [2]float64 `json:"damping_ratio_ratio_ci95"`
	P         float64    `json:"p"`
	LogWelch  Welch      `json:"log_damping_welch"`
	// FrequencyShift is mean_B - mean_A in Hz with its Welch interval.
	FrequencyShift     float64    `json:"frequency_shift_hz"`
	FrequencyShiftCI95 [2]float64 `json:"frequency_shift_ci95"`
	FrequencyP         float64    `json:"frequency_p"`
	// PooledSDLog is the pooled standard deviation of log zeta, and
	// HitsNeeded the hits per revision that would show a DetectRatio
	// difference (0 when not computed).
	PooledSDLog float64 `json:"pooled_sd_log"`
	HitsNeeded  int     `json:"hits_needed,nullempty"`
	// Shown is true when the 95 % interval of the ratio excludes 1.
	Shown             bool   `json:"difference_shown"`
	Sentence          string `json:"sentence"`
	FrequencySentence string `json:"frequency_sentence"`
}

// Compare compares every mode of revisions a and b of id (label b against
// a). Modes with fewer than two hits on either side get a sentence saying
// so and NaN numbers.
func Compare(id *Identified, a, b string) []ModeComparison {
	var out []ModeComparison
	for _, l := range id.Labels {
		oa, ob := id.Select(a, l.Label), id.Select(b, l.Label)
		if len(oa) == 0 && len(ob) == 0 {
			continue
		}
		out = append(out, CompareMode(l, a, b, oa, ob))
	}
	return out
}

// CompareMode compares the observations oa (revision a) and ob (revision b)
// of one mode.
func CompareMode(l ModeLabel, a, b string, oa, ob []Observation) ModeComparison {
	c := ModeComparison{ModeLabel: l, Name: l.Name(), RevisionA: a, RevisionB: b, NA: len(oa), NB: len(ob),
		GeoMeanA: math.NaN(), GeoMeanB: math.NaN(), Ratio: math.NaN(), RatioCI95: nan2, P: math.NaN(),
		FrequencyShift: math.NaN(), FrequencyShiftCI95: nan2, FrequencyP: math.NaN(), PooledSDLog: math.NaN()}
	za, fa := values(oa)
	zb, fb := values(ob)
	la, lbb := logs(za), logs(zb)
	if len(za) > 0 {
		c.GeoMeanA, _ = GeometricMean(za)
	}
	if len(zb) > 0 {
		c.GeoMeanB, _ = GeometricMean(zb)
	}
	mode := l.Name()
	if len(oa) < 2 || len(ob) < 2 {
		c.LogWelch = WelchTest(nil, nil)
		c.Sentence = fmt.Sprintf("Mode %s cannot be compared: %d hit(s) of %s and %d of %s; each revision needs at least 2.",
			mode, len(oa), revName(a), len(ob), revName(b))
		c.FrequencySentence = c.Sentence
		return c
	}
	w := WelchTest(la, lbb)
	c.LogWelch = w
	c.Ratio = math.Exp(w.Diff)
	c.RatioCI95 = [2]float64{math.Exp(w.CI95[0]), math.Exp(w.CI95[1])}
	c.P = w.P
	fw := WelchTest(fa, fb)
	c.FrequencyShift, c.FrequencyShiftCI95, c.FrequencyP = fw.Diff, fw.CI95, fw.P
	_, va := stat.MeanVariance(la, nil)
	_, vb := stat.MeanVariance(lbb, nil)
	na, nb := float64(len(la)), float64(len(lbb))
	c.PooledSDLog = math.Sqrt(((na-1)*va + (nb-1)*vb) / (na + nb - 2))
	c.Shown = c.RatioCI95[0] > 1 || c.RatioCI95[1] < 1
	switch {
	case c.Shown && c.Ratio > 1:
		c.Sentence = fmt.Sprintf("Revision %s damps mode %s about %s %% more than %s (95 %% interval %s to %s %%, %s; %d hits of %s, %d of %s).",
			revName(b), mode, pct(c.Ratio-1), revName(a), pct(c.RatioCI95[0]-1), pct(c.RatioCI95[1]-1), fmtP(c.P), len(ob), revName(b), len(oa), revName(a))
	case c.Shown:
		c.Sentence = fmt.Sprintf("Revision %s damps mode %s about %s %% less than %s (95 %% interval %s to %s %%, %s; %d hits of %s, %d of %s).",
			revName(b), mode, pct(1-c.Ratio), revName(a), pct(1-c.RatioCI95[1]), pct(1-c.RatioCI95[0]), fmtP(c.P), len(ob), revName(b), len(oa), revName(a))
	default:
		c.HitsNeeded = HitsNeeded(c.PooledSDLog, DetectRatio, SizeAlpha, SizePower)
		c.Sentence = fmt.Sprintf("No difference in the damping of mode %s can be shown with %d hits of %s and %d of %s (ratio %s/%s %.2f, 95 %% interval %.2f to %.2f, %s)",
			mode, len(oa), revName(a), len(ob), revName(b), revName(b), revName(a), c.Ratio, c.RatioCI95[0], c.RatioCI95[1], fmtP(c.P))
		if c.HitsNeeded > 0 {
			c.Sentence += fmt.Sprintf("; about %d hits per revision would be needed to show a %.0f %% difference (normal approximation, alpha %.2f, power %.1f).",
				c.HitsNeeded, 100*(DetectRatio-1), SizeAlpha, SizePower)
		} else {
			c.Sentence += "."
		}
	}
	if fw.CI95[0] > 0 || fw.CI95[1] < 0 {
		c.FrequencySentence = fmt.Sprintf("Mode %s is %s Hz %s in %s than in %s (95 %% interval %s to %s Hz, %s).",
			mode, fmtHz(math.Abs(fw.Diff)), map[bool]string{true: "higher", false: "lower"}[fw.Diff > 0], revName(b), revName(a),
			fmtSigned(fw.CI95[0]), fmtSigned(fw.CI95[1]), fmtP(fw.P))
	} else {
		c.FrequencySentence = fmt.Sprintf("No frequency shift of mode %s can be shown (%s Hz, 95 %% interval %s to %s Hz).",
			mode, fmtSigned(fw.Diff), fmtSigned(fw.CI95[0]), fmtSigned(fw.CI95[1]))
	}
	return c
}

// values returns the damping ratios and frequencies of obs.
func values(obs []Observation) (z, f []float64) {
	for _, o := range obs {
		z = append(z, o.DampingRatio)
		f = append(f, o.FrequencyHz)
	}
	return z, f
}

func logs(x []float64) []float64 {
	out := make([]float64, len(x))
	for i, v := range x {
		out[i] = math.Log(v)
	}
	return out
}

func revName(r string) string {
	if r == "" {
		return "(no revision)"
	}
	return r
}

// pct writes a fraction as a rounded percentage.
func pct(x float64) string {
	p := 100 * x
	if math.Abs(p) >= 10 {
		return fmt.Sprintf("%.0f", p)
	}
	return fmt.Sprintf("%.1f", p)
}

func fmtSigned(x float64) string {
	if math.IsNaN(x) {
		return "?"
	}
	return fmt.Sprintf("%+.3g", x)
}

// fmtP writes a p-value the way a report states it: "p = 0.03",
// "p < 0.001".
func fmtP(p float64) string {
	switch {
	case math.IsNaN(p):
		return "p = ?"
	case p < 0.001:
		return "p < 0.001"
	case p < 0.01:
		return fmt.Sprintf("p = %.3f", p)
	default:
		return fmt.Sprintf("p = %.2f", p)
	}
}
