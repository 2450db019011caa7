package report

import (
	"fmt"
	"math"
	"runtime"
	"sort"
	"sync"
	"time"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"
)

// Drift warning convention: damping is said to drift when the
// Mann-Kendall p-value is below DriftP and Sen's slope times the campaign's
// span exceeds DriftChange of the median damping.
const (
	DriftP      = 0.05
	DriftChange = 0.10
)

// MinTrendN is the fewest hits a trend is computed from.
const MinTrendN = 3

// LinearTrend is a least-squares straight line y = Intercept + Slope*x.
type LinearTrend struct {
	Slope     float64    `json:"slope"`
	Intercept float64    `json:"intercept"`
	SE        float64    `json:"slope_se"`
	SlopeCI95 [2]float64 `json:"slope_ci95"` // Student t with n-2 degrees of freedom
	N         int        `json:"n"`
}

// LinearFit fits y = a + b x by least squares (gonum stat.LinearRegression)
// and gives the Student t interval of the slope, se(b) = sqrt(SSE/(n-2) /
// sum (x - mean x)^2). It needs three points and two distinct x; otherwise
// the fields are NaN.
func LinearFit(x, y []float64) LinearTrend {
	lt := LinearTrend{Slope: math.NaN(), Intercept: math.NaN(), SE: math.NaN(), SlopeCI95: nan2, N: len(x)}
	if len(x) != len(y) || len(x) < 3 {
		return lt
	}
	mx := stat.Mean(x, nil)
	sxx := 0.0
	for _, v := range x {
		sxx += (v - mx) * (v - mx)
	}
	if !(sxx > 0) {
		return lt
	}
	lt.Intercept, lt.Slope = stat.LinearRegression(x, y, nil, false)
	sse := 0.0
	for i := range x {
		r := y[i] - lt.Intercept - lt.Slope*x[i]
		sse += r * r
	}
	dof := float64(len(x) - 2)
	lt.SE = math.Sqrt(sse / dof / sxx)
	h := TQuantile(0.5+Level/2, dof) * lt.SE
	lt.SlopeCI95 = [2]float64{lt.Slope - h, lt.Slope + h}
	return lt
}

// MannKendall is the outcome of the Mann-Kendall trend test.
type MannKendall struct {
	S   float64 `json:"s"`   // Kendall's S: sum over i<j of sign(x_j - x_i)
	Var float64 `json:"var"` // variance of S under no trend, corrected for ties
	Z   float64 `json:"z"`   // (S -+ 1)/sqrt(Var), continuity corrected; 0 when S = 0
	P   float64 `json:"p"`   // two-sided, normal approximation
	N   int     `json:"n"`
}

// MannKendallTest tests x (in time order) for a monotonic trend: S = sum
// over i<j of sign(x_j - x_i), Var(S) = [n(n-1)(2n+5) - sum t(t-1)(2t+5)]/18
// over groups of t tied values, Z = (S-1)/sqrt(Var) for S > 0, (S+1)/sqrt(Var)
// for S < 0, 0 otherwise, p = 2(1 - Phi(|Z|)). Fewer than three values give
// NaN.
func MannKendallTest(x []float64) MannKendall {
	n := len(x)
	mk := MannKendall{S: math.NaN(), Var: math.NaN(), Z: math.NaN(), P: math.NaN(), N: n}
	if n < 3 {
		return mk
	}
	// Pairs with a NaN count as ties of sign 0, and a NaN ties with
	// nothing: S and the tie term come from the other values.
	vals := make([]float64, 0, n)
	for _, v := range x {
		if !math.IsNaN(v) {
			vals = append(vals, v)
		}
	}
	si, ties := kendallS(vals)
	s := float64(si)
	fn := float64(n)
	mk.S = s
	mk.Var = (fn*(fn-1)*(2*fn+5) - ties) / 18
	switch {
	case !(mk.Var > 0):
		mk.Z, mk.P = math.NaN(), math.NaN()
		return mk
	case s > 0:
		mk.Z = (s - 1) / math.Sqrt(mk.Var)
	case s < 0:
		mk.Z = (s + 1) / math.Sqrt(mk.Var)
	default:
		mk.Z = 0
	}
	mk.P = 2 * distuv.UnitNormal.CDF(-math.Abs(mk.Z))
	return mk
}

// SenSlope returns Sen's slope of x over t: the median of the slopes
// (x_j - x_i)/(t_j - t_i) over all pairs with t_j != t_i. NaN when no pair
// has distinct times. Up to SenExactPairs pairs it is exact; beyond, it is
// the median of a random sample of SenSamplePairs pairs (SenDetail says
// which and how close).
func SenSlope(t, x []float64) float64 { return senSlope(t, x).Slope }

// SenSlopeDetail is SenSlope with how it was found: the number of pairs,
// the sample size (0 when exact) and the exact rank of the slope among all
// pair slopes.
func SenSlopeDetail(t, x []float64) SenDetail { return senSlope(t, x) }

// QuantityTrend is the trend of one quantity of one mode, per day.
type QuantityTrend struct {
	Median      float64     `json:"median"`
	Linear      LinearTrend `json:"least_squares_per_day"`
	MannKendall MannKendall `json:"mann_kendall"`
	SenSlope    float64     `json:"sen_slope_per_day"`
	// Sen says how Sen's slope was found: exact, or from a random sample
	// of the pairs with its exact rank among all of them.
	Sen SenInfo `json:"sen"`
	// RelativePerDay is Sen's slope over the median; RelativeChange is
	// Sen's slope times the span over the median.
	RelativePerDay float64 `json:"relative_sen_slope_per_day"`
	RelativeChange float64 `json:"relative_change"`
}

// ModeTrend is the trend of one mode of one revision over time.
type ModeTrend struct {
	Prototype string `json:"prototype"`
	Revision  string `json:"revision"`
	ModeLabel
	Name      string        `json:"name"`
	N         int           `json:"n"`
	Start     time.Time     `json:"start"`
	End       time.Time     `json:"end"`
	SpanDays  float64       `json:"span_days"`
	Damping   QuantityTrend `json:"damping_ratio"`
	Frequency QuantityTrend `json:"frequency_hz"`
	// Drift is true when the damping drifts (DriftP, DriftChange), and
	// Warning then says so in words.
	Drift   bool   `json:"drift"`
	Warning string `json:"warning,nullempty"`
	// Note says why no trend was computed.
	Note string `json:"note,nullempty"`
}

// RevisionTrend is the trends of every mode of one revision.
type RevisionTrend struct {
	Prototype string      `json:"prototype"`
	Revision  string      `json:"revision"`
	Modes     []ModeTrend `json:"modes"`
	Warnings  []string    `json:"warnings"`
	// Excluded and ExcludedByHand: what was left out (see RevisionStats).
	Excluded       []Exclusion   `json:"excluded"`
	ExcludedByHand []ExcludedHit `json:"excluded_by_hand"`
}

// Trends computes the trend of every mode of every revision of id.
func Trends(id *Identified) []RevisionTrend {
	// The modes are independent: compute them on every core, then
	// assemble in order.
	type job struct {
		rev, at int
		l       ModeLabel
		obs     []Observation
	}
	revs := id.Revisions()
	var jobs []job
	for ri, rev := range revs {
		for _, l := range id.Labels {
			if obs := id.Select(rev, l.Label); len(obs) > 0 {
				jobs = append(jobs, job{rev: ri, at: len(jobs), l: l, obs: obs})
			}
		}
	}
	results := make([]ModeTrend, len(jobs))
	next := make(chan job)
	var wg sync.WaitGroup
	for range min(runtime.GOMAXPROCS(0), max(len(jobs), 1)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for j := range next {
				results[j.at] = TrendOf(j.l, j.obs)
			}
		}()
	}
	for _, j := range jobs {
		next <- j
	}
	close(next)
	wg.Wait()
	out := make([]RevisionTrend, len(revs))
	for ri, rev := range revs {
		out[ri] = RevisionTrend{Revision: rev, Modes: []ModeTrend{}, Warnings: []string{}, Excluded: id.excluded(rev), ExcludedByHand: id.byHand(rev)}
	}
	for _, j := range jobs {
		rt, mt := &out[j.rev], results[j.at]
		rt.Prototype = mt.Prototype
		rt.Modes = append(rt.Modes, mt)
		if mt.Warning != "" {
			rt.Warnings = append(rt.Warnings, mt.Warning)
		}
	}
	return out
}

// TrendOf computes the trend of the observations of one mode over their
// hit times, in days since the first hit.
func TrendOf(l ModeLabel, obs []Observation) ModeTrend {
	obs = append([]Observation(nil), obs...)
	sort.SliceStable(obs, func(a, b int) bool { return obs[a].Time.Before(obs[b].Time) })
	mt := ModeTrend{ModeLabel: l, Name: l.Name(), N: len(obs)}
	empty := QuantityTrend{Median: math.NaN(), Linear: LinearFit(nil, nil), MannKendall: MannKendallTest(nil),
		SenSlope: math.NaN(), Sen: SenInfo{Method: "exact", Rank: math.NaN()}, RelativePerDay: math.NaN(), RelativeChange: math.NaN()}
	mt.Damping, mt.Frequency = empty, empty
	if len(obs) == 0 {
		mt.Note = "no hits"
		return mt
	}
	mt.Prototype, mt.Revision = obs[0].Prototype, obs[0].Revision
	mt.Start, mt.End = obs[0].Time, obs[len(obs)-1].Time
	mt.SpanDays = mt.End.Sub(mt.Start).Hours() / 24
	t := make([]float64, len(obs))
	z := make([]float64, len(obs))
	f := make([]float64, len(obs))
	for i, o := range obs {
		t[i] = o.Time.Sub(mt.Start).Hours() / 24
		z[i], f[i] = o.DampingRatio, o.FrequencyHz
	}
	mt.Damping.Median, mt.Frequency.Median = median(z), median(f)
	if len(obs) < MinTrendN {
		mt.Note = fmt.Sprintf("%d hit(s): a trend needs at least %d", len(obs), MinTrendN)
		return mt
	}
	if !(mt.SpanDays > 0) {
		mt.Note = "all hits at the same time: no trend over time"
		return mt
	}
	mt.Damping = quantityTrend(t, z, mt.SpanDays)
	mt.Frequency = quantityTrend(t, f, mt.SpanDays)
	d := mt.Damping
	if d.MannKendall.P < DriftP && math.Abs(d.RelativeChange) > DriftChange {
		mt.Drift = true
		dir := "rises"
		if d.SenSlope < 0 {
			dir = "falls"
		}
		mt.Warning = fmt.Sprintf("damping of %s %s %s %%/day (relative to its median %.3g %%, %s %% over %.3g days; Mann-Kendall %s): a loosening joint or a curing adhesive? check before using these hits together",
			l.Name(), dir, pct2(math.Abs(d.RelativePerDay)), 100*d.Median, pct(d.RelativeChange), mt.SpanDays, fmtP(d.MannKendall.P))
	}
	return mt
}

// SenInfo is how Sen's slope was found, as the JSON of a trend shows it.
type SenInfo struct {
	// Method is "exact" or "random sample".
	Method string `json:"method"`
	// Pairs is the number of pair slopes (pairs with distinct times).
	Pairs int64 `json:"pairs"`
	// Sample is the number of pairs drawn; 0 when exact.
	Sample int `json:"sample"`
	// Rank is the share of all pair slopes at or below the slope, counted
	// exactly (one half, or just above, for the exact median).
	Rank float64 `json:"rank"`
	// RankBound95 is the 95 % bound of |Rank - 0.5| for a sample; 0 when
	// exact.
	RankBound95 float64 `json:"rank_bound95"`
}

func senInfo(d SenDetail) SenInfo {
	si := SenInfo{Method: "exact", Pairs: d.Pairs, Sample: d.Sample, Rank: d.Rank}
	if d.Sample > 0 {
		si.Method, si.RankBound95 = "random sample", SenRankBound95
	}
	return si
}

func quantityTrend(t, x []float64, span float64) QuantityTrend {
	sen := senSlope(t, x)
	q := QuantityTrend{Median: median(x), Linear: LinearFit(t, x), MannKendall: MannKendallTest(x), SenSlope: sen.Slope, Sen: senInfo(sen)}
	q.RelativePerDay = q.SenSlope / q.Median
	q.RelativeChange = q.SenSlope * span / q.Median
	return q
}

// pct2 writes a fraction as a percentage with two significant digits.
func pct2(x float64) string { return fmt.Sprintf("%.2g", 100*x) }
