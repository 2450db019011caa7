package report

import (
	"math"
	"math/rand/v2"
	"slices"
	"sort"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"
)

// Conventions of the statistics.
const (
	// Level is the two-sided confidence level of every interval.
	Level = 0.95
	// BootstrapMinN is the smallest sample that gets a bootstrap interval.
	BootstrapMinN = 10
	// BootstrapResamples is the number of bootstrap resamples.
	BootstrapResamples = 2000
	// BootstrapSeed seeds the bootstrap, so the same values always give
	// the same interval.
	BootstrapSeed = 20240601
	// OutlierK is the number of scaled MADs from the median beyond which
	// a value is called an outlier.
	OutlierK = 3
	// MADScale scales the median absolute deviation to estimate the
	// standard deviation of a normal distribution (1/Phi^-1(3/4)).
	MADScale = 1.4826
)

// TQuantile returns the p-quantile of Student's t distribution with dof
// degrees of freedom (gonum distuv.StudentsT).
func TQuantile(p, dof float64) float64 {
	if !(dof > 0) {
		return math.NaN()
	}
	return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: dof}.Quantile(p)
}

// tCDF is the cumulative distribution of Student's t with dof degrees of
// freedom.
func tCDF(x, dof float64) float64 {
	return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: dof}.CDF(x)
}

// Summary describes a sample. Quantities that need more values than the
// sample has are NaN (null in JSON).
type Summary struct {
	N      int     `json:"n"`
	Mean   float64 `json:"mean"`
	SD     float64 `json:"sd"` // sample standard deviation (n-1)
	Median float64 `json:"median"`
	Min    float64 `json:"min"`
	Max    float64 `json:"max"`
	CV     float64 `json:"cv"` // SD / Mean
	// MeanCI95 is the Student t interval of the mean, n >= 2.
	MeanCI95 [2]float64 `json:"mean_ci95"`
	// BootstrapCI95 is the percentile bootstrap interval of the mean,
	// n >= BootstrapMinN; NaN otherwise.
	BootstrapCI95 [2]float64 `json:"bootstrap_ci95"`
}

var nan2 = [2]float64{math.NaN(), math.NaN()}

// Describe summarises x: n, mean, standard deviation, median, coefficient
// of variation, Student t interval of the mean, and a bootstrap interval
// when there are at least BootstrapMinN values.
func Describe(x []float64) Summary {
	s := Summary{N: len(x), Mean: math.NaN(), SD: math.NaN(), Median: math.NaN(), Min: math.NaN(), Max: math.NaN(),
		CV: math.NaN(), MeanCI95: nan2, BootstrapCI95: nan2}
	if len(x) == 0 {
		return s
	}
	s.Mean = stat.Mean(x, nil)
	s.Median = median(x)
	s.Min, s.Max = slices.Min(x), slices.Max(x)
	if len(x) >= 2 {
		s.SD = stat.StdDev(x, nil)
		if s.Mean != 0 {
			s.CV = s.SD / s.Mean
		}
		h := TQuantile(0.5+Level/2, float64(len(x)-1)) * s.SD / math.Sqrt(float64(len(x)))
		s.MeanCI95 = [2]float64{s.Mean - h, s.Mean + h}
	}
	if len(x) >= BootstrapMinN {
		s.BootstrapCI95 = BootstrapMeanCI(x, BootstrapResamples, BootstrapSeed)
	}
	return s
}

// GeometricMean returns exp(mean(log x)) and its 95 % interval: the
// Student t interval of the mean of log x, back-transformed. Every x must
// be positive. The interval is NaN with fewer than two values.
func GeometricMean(x []float64) (gm float64, ci [2]float64) {
	if len(x) == 0 {
		return math.NaN(), nan2
	}
	l := make([]float64, len(x))
	for i, v := range x {
		l[i] = math.Log(v)
	}
	m := stat.Mean(l, nil)
	if len(x) < 2 {
		return math.Exp(m), nan2
	}
	h := TQuantile(0.5+Level/2, float64(len(x)-1)) * stat.StdDev(l, nil) / math.Sqrt(float64(len(x)))
	return math.Exp(m), [2]float64{math.Exp(m - h), math.Exp(m + h)}
}

// BootstrapMaxDraws bounds the values one bootstrap resample draws: up
// to it a resample draws n values from the n (the plain percentile
// bootstrap); beyond, it draws BootstrapMaxDraws values and its mean's
// deviation from the sample mean is scaled by sqrt(BootstrapMaxDraws/n)
// (the rescaled m-out-of-n bootstrap, consistent for the mean), so an
// interval costs at most BootstrapResamples * BootstrapMaxDraws draws
// whatever the size of the history.
const BootstrapMaxDraws = 500

// BootstrapMeanCI returns the percentile bootstrap 95 % interval of the
// mean of x from the given number of resamples, drawn with a PCG generator
// seeded by seed: the same x and seed give the same interval. Beyond
// BootstrapMaxDraws values each resample draws BootstrapMaxDraws of them,
// rescaled (see BootstrapMaxDraws).
func BootstrapMeanCI(x []float64, resamples int, seed uint64) [2]float64 {
	if len(x) == 0 || resamples <= 0 {
		return nan2
	}
	r := rand.New(rand.NewPCG(seed, uint64(len(x))))
	means := make([]float64, resamples)
	n := len(x)
	m := min(n, BootstrapMaxDraws)
	for b := range means {
		sum := 0.0
		for range m {
			sum += x[r.IntN(n)]
		}
		means[b] = sum / float64(m)
	}
	if m < n {
		mean := stat.Mean(x, nil)
		scale := math.Sqrt(float64(m) / float64(n))
		for b, v := range means {
			means[b] = mean + scale*(v-mean)
		}
	}
	sort.Float64s(means)
	a := (1 - Level) / 2
	return [2]float64{stat.Quantile(a, stat.Empirical, means, nil), stat.Quantile(1-a, stat.Empirical, means, nil)}
}

// MAD returns the median absolute deviation from the median of x,
// unscaled.
func MAD(x []float64) float64 {
	m := median(x)
	d := make([]float64, len(x))
	for i, v := range x {
		d[i] = math.Abs(v - m)
	}
	return median(d)
}

// Outliers appends to dst the indices of the values of x further than
// OutlierK * MADScale * MAD from the median, and returns it. When the MAD
// is zero (more than half of the values are equal) no value is called an
// outlier.
func Outliers(dst []int, x []float64) []int {
	if len(x) < 3 {
		return dst
	}
	m := median(x)
	lim := OutlierK * MADScale * MAD(x)
	if !(lim > 0) {
		return dst
	}
	for i, v := range x {
		if math.Abs(v-m) > lim {
			dst = append(dst, i)
		}
	}
	return dst
}

// DampingStats is Summary of the damping ratio with the geometric mean.
type DampingStats struct {
	Summary
	GeoMean   float64    `json:"geometric_mean"`
	GeoMeanCI [2]float64 `json:"geometric_mean_ci95"`
}

// Outlier is one value far from the median of its mode.
type Outlier struct {
	Quantity string  `json:"quantity"` // "damping_ratio" or "frequency_hz"
	Value    float64 `json:"value"`
	Median   float64 `json:"median"`
	// Score is |value - median| in scaled MADs.
	Score  float64 `json:"score"`
	HitID  int64   `json:"hit_id"`
	File   string  `json:"file"`
	SHA256 string  `json:"sha256"`
}

// ModeStat is the statistics of one mode of one revision.
type ModeStat struct {
	Prototype string `json:"prototype"`
	Revision  string `json:"revision"`
	ModeLabel
	Name      string       `json:"name"`
	Damping   DampingStats `json:"damping_ratio"`
	Frequency Summary      `json:"frequency_hz"`
	// HitSD is the root mean square of the per-hit standard errors of the
	// damping ratio: the estimation uncertainty of one hit.
	HitSD    float64   `json:"hit_sd"`
	Outliers []Outlier `json:"outliers"`
	// Hits are the hits the statistics use (shared with the Identified
	// the statistics were made from: a hit is in the list of each of its
	// modes).
	Hits []*HitRef `json:"-"`
	// Obs are the observations the statistics use.
	Obs []Observation `json:"-"`
}

// RevisionStats is the statistics of one revision of a prototype.
type RevisionStats struct {
	Prototype string `json:"prototype"`
	Revision  string `json:"revision"`
	// HitsUsed is the number of accepted or flagged hits with at least
	// one usable mode; HitsSeen every hit looked at.
	HitsSeen  int           `json:"hits_seen"`
	HitsUsed  int           `json:"hits_used"`
	Modes     []ModeStat    `json:"modes"`
	Unmatched []Observation `json:"unmatched"`
	// Excluded counts what was left out, by reason (see Identify);
	// ExcludedByHand lists the hits excluded by hand with why, by whom and
	// when.
	Excluded       []Exclusion   `json:"excluded"`
	ExcludedByHand []ExcludedHit `json:"excluded_by_hand"`
	// DampingVsLevel is filled by callers that have the hits
	// (DampingVsLevel): per mode, damping against the excitation level.
	DampingVsLevel []LevelStat `json:"damping_vs_level"`
}

// Stats computes the statistics of every revision and mode of id, in
// the order of the revisions' first hits and of the modes' frequencies.
func Stats(id *Identified) []RevisionStats {
	var out []RevisionStats
	hitIndex := make(map[int64]*HitRef, len(id.Hits))
	for i := range id.Hits {
		hitIndex[id.Hits[i].ID] = &id.Hits[i]
	}
	for _, rev := range id.Revisions() {
		rs := RevisionStats{Revision: rev, Unmatched: id.Unmatched(rev), Excluded: id.excluded(rev), ExcludedByHand: id.byHand(rev)}
		used := map[int64]bool{}
		for _, h := range id.Hits {
			if h.Revision == rev {
				rs.HitsSeen++
				rs.Prototype = h.Prototype
			}
		}
		for _, o := range id.Obs {
			if o.Revision == rev {
				used[o.HitID] = true
				rs.Prototype = o.Prototype
			}
		}
		rs.HitsUsed = len(used)
		for _, l := range id.Labels {
			obs := id.Select(rev, l.Label)
			if len(obs) == 0 {
				continue
			}
			rs.Modes = append(rs.Modes, modeStats(l, obs, hitIndex))
		}
		out = append(out, rs)
	}
	return out
}

// ModeStats computes the statistics of the observations of one mode.
func ModeStats(l ModeLabel, obs []Observation) ModeStat {
	return modeStats(l, obs, nil)
}

func modeStats(l ModeLabel, obs []Observation, byID map[int64]*HitRef) ModeStat {
	ms := ModeStat{ModeLabel: l, Name: l.Name(), Obs: obs, Outliers: []Outlier{}}
	z := make([]float64, len(obs))
	f := make([]float64, len(obs))
	v, nv := 0.0, 0
	for i, o := range obs {
		z[i], f[i] = o.DampingRatio, o.FrequencyHz
		if o.DampingRatioSD > 0 && !math.IsInf(o.DampingRatioSD, 0) {
			v += o.DampingRatioSD * o.DampingRatioSD
			nv++
		}
		ms.Prototype, ms.Revision = o.Prototype, o.Revision
	}
	ms.HitSD = math.NaN()
	if nv > 0 {
		ms.HitSD = math.Sqrt(v / float64(nv))
	}
	ms.Damping.Summary = Describe(z)
	ms.Damping.GeoMean, ms.Damping.GeoMeanCI = GeometricMean(z)
	ms.Frequency = Describe(f)
	for _, q := range []struct {
		name string
		x    []float64
		med  float64
	}{{"damping_ratio", z, ms.Damping.Median}, {"frequency_hz", f, ms.Frequency.Median}} {
		mad := MADScale * MAD(q.x)
		for _, i := range Outliers(nil, q.x) {
			ms.Outliers = append(ms.Outliers, Outlier{Quantity: q.name, Value: q.x[i], Median: q.med,
				Score: math.Abs(q.x[i]-q.med) / mad, HitID: obs[i].HitID, File: obs[i].File, SHA256: obs[i].SHA256})
		}
	}
	ms.Hits = make([]*HitRef, 0, len(obs))
	for _, o := range obs {
		h, ok := byID[o.HitID]
		if !ok {
			h = &HitRef{ID: o.HitID, SHA256: o.SHA256, File: o.File, Prototype: o.Prototype, Revision: o.Revision, Time: o.Time, AnalysisVersion: o.AnalysisVersion}
		}
		ms.Hits = append(ms.Hits, h)
	}
	return ms
}
