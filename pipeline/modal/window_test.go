package modal

import (
	"math"
	"testing"

	"github.com/ringlog/ringlog/pipeline/synth"
)

// TestTauFromEndFraction: a window that ends at p of its start over T
// seconds, exp(-T/tau) = p.
func TestTauFromEndFraction(t *testing.T) {
	for _, c := range []struct{ T, p float64 }{{1, 0.01}, {4, 0.05}, {0.5, 0.5}} {
		tau := TauFromEndFraction(c.T, c.p)
		if got := math.Exp(-c.T / tau); math.Abs(got-c.p) > 1e-15 {
			t.Errorf("T %g p %g: tau %g gives exp(-T/tau) = %g", c.T, c.p, tau, got)
		}
	}
}

// TestCorrectExpWindowPoleShift: the window multiplies exp(s t) by
// exp(-t/tau), i.e. moves the pole from s to s - 1/tau with the damped
// frequency unchanged. Correcting the shifted pole must give back the
// original mode.
func TestCorrectExpWindowPoleShift(t *testing.T) {
	for _, zeta := range []float64{0.001, 0.02, 0.1, 0.3} {
		const fn, tau = 12.5, 0.7
		s := PoleFromModal(fn, zeta) - complex(1/tau, 0)
		wn, z := CorrectExpWindow(-real(s), imag(s), tau)
		if math.Abs(wn/(2*math.Pi*fn)-1) > 1e-13 || math.Abs(z/zeta-1) > 1e-12 {
			t.Errorf("zeta %g: corrected to fn %.12g zeta %.12g", zeta, wn/(2*math.Pi), z)
		}
		fnMeas, zetaMeas := ModalFromPole(s)
		f2, z2 := CorrectZetaExpWindow(fnMeas, zetaMeas, tau)
		if math.Abs(f2/fn-1) > 1e-12 || math.Abs(z2/zeta-1) > 1e-12 {
			t.Errorf("zeta %g: CorrectZetaExpWindow gives fn %.12g zeta %.12g", zeta, f2, z2)
		}
		// Light damping: zeta_true ~ zeta_meas - 1/(tau wn) (DESIGN.md section 5).
		if zeta <= 0.02 {
			approx := zetaMeas - 1/(tau*2*math.Pi*fnMeas)
			if math.Abs(approx-zeta) > 0.002*zeta+1e-4 {
				t.Errorf("zeta %g: light-damping form %.6f", zeta, approx)
			}
		}
	}
	// No window.
	if wn, z := CorrectExpWindow(2, 100, 0); math.Abs(wn-math.Hypot(100, 2)) > 1e-12 || math.Abs(z-2/math.Hypot(100, 2)) > 1e-15 {
		t.Errorf("tau 0 should mean no window: %g %g", wn, z)
	}
}

// TestExpWindowEnvelope: a synthetic decay from pipeline/synth (closed-form
// generator, 60 dB peak SNR) multiplied by an exponential window that ends
// at 1 % of its start, envelope-fitted, reads heavily damped; after the
// correction it gives back the true zeta within 1 %.
func TestExpWindowEnvelope(t *testing.T) {
	const fn, fs = 20.0, 1000.0
	for _, zeta := range []float64{0.002, 0.01, 0.04} {
		h := synth.Hit{SampleRate: fs, Duration: 4, Modes: []synth.Mode{{FrequencyHz: fn, DampingRatio: zeta, Amplitude: 1}}, NoiseSD: 1e-3, Seed: 3}
		x := h.Response()
		tau := TauFromEndFraction(h.Duration, 0.01)
		for i := range x {
			x[i] *= math.Exp(-float64(i) / fs / tau)
		}
		fd := DampedFromNatural(fn, zeta) // the window leaves it unchanged
		env := Hilbert(nil, x)
		zMeas, _, err := EnvelopeDamping(env, fs, fd, h.NoiseSD)
		if err != nil {
			t.Fatal(err)
		}
		// EnvelopeDamping's zeta belongs to the pole with damped
		// frequency fd, whose natural frequency is fd/sqrt(1-zeta^2).
		fnMeas := fd / math.Sqrt(1-zMeas*zMeas)
		gotFn, gotZeta := CorrectZetaExpWindow(fnMeas, zMeas, tau)
		t.Logf("zeta %.3f: windowed %.5f, corrected %.6f (fn %.4f)", zeta, zMeas, gotZeta, gotFn)
		if math.Abs(gotZeta/zeta-1) > 0.01 || math.Abs(gotFn/fn-1) > 1e-4 {
			t.Errorf("zeta %g: corrected to fn %.5f zeta %.6f", zeta, gotFn, gotZeta)
		}
		if zMeas < zeta+0.5/(tau*2*math.Pi*fn) {
			t.Errorf("zeta %g: the windowed record should read heavily damped, got %.5f", zeta, zMeas)
		}
	}
}
