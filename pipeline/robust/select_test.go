package robust

import (
	"math"
	"math/rand/v2"
	"sort"
	"testing"
)

// The reference is a full sort by the standard library (sort.Float64s):
// the k-th value of the sorted slice, and the textbook median (middle
// value, or the mean of the two middle values for an even length).
func TestSelectAndMedianAgainstSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for trial := 0; trial < 500; trial++ {
		n := 1 + rng.IntN(200)
		x := make([]float64, n)
		for i := range x {
			if rng.IntN(4) == 0 {
				x[i] = float64(rng.IntN(5)) // ties
			} else {
				x[i] = rng.NormFloat64()
			}
		}
		ref := append([]float64(nil), x...)
		sort.Float64s(ref)
		k := rng.IntN(n)
		s := append([]float64(nil), x...)
		if got := Select(s, k); got != ref[k] {
			t.Fatalf("n=%d k=%d: Select = %v, sort gives %v", n, k, got, ref[k])
		}
		for i := 0; i < k; i++ {
			if s[i] > s[k] {
				t.Fatalf("n=%d k=%d: s[%d]=%v > s[k]=%v after Select", n, k, i, s[i], s[k])
			}
		}
		for i := k + 1; i < n; i++ {
			if s[i] < s[k] {
				t.Fatalf("n=%d k=%d: s[%d]=%v < s[k]=%v after Select", n, k, i, s[i], s[k])
			}
		}
		want := ref[n/2]
		if n%2 == 0 {
			want = (ref[n/2-1] + ref[n/2]) / 2
		}
		if got := Median(x); got != want {
			t.Fatalf("n=%d: Median = %v, want %v", n, got, want)
		}
	}
	if !math.IsNaN(Median(nil)) {
		t.Error("Median of nothing should be NaN")
	}
	if got := Median([]float64{math.NaN(), 1, 2}); !math.IsNaN(got) && got != 1 {
		t.Errorf("Median with a NaN = %v, want the sorted order's middle (1)", got)
	}
}
