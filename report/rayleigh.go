package report

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"strings"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"
)

// Rayleigh damping: C = alpha M + beta K gives every mode the damping ratio
// zeta(w) = alpha/(2w) + beta w/2, w = 2 pi f in rad/s (Chopra, Dynamics of
// Structures; Clough & Penzien, Dynamics of Structures). alpha is in 1/s,
// beta in s.

// RayleighDamping returns the damping ratio the Rayleigh coefficients give
// at the circular frequency w (rad/s).
func RayleighDamping(alpha, beta, w float64) float64 {
	return alpha/(2*w) + beta*w/2
}

// RayleighClosedForm returns the coefficients that give damping ratios z1
// and z2 at the circular frequencies w1 and w2 (rad/s), w1 != w2:
// alpha = 2 w1 w2 (z1 w2 - z2 w1)/(w2^2 - w1^2),
// beta = 2 (z2 w2 - z1 w1)/(w2^2 - w1^2).
func RayleighClosedForm(w1, z1, w2, z2 float64) (alpha, beta float64) {
	d := w2*w2 - w1*w1
	return 2 * w1 * w2 * (z1*w2 - z2*w1) / d, 2 * (z2*w2 - z1*w1) / d
}

// RayleighMode is one measured mode of a Rayleigh fit.
type RayleighMode struct {
	Label       string  `json:"label"`
	Name        string  `json:"name"`
	FrequencyHz float64 `json:"frequency_hz"`  // mean frequency
	Damping     float64 `json:"damping_ratio"` // mean damping ratio
	// SD is the standard uncertainty of the mean damping ratio, the fit's
	// weight 1/SD^2: sqrt(max(s^2, h^2)/n) with s the hit-to-hit standard
	// deviation and h the root mean square per-hit standard error.
	SD float64 `json:"damping_ratio_sd"`
	// ScatterSD is the scatter of one hit, sqrt(max(s^2, h^2)).
	ScatterSD float64 `json:"scatter_sd"`
	N         int     `json:"n"`
	// Fitted is the damping ratio of the fitted curve at FrequencyHz.
	Fitted float64 `json:"fitted_damping_ratio"`
	// Inside is true when |Fitted - Damping| <= 2 ScatterSD.
	Inside bool `json:"inside_scatter"`
}

// RayleighModeOf turns the statistics of a mode into a fit input.
func RayleighModeOf(ms ModeStat) RayleighMode {
	v := math.NaN()
	for _, x := range []float64{ms.Damping.SD * ms.Damping.SD, ms.HitSD * ms.HitSD} {
		if x > 0 && !math.IsInf(x, 0) && !(v >= x) {
			v = x
		}
	}
	n := ms.Damping.N
	return RayleighMode{Label: ms.Label, Name: ms.Name, FrequencyHz: ms.Frequency.Mean, Damping: ms.Damping.Mean,
		SD: math.Sqrt(v / float64(n)), ScatterSD: math.Sqrt(v), N: n, Fitted: math.NaN()}
}

// RayleighOptions tune FitRayleigh.
type RayleighOptions struct {
	// StiffnessOnly fits beta alone, alpha = 0.
	StiffnessOnly bool
	// MCSamples is the number of Monte Carlo refits (default 2000) and
	// Seed their generator's seed (default 1).
	MCSamples int
	Seed      uint64
	// UnknownSD says the modes carry no uncertainty of their own (damping
	// ratios given without SD): their SDs are relative weights only. The
	// covariance is then always scaled by chi2/dof (Student t on dof), as
	// in least squares with an unknown variance; with dof = 0 (the curve
	// passes through every mode) there is no interval. No Monte Carlo
	// interval is made, and each mode's scatter is unknown (NaN): a mode is
	// inside only when dof = 0, where the curve passes through every mode.
	UnknownSD bool
}

// Fit methods.
const (
	MethodClosedForm    = "closed_form"            // two modes, exact
	MethodWeightedLS    = "weighted_least_squares" // more modes, or a constraint active
	MethodStiffnessOnly = "stiffness_only"         // alpha = 0, beta by weighted least squares
)

// RayleighFit is a fitted pair of Rayleigh coefficients.
type RayleighFit struct {
	Method string  `json:"method"`
	Alpha  float64 `json:"alpha"` // 1/s
	Beta   float64 `json:"beta"`  // s
	// AlphaCI95 and BetaCI95 are alpha, beta -+ q * sd from the covariance
	// (q the normal 97.5 % point, or Student t with DOF degrees of
	// freedom when the covariance is scaled), lower ends clipped at 0. A
	// coefficient held at 0 by the constraint has the interval [0, 0].
	AlphaCI95    [2]float64 `json:"alpha_ci95"`
	BetaCI95     [2]float64 `json:"beta_ci95"`
	AlphaSD      float64    `json:"alpha_sd"`
	BetaSD       float64    `json:"beta_sd"`
	CovAlphaBeta float64    `json:"cov_alpha_beta"`
	// MCAlphaCI95 and MCBetaCI95 are the 2.5 and 97.5 percentiles of
	// refits to damping ratios drawn from each mode's mean and SD.
	MCAlphaCI95 [2]float64 `json:"mc_alpha_ci95"`
	MCBetaCI95  [2]float64 `json:"mc_beta_ci95"`
	MCSamples   int        `json:"mc_samples"`
	// Unconstrained is (alpha, beta) before the non-negativity constraint.
	Unconstrained [2]float64 `json:"unconstrained"`
	Constraint    string     `json:"constraint,nullempty"`
	// Chi2 is sum ((fit - measured)/SD)^2 over the modes, DOF the modes
	// less the free coefficients. Scale multiplies the covariance: Chi2/DOF
	// when DOF > 0 and Chi2/DOF > 1 (the scatter between modes is larger
	// than their uncertainties), else 1.
	Chi2  float64        `json:"chi2"`
	DOF   int            `json:"dof"`
	Scale float64        `json:"covariance_scale"`
	Modes []RayleighMode `json:"modes"`
	// BandHz is the frequency band over which the curve follows the
	// measurements: from the lowest to the highest mode of the longest run
	// of neighbouring modes that are all Inside; NaN when none is.
	BandHz [2]float64 `json:"band_hz"`
	// MinDamping is sqrt(alpha beta), the curve's minimum, at
	// MinFrequencyHz = sqrt(alpha/beta)/(2 pi); NaN when alpha or beta is 0.
	MinDamping     float64 `json:"minimum_damping_ratio"`
	MinFrequencyHz float64 `json:"minimum_frequency_hz"`
}

// Curve returns the fitted damping ratio at f Hz.
func (r *RayleighFit) Curve(f float64) float64 { return RayleighDamping(r.Alpha, r.Beta, 2*math.Pi*f) }

// z975 is the 97.5 % point of the standard normal distribution.
var z975 = distuv.UnitNormal.Quantile(0.5 + Level/2)

// FitRayleigh fits Rayleigh coefficients to measured modes. Two modes: the
// closed form. More: weighted least squares with weights 1/SD^2. Either
// way alpha and beta must not be negative: when the unconstrained solution
// has a negative coefficient, each coefficient is fitted alone (the other
// held at 0) and the feasible fit of least chi-square is kept. With
// StiffnessOnly alpha is 0 and beta is fitted by weighted least squares.
// The covariance is (A^T W A)^-1 over the free coefficients, scaled by
// chi2/dof when dof > 0 and chi2/dof > 1.
func FitRayleigh(modes []RayleighMode, opt RayleighOptions) (RayleighFit, error) {
	if opt.MCSamples <= 0 {
		opt.MCSamples = 2000
	}
	if opt.Seed == 0 {
		opt.Seed = 1
	}
	need := 2
	if opt.StiffnessOnly {
		need = 1
	}
	if len(modes) < need {
		return RayleighFit{}, fmt.Errorf("a Rayleigh fit needs at least %d mode(s), got %d", need, len(modes))
	}
	ms := slices.Clone(modes)
	sort.SliceStable(ms, func(a, b int) bool { return ms[a].FrequencyHz < ms[b].FrequencyHz })
	for i, m := range ms {
		if !(m.FrequencyHz > 0) || math.IsInf(m.FrequencyHz, 0) || !(m.Damping > 0) || math.IsInf(m.Damping, 0) {
			return RayleighFit{}, fmt.Errorf("mode %s: frequency %g Hz and damping ratio %g must be positive", m.Label, m.FrequencyHz, m.Damping)
		}
		if !(m.SD > 0) || math.IsInf(m.SD, 0) {
			return RayleighFit{}, fmt.Errorf("mode %s: no uncertainty of its damping ratio (sd %g)", m.Label, m.SD)
		}
		if i > 0 && m.FrequencyHz == ms[i-1].FrequencyHz {
			return RayleighFit{}, fmt.Errorf("modes %s and %s have the same frequency %g Hz", ms[i-1].Label, m.Label, m.FrequencyHz)
		}
	}
	w := make([]float64, len(ms))
	z := make([]float64, len(ms))
	sd := make([]float64, len(ms))
	for i, m := range ms {
		w[i], z[i], sd[i] = 2*math.Pi*m.FrequencyHz, m.Damping, m.SD
	}
	s := solveRayleigh(w, z, sd, opt.StiffnessOnly)
	fit := RayleighFit{Method: s.method, Alpha: s.alpha, Beta: s.beta, Unconstrained: s.unconstrained, Constraint: s.note}
	fit.Chi2 = chi2(w, z, sd, s.alpha, s.beta)
	nfree := 0
	if s.freeA {
		nfree++
	}
	if s.freeB {
		nfree++
	}
	fit.DOF = len(ms) - nfree
	fit.Scale = 1
	q := z975
	switch {
	case opt.UnknownSD && fit.DOF == 0:
		fit.Scale = math.NaN()
	case fit.DOF > 0 && (opt.UnknownSD || fit.Chi2/float64(fit.DOF) > 1):
		fit.Scale = fit.Chi2 / float64(fit.DOF)
		q = TQuantile(0.5+Level/2, float64(fit.DOF))
	}
	cov, err := rayleighCov(w, sd, s.freeA, s.freeB)
	if err != nil {
		return RayleighFit{}, err
	}
	fit.AlphaSD = math.Sqrt(fit.Scale * cov[0][0])
	fit.BetaSD = math.Sqrt(fit.Scale * cov[1][1])
	fit.CovAlphaBeta = fit.Scale * cov[0][1]
	ci := func(v, sd float64, free bool) [2]float64 {
		if !free {
			return [2]float64{0, 0}
		}
		return [2]float64{math.Max(0, v-q*sd), v + q*sd}
	}
	fit.AlphaCI95 = ci(fit.Alpha, fit.AlphaSD, s.freeA)
	fit.BetaCI95 = ci(fit.Beta, fit.BetaSD, s.freeB)

	for i := range ms {
		ms[i].Fitted = RayleighDamping(fit.Alpha, fit.Beta, w[i])
		if opt.UnknownSD {
			// No scatter to judge against: inside only where the curve
			// passes through every mode.
			ms[i].ScatterSD = math.NaN()
			ms[i].Inside = fit.DOF == 0
			continue
		}
		ms[i].Inside = math.Abs(ms[i].Fitted-ms[i].Damping) <= 2*ms[i].ScatterSD
	}
	fit.Modes = ms
	fit.BandHz = rayleighBand(&fit)
	fit.MinDamping, fit.MinFrequencyHz = math.NaN(), math.NaN()
	if fit.Alpha > 0 && fit.Beta > 0 {
		fit.MinDamping = math.Sqrt(fit.Alpha * fit.Beta)
		fit.MinFrequencyHz = math.Sqrt(fit.Alpha/fit.Beta) / (2 * math.Pi)
	}
	if opt.UnknownSD {
		fit.MCAlphaCI95, fit.MCBetaCI95 = nan2, nan2
		return fit, nil
	}

	// Monte Carlo: draw each mode's mean damping from N(mean, SD^2)
	// (values below a thousandth of the mean are clipped there) and refit.
	r := rand.New(rand.NewPCG(opt.Seed, 0x7a1e))
	as := make([]float64, opt.MCSamples)
	bs := make([]float64, opt.MCSamples)
	zs := make([]float64, len(z))
	for k := range as {
		for i := range z {
			zs[i] = math.Max(z[i]+sd[i]*r.NormFloat64(), 1e-3*z[i])
		}
		sk := solveRayleigh(w, zs, sd, opt.StiffnessOnly)
		as[k], bs[k] = sk.alpha, sk.beta
	}
	sort.Float64s(as)
	sort.Float64s(bs)
	a := (1 - Level) / 2
	fit.MCAlphaCI95 = [2]float64{stat.Quantile(a, stat.Empirical, as, nil), stat.Quantile(1-a, stat.Empirical, as, nil)}
	fit.MCBetaCI95 = [2]float64{stat.Quantile(a, stat.Empirical, bs, nil), stat.Quantile(1-a, stat.Empirical, bs, nil)}
	fit.MCSamples = opt.MCSamples
	return fit, nil
}

type rayleighSolution struct {
	alpha, beta   float64
	freeA, freeB  bool
	unconstrained [2]float64
	method, note  string
}

// solveRayleigh is the constrained fit (see FitRayleigh).
func solveRayleigh(w, z, sd []float64, stiffOnly bool) rayleighSolution {
	colA := func(w float64) float64 { return 1 / (2 * w) }
	colB := func(w float64) float64 { return w / 2 }
	if stiffOnly {
		b := wls1(w, z, sd, colB)
		s := rayleighSolution{beta: math.Max(0, b), freeB: b > 0, unconstrained: [2]float64{0, b}, method: MethodStiffnessOnly}
		if b <= 0 {
			s.note = fmt.Sprintf("the stiffness-only fit gives beta = %.4g s < 0; beta is held at 0", b)
		}
		return s
	}
	var a, b float64
	method := MethodWeightedLS
	if len(w) == 2 {
		a, b = RayleighClosedForm(w[0], z[0], w[1], z[1])
		method = MethodClosedForm
	} else {
		a, b = wls2(w, z, sd)
	}
	s := rayleighSolution{alpha: a, beta: b, freeA: true, freeB: true, unconstrained: [2]float64{a, b}, method: method}
	if a >= 0 && b >= 0 {
		return s
	}
	// Active set on two variables: each coefficient alone, the other at 0.
	bOnly := math.Max(0, wls1(w, z, sd, colB))
	aOnly := math.Max(0, wls1(w, z, sd, colA))
	cb, ca := chi2(w, z, sd, 0, bOnly), chi2(w, z, sd, aOnly, 0)
	s.method = MethodWeightedLS
	unc := fmt.Sprintf("the unconstrained fit gives alpha = %.4g 1/s, beta = %.4g s", a, b)
	if cb <= ca {
		s.alpha, s.beta, s.freeA, s.freeB = 0, bOnly, false, bOnly > 0
		s.note = unc + "; alpha is held at 0 and beta fitted alone"
	} else {
		s.alpha, s.beta, s.freeA, s.freeB = aOnly, 0, aOnly > 0, false
		s.note = unc + "; beta is held at 0 and alpha fitted alone"
	}
	return s
}

// wls1 fits z = c * col(w) by weighted least squares.
func wls1(w, z, sd []float64, col func(float64) float64) float64 {
	num, den := 0.0, 0.0
	for i := range w {
		a := col(w[i])
		wt := 1 / (sd[i] * sd[i])
		num += wt * a * z[i]
		den += wt * a * a
	}
	return num / den
}

// wls2 fits z = alpha/(2w) + beta w/2 by weighted least squares: the least
// squares solution of (W^1/2 A) x = W^1/2 z (gonum mat, QR).
func wls2(w, z, sd []float64) (alpha, beta float64) {
	n := len(w)
	A := mat.NewDense(n, 2, nil)
	y := mat.NewVecDense(n, nil)
	for i := range w {
		A.Set(i, 0, 1/(2*w[i])/sd[i])
		A.Set(i, 1, w[i]/2/sd[i])
		y.SetVec(i, z[i]/sd[i])
	}
	var x mat.VecDense
	if err := x.SolveVec(A, y); err != nil {
		return math.NaN(), math.NaN()
	}
	return x.AtVec(0), x.AtVec(1)
}

func chi2(w, z, sd []float64, alpha, beta float64) float64 {
	c := 0.0
	for i := range w {
		r := (RayleighDamping(alpha, beta, w[i]) - z[i]) / sd[i]
		c += r * r
	}
	return c
}

// rayleighCov returns (A_F^T W A_F)^-1 over the free coefficients F,
// embedded in a 2x2 matrix with zeros for the fixed ones.
func rayleighCov(w, sd []float64, freeA, freeB bool) ([2][2]float64, error) {
	var out [2][2]float64
	var cols []func(float64) float64
	var at []int
	if freeA {
		cols = append(cols, func(w float64) float64 { return 1 / (2 * w) })
		at = append(at, 0)
	}
	if freeB {
		cols = append(cols, func(w float64) float64 { return w / 2 })
		at = append(at, 1)
	}
	if len(cols) == 0 {
		return out, nil
	}
	A := mat.NewDense(len(w), len(cols), nil)
	for i := range w {
		for j, c := range cols {
			A.Set(i, j, c(w[i])/sd[i])
		}
	}
	var ata mat.SymDense
	ata.SymOuterK(1, A.T())
	var inv mat.Dense
	if err := inv.Inverse(&ata); err != nil {
		return out, errors.New("the modes do not determine the Rayleigh coefficients (singular normal equations)")
	}
	for j := range at {
		for k := range at {
			out[at[j]][at[k]] = inv.At(j, k)
		}
	}
	return out, nil
}

// rayleighBand returns the frequency band over which the curve follows
// the measurements: from the lowest to the highest mode of the longest run
// of neighbouring modes (in frequency order) that are all inside their
// scatter (|fitted - measured| <= 2 ScatterSD). A single mode inside gives
// [f, f]; none gives NaN. Between two modes there is no measurement, so the
// band makes no claim there beyond the modes at its ends: interpolating the
// measured damping between modes would be an assumption no more credible
// than the curve itself (a structure with exact Rayleigh damping would fail
// a straight-line interpolation between widely spaced modes).
func rayleighBand(fit *RayleighFit) [2]float64 {
	ms := fit.Modes
	best, bestLen := nan2, -1.0
	for lo := 0; lo < len(ms); {
		if !ms[lo].Inside {
			lo++
			continue
		}
		hi := lo
		for hi+1 < len(ms) && ms[hi+1].Inside {
			hi++
		}
		if l := math.Log(ms[hi].FrequencyHz / ms[lo].FrequencyHz); l > bestLen {
			best, bestLen = [2]float64{ms[lo].FrequencyHz, ms[hi].FrequencyHz}, l
		}
		lo = hi + 1
	}
	return best
}

// Cautions are the warnings that every report of damping coefficients
// carries (DESIGN.md section 8).
func Cautions() []string {
	return []string{
		"Damping is the quantity that most limits resonant amplitudes: over-estimating it makes a model unconservative. Quote every number with its interval, and prefer the lower end where the response matters.",
		"Mass-proportional damping (alpha) also damps rigid-body motion, like a drag force; for mechanisms and free-floating parts a stiffness-only fit (alpha = 0) is often the safer choice.",
		"Rayleigh damping fits the measured modes only: outside the band where the curve follows the measurements it over-damps high modes and may mis-damp low ones.",
		"Measured damping depends on amplitude, boundary conditions and temperature; coefficients from a prototype are not a substitute for the damping values that the applicable design codes and the licensed engineer of record require.",
		"Impact testing means hammers near people and fixtures: follow the lab's own safety rules.",
	}
}

// RayleighReport is the Rayleigh fit of one revision of a prototype, with
// the stiffness-only fit beside it, the hits used and the cautions.
type RayleighReport struct {
	Prototype string `json:"prototype"`
	Revision  string `json:"revision"`
	// NHits is the number of distinct hits behind the modes used.
	NHits int `json:"n_hits"`
	RayleighFit
	// StiffnessOnly is the fit with alpha = 0 (the same as the main fit
	// when that is stiffness-only).
	StiffnessOnly *RayleighFit      `json:"stiffness_only"`
	Units         map[string]string `json:"units"`
	// Warnings concern these numbers: a mode resting on one hit, or
	// damping ratios given without an uncertainty ([] when none).
	Warnings []string `json:"warnings"`
	Cautions []string `json:"cautions"`
	// Excluded and ExcludedByHand: what was left out (see RevisionStats).
	Excluded       []Exclusion   `json:"excluded"`
	ExcludedByHand []ExcludedHit `json:"excluded_by_hand"`
	// Hits are the hits used (provenance).
	Hits []HitRef `json:"-"`
}

// rayleighUnits returns the units of the coefficient outputs (a new map
// each time: callers may change theirs).
func rayleighUnits() map[string]string {
	return map[string]string{"alpha": "1/s", "beta": "s", "frequency": "Hz", "damping_ratio": "fraction of critical"}
}

// ErrNoModes is returned by RayleighFor when the selection leaves too few
// modes.
var ErrNoModes = errors.New("too few modes")

// RayleighFor fits the modes of one revision's statistics: those labelled
// in labels, or all when labels is empty.
func RayleighFor(rs RevisionStats, labels []string, opt RayleighOptions) (RayleighReport, error) {
	rep := RayleighReport{Prototype: rs.Prototype, Revision: rs.Revision, Units: rayleighUnits(), Cautions: Cautions(),
		Excluded: rs.Excluded, ExcludedByHand: rs.ExcludedByHand}
	var modes []RayleighMode
	hits := map[int64]bool{}
	for _, ms := range rs.Modes {
		if len(labels) > 0 && !slices.Contains(labels, ms.Label) {
			continue
		}
		modes = append(modes, RayleighModeOf(ms))
		for _, h := range ms.Hits {
			if !hits[h.ID] {
				hits[h.ID] = true
				rep.Hits = append(rep.Hits, *h)
			}
		}
	}
	rep.NHits = len(hits)
	var single []string
	for _, m := range modes {
		if m.N == 1 {
			single = append(single, m.Name)
		}
	}
	if len(single) > 0 {
		rep.Warnings = append(rep.Warnings, fmt.Sprintf("one hit only behind mode(s) %s: their uncertainty is the estimator's standard error of that hit, so the intervals hold no hit-to-hit scatter; strike again before quoting them", strings.Join(single, ", ")))
	}
	need := 2
	if opt.StiffnessOnly {
		need = 1
	}
	if len(modes) < need {
		var names []string
		for _, m := range modes {
			names = append(names, m.Name)
		}
		return rep, fmt.Errorf("revision %s: %w: a Rayleigh fit needs %d, found %d [%s]", revName(rs.Revision), ErrNoModes, need, len(modes), strings.Join(names, ", "))
	}
	fit, err := FitRayleigh(modes, opt)
	if err != nil {
		return rep, fmt.Errorf("revision %s: %w", revName(rs.Revision), err)
	}
	rep.RayleighFit = fit
	if opt.StiffnessOnly {
		so := fit
		rep.StiffnessOnly = &so
	} else {
		o := opt
		o.StiffnessOnly = true
		so, err := FitRayleigh(modes, o)
		if err != nil {
			return rep, fmt.Errorf("revision %s: stiffness-only fit: %w", revName(rs.Revision), err)
		}
		rep.StiffnessOnly = &so
	}
	return rep, nil
}
