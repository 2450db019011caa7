package report

// The trend kernels in O(n log n): Kendall's S by counting inversions with
// a merge sort, and Sen's slope exactly for small histories or from a
// bounded random sample of the pairs, whose exact rank among all pair
// slopes is then counted (also by counting inversions) and reported.

import (
	"math"
	"math/rand/v2"
	"sort"

	"github.com/ringlog/ringlog/pipeline/robust"
)

// Bounds of Sen's slope.
const (
	// SenExactPairs is the largest number of pairs whose slopes are all
	// computed: up to it (about 1000 hits) Sen's slope is exact.
	SenExactPairs = 500_000
	// SenSamplePairs is the number of pairs drawn at random (with
	// replacement, uniformly over the pairs with distinct times) beyond
	// SenExactPairs. The median of the sample is within the
	// 50 +/- 100*SenRankBound95 percentiles of all pair slopes with 95 %
	// probability.
	SenSamplePairs = 100_000
	// SenSeed seeds the sample, so the same values give the same slope.
	SenSeed = 20261202
)

// SenRankBound95 is the 95 % bound on how far the rank of a sampled
// median (as a fraction of all pairs) lies from one half: 1.96 * 0.5 /
// sqrt(SenSamplePairs), the normal approximation of the sample median's
// rank (a binomial proportion at 0.5).
var SenRankBound95 = 1.96 * 0.5 / math.Sqrt(SenSamplePairs)

// kendallS returns Kendall's S = sum over i<j of sign(x_j - x_i) for x
// without NaN, and the tie term sum t(t-1)(2t+5) over groups of t equal
// values: S = P - T - 2D with P the pairs, T the tied pairs and D the
// inversions (i<j, x_i > x_j), all counted exactly in integers by one
// merge sort.
func kendallS(x []float64) (s int64, ties float64) {
	n := int64(len(x))
	buf := make([]float64, 2*len(x))
	a, tmp := buf[:len(x)], buf[len(x):]
	copy(a, x)
	d := mergeCount(a, tmp)
	var tied int64
	for lo := 0; lo < len(a); {
		hi := lo + 1
		for hi < len(a) && a[hi] == a[lo] {
			hi++
		}
		if t := int64(hi - lo); t > 1 {
			tied += t * (t - 1) / 2
			ft := float64(t)
			ties += ft * (ft - 1) * (2*ft + 5)
		}
		lo = hi
	}
	return n*(n-1)/2 - tied - 2*d, ties
}

// mergeCount sorts a (tmp is scratch of the same length) and returns the
// number of pairs i<j with a[i] > a[j] (equal values are not counted):
// insertion sort of runs of 16, then bottom-up merges between a and tmp.
func mergeCount(a, tmp []float64) int64 {
	n := len(a)
	const run = 16
	var c int64
	for lo := 0; lo < n; lo += run {
		hi := min(lo+run, n)
		for i := lo + 1; i < hi; i++ {
			v := a[i]
			j := i
			for j > lo && a[j-1] > v {
				a[j] = a[j-1]
				j--
			}
			a[j] = v
			c += int64(i - j)
		}
	}
	src, dst := a, tmp[:n]
	for w := run; w < n; w *= 2 {
		for lo := 0; lo < n; lo += 2 * w {
			mid, hi := min(lo+w, n), min(lo+2*w, n)
			i, j, k := lo, mid, lo
			for i < mid && j < hi {
				if src[j] < src[i] {
					dst[k] = src[j]
					c += int64(mid - i)
					j++
				} else {
					dst[k] = src[i]
					i++
				}
				k++
			}
			k += copy(dst[k:], src[i:mid])
			copy(dst[k:], src[j:hi])
		}
		src, dst = dst, src
	}
	if &src[0] != &a[0] {
		copy(a, src)
	}
	return c
}

// SenDetail says how Sen's slope was found.
type SenDetail struct {
	Slope float64 `json:"sen_slope"`
	// Pairs is the number of pairs with distinct times: the slopes whose
	// median Sen's slope is.
	Pairs int64 `json:"sen_pairs"`
	// Sample is the number of pairs drawn at random; 0 when every slope
	// was computed (the slope is exact).
	Sample int `json:"sen_sample"`
	// Rank is the share of all pair slopes at or below Slope, counted
	// exactly; for an exact median it is at or just above one half.
	Rank float64 `json:"sen_rank"`
}

// senSlope returns Sen's slope of x over t: the median of (x_j -
// x_i)/(t_j - t_i) over the pairs with t_j != t_i, the mean of the two
// middle slopes for an even count. Up to SenExactPairs pairs every slope is
// computed; beyond, the median of SenSamplePairs random pairs, and its
// exact rank among all slopes. NaN when no pair has distinct times.
func senSlope(t, x []float64) SenDetail {
	n := len(t)
	d := SenDetail{Slope: math.NaN(), Rank: math.NaN()}
	if n != len(x) || n < 2 {
		return d
	}
	// pairs with distinct times
	ts := t
	if !sort.Float64sAreSorted(t) {
		ts = append([]float64(nil), t...)
		sort.Float64s(ts)
	}
	var same int64
	for lo := 0; lo < n; {
		hi := lo + 1
		for hi < n && ts[hi] == ts[lo] {
			hi++
		}
		g := int64(hi - lo)
		same += g * (g - 1) / 2
		lo = hi
	}
	d.Pairs = int64(n)*int64(n-1)/2 - same
	if d.Pairs == 0 {
		return d
	}
	var slopes []float64
	if d.Pairs <= SenExactPairs {
		slopes = make([]float64, 0, d.Pairs)
		for i := range t {
			for j := i + 1; j < n; j++ {
				if dt := t[j] - t[i]; dt != 0 {
					slopes = append(slopes, (x[j]-x[i])/dt)
				}
			}
		}
	} else {
		r := rand.New(rand.NewPCG(SenSeed, uint64(n)))
		slopes = make([]float64, 0, SenSamplePairs)
		for tries := 0; len(slopes) < SenSamplePairs && tries < 50*SenSamplePairs; tries++ {
			i, j := r.IntN(n), r.IntN(n)
			if dt := t[j] - t[i]; dt != 0 {
				slopes = append(slopes, (x[j]-x[i])/dt)
			}
		}
		d.Sample = len(slopes)
	}
	d.Slope = robust.MedianInPlace(slopes)
	if d.Sample > 0 {
		d.Rank = float64(slopesAtOrBelow(t, x, d.Slope)) / float64(d.Pairs)
	} else {
		d.Rank = float64(countAtOrBelow(slopes, d.Slope)) / float64(d.Pairs)
	}
	return d
}

func countAtOrBelow(s []float64, v float64) int64 {
	var c int64
	for _, x := range s {
		if x <= v {
			c++
		}
	}
	return c
}

// slopesAtOrBelow counts the pairs with distinct times whose slope is at
// or below v, in O(n log n): for t_i < t_j the slope is <= v exactly when
// u_j <= u_i with u = x - v t, so it counts the pairs, in time order, whose
// u does not rise. Pairs with equal times are left out. (The test u_j <=
// u_i and the slope's own division can round differently for a slope
// within a few ulps of v; the count is the rank of v up to such pairs.)
func slopesAtOrBelow(t, x []float64, v float64) int64 {
	n := len(t)
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	u := make([]float64, n)
	for i := range u {
		u[i] = x[i] - v*t[i]
	}
	// time order; within equal times u descending, so that no pair of
	// equal times counts as "u does not rise" unless the u are equal,
	// which are subtracted below.
	sort.Slice(idx, func(a, b int) bool {
		ia, ib := idx[a], idx[b]
		if t[ia] != t[ib] {
			return t[ia] < t[ib]
		}
		return u[ia] > u[ib]
	})
	seq := make([]float64, n)
	for k, i := range idx {
		seq[k] = -u[i]
	}
	// mergeCount counts the pairs k<l with -u_k > -u_l, i.e. u rising
	// strictly; the other pairs have u_l <= u_k.
	var equalT int64
	for lo := 0; lo < n; {
		hi := lo + 1
		for hi < n && t[idx[hi]] == t[idx[lo]] {
			hi++
		}
		g := int64(hi - lo)
		equalT += g * (g - 1) / 2
		lo = hi
	}
	tmp := make([]float64, n)
	rising := mergeCount(seq, tmp)
	all := int64(n) * int64(n-1) / 2
	// pairs of equal times: within a group sorted by u descending, every
	// pair has u_l <= u_k and was counted in all - rising; remove them.
	return all - rising - equalT
}
