package modal

import (
	"math"
	"math/cmplx"
	"testing"
)

// TestRelationsThomson: Thomson, Theory of Vibration with Applications,
// Example 2.7-1: W = 10 lb, k = 30 lb/in, c = 0.12 lb s/in, g = 386 in/s^2
// give omega_n = 34.0 rad/s, zeta = 0.0681, log decrement 0.429 and a
// successive amplitude ratio of 1.535 (each to the precision printed).
func TestRelationsThomson(t *testing.T) {
	const W, k, c, g = 10.0, 30.0, 0.12, 386.0
	m := W / g
	wn := math.Sqrt(k / m)
	zeta := c / (2 * math.Sqrt(k*m)) // c / c_critical
	if math.Abs(wn-34.0) > 0.05 {
		t.Errorf("omega_n = %.3f rad/s, Thomson 34.0", wn)
	}
	if math.Abs(zeta-0.0681) > 0.00005 {
		t.Errorf("zeta = %.5f, Thomson 0.0681", zeta)
	}
	delta := LogDecFromZeta(zeta)
	if math.Abs(delta-0.429) > 0.0005 {
		t.Errorf("delta = %.5f, Thomson 0.429", delta)
	}
	if r := math.Exp(delta); math.Abs(r-1.535) > 0.0005 {
		t.Errorf("amplitude ratio = %.5f, Thomson 1.535", r)
	}
	// The pole of this system: |s| = omega_n, -Re s / |s| = zeta.
	s := PoleFromModal(wn/(2*math.Pi), zeta)
	if math.Abs(cmplx.Abs(s)-wn) > 1e-12 || math.Abs(-real(s)/cmplx.Abs(s)-zeta) > 1e-15 {
		t.Errorf("pole %v: |s| %.6f, zeta %.6f", s, cmplx.Abs(s), -real(s)/cmplx.Abs(s))
	}
	// Damped frequency omega_d = omega_n sqrt(1 - zeta^2) = 33.95 rad/s.
	if wd := 2 * math.Pi * DampedFromNatural(wn/(2*math.Pi), zeta); math.Abs(wd-imag(s)) > 1e-12 || math.Abs(wd-33.95) > 0.005 {
		t.Errorf("omega_d = %.4f rad/s", wd)
	}
}

// TestRelationsRoundTrips: the relations of DESIGN.md section 5 are
// inverses of each other over the whole underdamped range.
func TestRelationsRoundTrips(t *testing.T) {
	for _, zeta := range []float64{1e-5, 0.001, 0.0032, 0.02, 0.1, 0.3, 0.7, 0.95} {
		if got := ZetaFromLogDec(LogDecFromZeta(zeta)); math.Abs(got/zeta-1) > 1e-13 {
			t.Errorf("zeta %g: ZetaFromLogDec(LogDecFromZeta) = %.15g", zeta, got)
		}
		if math.Abs(LossFactor(zeta)*QFactor(zeta)-1) > 1e-15 {
			t.Errorf("zeta %g: eta Q = %g, want 1 (eta = 2 zeta, Q = 1/(2 zeta))", zeta, LossFactor(zeta)*QFactor(zeta))
		}
		if LossFactor(zeta) != 2*zeta {
			t.Errorf("zeta %g: loss factor %g", zeta, LossFactor(zeta))
		}
		for _, fn := range []float64{0.8, 37.5, 2500} {
			f, z := ModalFromPole(PoleFromModal(fn, zeta))
			if math.Abs(f/fn-1) > 1e-14 || math.Abs(z/zeta-1) > 1e-12 {
				t.Errorf("fn %g zeta %g: pole round trip gives %.15g %.15g", fn, zeta, f, z)
			}
			// The conjugate pole is the same mode.
			f, z = ModalFromPole(cmplx.Conj(PoleFromModal(fn, zeta)))
			if math.Abs(f/fn-1) > 1e-14 || math.Abs(z/zeta-1) > 1e-12 {
				t.Errorf("fn %g zeta %g: conjugate pole gives %.15g %.15g", fn, zeta, f, z)
			}
		}
	}
	// Light damping: delta ~ 2 pi zeta (the textbook approximation).
	if d := LogDecFromZeta(0.001); math.Abs(d/(2*math.Pi*0.001)-1) > 1e-6 {
		t.Errorf("light damping: delta %g, 2 pi zeta %g", d, 2*math.Pi*0.001)
	}
	// Limits: no cycle at or above critical damping.
	if !math.IsInf(LogDecFromZeta(1), 1) || DampedFromNatural(10, 1) != 0 {
		t.Error("critical damping: want infinite decrement and no damped frequency")
	}
	if _, z := ModalFromPole(0); !math.IsNaN(z) {
		t.Error("zero pole: want NaN damping")
	}
}

// TestRelationsCloughPenzien: delta = ln(0.20/0.16) = 0.2231 gives
// zeta = 3.55 % (Clough & Penzien, Dynamics of Structures, a free-vibration
// test; attribution from memory).
func TestRelationsCloughPenzien(t *testing.T) {
	if z := ZetaFromLogDec(math.Log(0.20 / 0.16)); math.Abs(100*z-3.55) > 0.005 {
		t.Errorf("zeta = %.4f %%, want 3.55 %%", 100*z)
	}
}
