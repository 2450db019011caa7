package robust

import (
	"math"
	"slices"
	"sort"
)

// Select reorders s so that s[k] is the value a full sort would put there,
// everything before it is <= s[k] and everything after it >= s[k]
// (Hoare's selection with a median-of-three pivot, expected linear time),
// and returns s[k]. s must hold no NaN.
func Select(s []float64, k int) float64 {
	lo, hi := 0, len(s)-1
	for hi > lo {
		mid := lo + (hi-lo)/2
		if s[mid] < s[lo] {
			s[mid], s[lo] = s[lo], s[mid]
		}
		if s[hi] < s[lo] {
			s[hi], s[lo] = s[lo], s[hi]
		}
		if s[hi] < s[mid] {
			s[hi], s[mid] = s[mid], s[hi]
		}
		p := s[mid]
		i, j := lo, hi
		for i <= j {
			for s[i] < p {
				i++
			}
			for s[j] > p {
				j--
			}
			if i <= j {
				s[i], s[j] = s[j], s[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return s[k]
		}
	}
	return s[k]
}

// MedianInPlace returns the median of s (the mean of the two middle values
// for an even length; NaN for none) by selection; s is reordered. With a
// NaN in s it sorts instead (NaN first, as sort.Float64s orders it).
func MedianInPlace(s []float64) float64 {
	n := len(s)
	if n == 0 {
		return math.NaN()
	}
	for _, v := range s {
		if v != v {
			sort.Float64s(s)
			if n%2 == 1 {
				return s[n/2]
			}
			return (s[n/2-1] + s[n/2]) / 2
		}
	}
	hi := Select(s, n/2)
	if n%2 == 1 {
		return hi
	}
	// the largest of the lower half
	lo := s[0]
	for _, v := range s[1 : n/2] {
		if v > lo {
			lo = v
		}
	}
	return (lo + hi) / 2
}

// Median is MedianInPlace on a copy: x is not modified. (gonum's
// stat.Quantile at 0.5 returns the lower middle value for an even length,
// not the textbook median, and needs sorted input.)
func Median(x []float64) float64 {
	if len(x) == 0 {
		return math.NaN()
	}
	return MedianInPlace(slices.Clone(x))
}
