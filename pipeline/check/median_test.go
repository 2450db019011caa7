package check

import (
	"math/rand/v2"
	"sort"
	"testing"

	"gonum.org/v1/gonum/stat"
)

// TestMedianMatchesSortedQuantile: the selection-based median equals the
// textbook median of the sorted data (the middle value, or the mean of the
// two middle values for an even count; for odd counts also gonum's
// stat.Quantile at 0.5), for odd and even lengths and with ties.
func TestMedianMatchesSortedQuantile(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	for _, n := range []int{1, 2, 3, 4, 5, 10, 11, 101, 1000, 1001} {
		for trial := range 20 {
			x := make([]float64, n)
			for i := range x {
				x[i] = r.NormFloat64()
				if trial%3 == 0 {
					x[i] = float64(r.IntN(4)) // ties
				}
			}
			s := append([]float64(nil), x...)
			sort.Float64s(s)
			want := s[n/2]
			if n%2 == 0 {
				want = (s[n/2-1] + s[n/2]) / 2
			} else if q := stat.Quantile(0.5, stat.Empirical, s, nil); q != want {
				t.Fatalf("n=%d: gonum median %v, middle value %v", n, q, want)
			}
			if got := median(x); got != want {
				t.Fatalf("n=%d trial %d: median %v, sorted quantile %v", n, trial, got, want)
			}
		}
	}
}
