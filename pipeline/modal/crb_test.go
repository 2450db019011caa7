package modal

import (
	"math"
	"testing"
)

// The fully decayed limit of the Cramer-Rao bound, DESIGN.md section 6:
// sd(zeta)/zeta -> 2/sqrt(ENR), ENR = decay energy / noise variance. It
// follows from the Fisher information of A exp(-sigma t) cos(w t + phi)
// over (A, sigma) with the oscillation averaged out (Kay, Fundamentals of
// Statistical Signal Processing: Estimation Theory, ch. 3): var(sigma) =
// 16 sigma^3 var / (fs A^2) and ENR = fs A^2 / (4 sigma var).
func TestCRBZetaFullyDecayedLimit(t *testing.T) {
	for _, c := range []struct{ fn, zeta, fs float64 }{
		{10, 0.01, 1000},
		{250, 0.002, 20000},
		{3, 0.005, 300},
	} {
		const amp, noise = 2.0, 0.01
		sigma := c.zeta * 2 * math.Pi * c.fn
		n := int(25 / sigma * c.fs) // 25 time constants: exp(-50) of the energy is left
		wd := 2 * math.Pi * c.fn * math.Sqrt(1-c.zeta*c.zeta)
		var energy float64
		for i := 0; i < n; i++ {
			tt := float64(i) / c.fs
			s := amp * math.Exp(-sigma*tt) * math.Cos(wd*tt+0.4)
			energy += s * s
		}
		enr := energy / (noise * noise)
		got := CRBZeta(c.fn, c.zeta, amp, 0.4, noise, c.fs, n) / c.zeta
		want := 2 / math.Sqrt(enr)
		if r := got / want; math.Abs(r-1) > 0.002 {
			t.Errorf("fn %g zeta %g: sd(zeta)/zeta = %.5g, 2/sqrt(ENR) = %.5g (ratio %.4f)", c.fn, c.zeta, got, want, r)
		}
	}
}

// The bound is linear in the noise standard deviation and inversely
// proportional to the amplitude (the Fisher information scales with
// amp^2/var), and it cannot grow when samples are added (each sample adds
// a positive semi-definite term to the information).
func TestCRBZetaScaling(t *testing.T) {
	base := CRBZeta(50, 0.02, 1, 0.3, 0.01, 2000, 3000)
	if r := CRBZeta(50, 0.02, 1, 0.3, 0.03, 2000, 3000) / base; math.Abs(r-3) > 1e-9 {
		t.Errorf("noise x3: bound x%.12g, want 3", r)
	}
	if r := CRBZeta(50, 0.02, 4, 0.3, 0.01, 2000, 3000) / base; math.Abs(r-0.25) > 1e-9 {
		t.Errorf("amplitude x4: bound x%.12g, want 0.25", r)
	}
	prev := math.Inf(1)
	for _, n := range []int{50, 100, 200, 400, 800, 1600} {
		b := CRBZeta(50, 0.02, 1, 0.3, 0.01, 2000, n)
		if !(b <= prev) {
			t.Errorf("n = %d: bound %g above the bound with fewer samples %g", n, b, prev)
		}
		prev = b
	}
}

func TestCRBZetaInvalid(t *testing.T) {
	for _, c := range [][7]float64{
		{0, 0.01, 1, 0, 0.1, 100, 100},
		{10, 0, 1, 0, 0.1, 100, 100},
		{10, 1.2, 1, 0, 0.1, 100, 100},
		{10, 0.01, 1, 0, 0, 100, 100},
		{10, 0.01, 1, 0, 0.1, -1, 100},
		{10, 0.01, 1, 0, 0.1, 100, 0},
	} {
		if v := CRBZeta(c[0], c[1], c[2], c[3], c[4], c[5], int(c[6])); !math.IsNaN(v) {
			t.Errorf("CRBZeta%v = %g, want NaN", c, v)
		}
	}
	if v := CRBZeta(10, 0.01, 0, 0, 0.1, 100, 100); !math.IsInf(v, 1) {
		t.Errorf("zero amplitude: %g, want +Inf", v)
	}
}
