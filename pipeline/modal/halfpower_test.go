package modal

import (
	"errors"
	"math"
	"math/cmplx"
	"testing"

	"github.com/ringlog/ringlog/pipeline/synth"
)

// sdofFRF is the closed-form FRF magnitude of a single-degree-of-freedom
// system (unit stiffness) at frequency ratio r = f/fn: receptance
// 1/sqrt((1-r^2)^2 + (2 zeta r)^2), mobility r times it, accelerance r^2
// times it (the omega and omega^2 factors, in units of wn).
func sdofFRF(kind FRFKind, r, zeta float64) float64 {
	h := 1 / math.Sqrt((1-r*r)*(1-r*r)+4*zeta*zeta*r*r)
	switch kind {
	case Mobility:
		return r * h
	case Accelerance:
		return r * r * h
	}
	return h
}

// sdofGrid evaluates sdofFRF on n points from flo to fhi hertz.
func sdofGrid(kind FRFKind, fn, zeta, flo, fhi float64, n int) (freqs, mag []float64) {
	freqs = make([]float64, n)
	mag = make([]float64, n)
	for i := range freqs {
		freqs[i] = flo + (fhi-flo)*float64(i)/float64(n-1)
		mag[i] = sdofFRF(kind, freqs[i]/fn, zeta)
	}
	return freqs, mag
}

// peakRatio is where each |H| peaks, r = f/fn (closed form: receptance
// sqrt(1-2 zeta^2), mobility 1, accelerance 1/sqrt(1-2 zeta^2)).
func peakRatio(kind FRFKind, zeta float64) float64 {
	switch kind {
	case Mobility:
		return 1
	case Accelerance:
		return 1 / math.Sqrt(1-2*zeta*zeta)
	}
	return math.Sqrt(1 - 2*zeta*zeta)
}

// TestHalfPowerExactForms: on the analytic single-DOF FRF, evaluated on a
// fine grid, the exact half-power forms of DESIGN.md section 5 must return
// zeta and fn to 1e-6 relative for every kind from zeta 0.1 % to 20 %. The
// analytic curve is the closed form, an outside check of the forms and of
// the peak and crossing interpolation.
func TestHalfPowerExactForms(t *testing.T) {
	const fn = 100.0
	for _, kind := range []FRFKind{Receptance, Mobility, Accelerance} {
		for _, zeta := range []float64{0.001, 0.005, 0.02, 0.05, 0.1, 0.2} {
			flo := math.Max(0.01*fn, fn*(1-10*zeta))
			fhi := fn * (1 + 10*zeta)
			freqs, mag := sdofGrid(kind, fn, zeta, flo, fhi, 200001)
			gotFn, gotZeta, err := HalfPower(freqs, mag, fn*peakRatio(kind, zeta), kind)
			if err != nil {
				t.Fatalf("%v zeta %g: %v", kind, zeta, err)
			}
			if math.Abs(gotZeta/zeta-1) > 1e-6 || math.Abs(gotFn/fn-1) > 1e-6 {
				t.Errorf("%v zeta %g: got fn %.9g zeta %.9g, want %g %g to 1e-6", kind, zeta, gotFn, gotZeta, fn, zeta)
			}
		}
	}
}

// TestHalfPowerApproximationBias shows why the exact forms are used: at
// zeta = 20 % the light-damping (f2-f1)/(2 fn) on receptance and accelerance
// is off by more than 3 % (closed-form FRF, as above), while at 0.5 % it
// agrees to 0.1 %.
func TestHalfPowerApproximationBias(t *testing.T) {
	const fn = 100.0
	for _, kind := range []FRFKind{Receptance, Accelerance} {
		for _, c := range []struct {
			zeta   float64
			biased bool
		}{{0.2, true}, {0.005, false}} {
			freqs, mag := sdofGrid(kind, fn, c.zeta, math.Max(1, fn*(1-10*c.zeta)), fn*(1+10*c.zeta), 200001)
			f1, f2, _, err := HalfPowerPoints(freqs, mag, fn*peakRatio(kind, c.zeta))
			if err != nil {
				t.Fatal(err)
			}
			approx := (f2 - f1) / (2 * fn)
			rel := approx/c.zeta - 1
			t.Logf("%v zeta %.3f: (f2-f1)/(2 fn) = %.5f (%+.2f %%)", kind, c.zeta, approx, 100*rel)
			if c.biased && math.Abs(rel) < 0.03 {
				t.Errorf("%v zeta %g: the approximation is only %.2f %% off; expected > 3 %%", kind, c.zeta, 100*rel)
			}
			if !c.biased && math.Abs(rel) > 0.001 {
				t.Errorf("%v zeta %g: the approximation is %.3f %% off; expected < 0.1 %%", kind, c.zeta, 100*rel)
			}
		}
	}
}

func TestHalfPowerErrors(t *testing.T) {
	// zeta 5 %: peak at 99.75 Hz, half-power points at 94.6 and 104.6 Hz.
	freqs, mag := sdofGrid(Receptance, 100, 0.05, 97, 130, 401) // cut on the left
	if _, _, err := HalfPower(freqs, mag, 100, Receptance); !errors.Is(err, ErrNoHalfPower) {
		t.Errorf("left half-power point outside the data: err = %v", err)
	}
	freqs, mag = sdofGrid(Receptance, 100, 0.05, 80, 102, 401) // cut on the right
	if _, _, err := HalfPower(freqs, mag, 100, Receptance); !errors.Is(err, ErrNoHalfPower) {
		t.Errorf("right half-power point outside the data: err = %v", err)
	}
	if _, _, err := HalfPower(freqs, mag[:10], 100, Receptance); err == nil {
		t.Error("length mismatch: no error")
	}
	if _, _, err := HalfPower(freqs, mag, 500, Receptance); err == nil {
		t.Error("peak frequency outside the data: no error")
	}
	if _, _, err := HalfPower(freqs, mag, 100, FRFKind(7)); err == nil {
		t.Error("unknown kind: no error")
	}
}

// TestHalfPowerFloor: the resolution floor rule of DESIGN.md section 5 is
// 0.44 df / fn (no window).
func TestHalfPowerFloor(t *testing.T) {
	if got := HalfPowerFloor(0.5, 100); math.Abs(got-0.0022) > 1e-15 {
		t.Errorf("HalfPowerFloor(0.5, 100) = %g, want 0.0022", got)
	}
}

// TestFRFShiftTheorem: a response that is the force delayed by d samples
// and scaled by g has H = g exp(-2 pi i k d/N) (the DFT shift theorem), as
// long as the zero padding holds the shifted record.
func TestFRFShiftTheorem(t *testing.T) {
	const fs, g, d = 1000.0, 2.5, 3
	force := make([]float64, 1000)
	for i := 10; i < 30; i++ {
		force[i] = math.Sin(math.Pi * float64(i-10) / 20)
	}
	resp := make([]float64, len(force))
	for i := d; i < len(resp); i++ {
		resp[i] = g * force[i-d]
	}
	freqs, h, err := FRF(force, resp, fs, 3000)
	if err != nil {
		t.Fatal(err)
	}
	const nfft = 4096 // next power of two >= 3000
	if len(h) != nfft/2+1 || len(freqs) != len(h) {
		t.Fatalf("%d bins, want %d", len(h), nfft/2+1)
	}
	if df := freqs[1] - freqs[0]; math.Abs(df-fs/nfft) > 1e-12 {
		t.Errorf("bin spacing %g, want %g", df, fs/nfft)
	}
	for k := 0; k < len(h); k += 7 {
		want := complex(g, 0) * cmplx.Exp(complex(0, -2*math.Pi*float64(k*d)/nfft))
		if cmplx.Abs(h[k]-want) > 1e-9 {
			t.Fatalf("H[%d] = %v, want %v", k, h[k], want)
		}
	}
	if _, _, err := FRF(force, resp[:10], fs, 0); err == nil {
		t.Error("length mismatch: no error")
	}
	if _, _, err := FRF(force, resp, 0, 0); err == nil {
		t.Error("zero sample rate: no error")
	}
}

// TestHalfPowerOnImpactFRF: a synthetic hit from pipeline/synth (half-sine
// hammer pulse; the response a closed-form free decay, sine phase, i.e.
// the displacement impulse response whose FRF is the receptance) analysed
// with FRF (no window on the response) and HalfPower(Receptance). The pulse
// spectrum is nearly flat over the half-power band, so zeta must come back
// within 1 %. As is common practice in impact testing, the force channel is
// gated to the pulse (a rectangular force window) so that the noise of the
// long force record does not swamp the short pulse.
func TestHalfPowerOnImpactFRF(t *testing.T) {
	const fn, zeta, fs = 40.0, 0.02, 1000.0
	h := synth.Hit{SampleRate: fs, Duration: 8, PreTrigger: 0.1, PulseWidth: 0.002, PulsePeak: 100,
		Modes: []synth.Mode{{FrequencyHz: fn, DampingRatio: zeta, Amplitude: 1}}, NoiseSD: 1e-5, Seed: 2}
	force := h.Force()
	pulseEnd := int((h.PreTrigger+h.PulseWidth)*fs) + 3
	for i := range force {
		if i < int(h.PreTrigger*fs)-3 || i > pulseEnd {
			force[i] = 0
		}
	}
	freqs, H, err := FRF(force, h.Response(), fs, 8*h.Samples())
	if err != nil {
		t.Fatal(err)
	}
	mag := make([]float64, len(H))
	for i, c := range H {
		mag[i] = cmplx.Abs(c)
	}
	gotFn, gotZeta, err := HalfPower(freqs, mag, fn, Receptance)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("FRF half-power: fn %.4f Hz, zeta %.5f", gotFn, gotZeta)
	if math.Abs(gotZeta/zeta-1) > 0.01 || math.Abs(gotFn/fn-1) > 0.001 {
		t.Errorf("fn %.4f zeta %.5f, want %g %g (1 %%, 0.1 %%)", gotFn, gotZeta, fn, zeta)
	}
}

// TestHalfPowerOnDecaySpectrum: response-only half-power on Spectrum of
// single-mode free decays from pipeline/synth (closed-form generator) at
// zeta 0.5, 2 and 5 %, fully decayed, zero-padded 8 times. A decay that
// starts at zero phase (sine) has exactly the receptance shape: within
// 0.5 %. One that starts at its crest (cosine) has the mobility shape, for
// which the receptance forms read zeta low by about 3 zeta^2 and fn high
// by about 2 zeta^2 relative (from the closed-form half-power points of
// mobility, r = -/+zeta + sqrt(1 + zeta^2)): within 0.5 % + 4 zeta^2 and
// 0.2 % + 2.5 zeta^2.
func TestHalfPowerOnDecaySpectrum(t *testing.T) {
	const fn, fs = 50.0, 1000.0
	for _, zeta := range []float64{0.005, 0.02, 0.05} {
		for _, phase := range []float64{0, math.Pi / 2} {
			h := synth.Hit{SampleRate: fs, Modes: []synth.Mode{{FrequencyHz: fn, DampingRatio: zeta, Amplitude: 1, Phase: phase}}, Seed: 8}
			h.Duration = 12 / (zeta * 2 * math.Pi * fn)
			h.NoiseSD = synth.NoiseForSNR(h.Modes, 80)
			x := h.Response()
			freqs, mag := Spectrum(x, fs, 8*len(x))
			gotFn, gotZeta, err := HalfPower(freqs, mag, fn, Receptance)
			if err != nil {
				t.Fatalf("zeta %g phase %g: %v", zeta, phase, err)
			}
			rel := gotZeta/zeta - 1
			t.Logf("zeta %.3f phase %.2f: fn %.4f zeta %.6f (%+.3f %%), floor %.2g", zeta, phase, gotFn, gotZeta, 100*rel, HalfPowerFloor(freqs[1], fn))
			tol, ftol := 0.005, 0.002
			if phase != 0 {
				tol += 4 * zeta * zeta
				ftol += 2.5 * zeta * zeta
			}
			if math.Abs(rel) > tol || math.Abs(gotFn/fn-1) > ftol {
				t.Errorf("zeta %g phase %g: fn %.4f zeta %.6f, want %g within %.2f %%", zeta, phase, gotFn, gotZeta, zeta, 100*tol)
			}
		}
	}
	if f, m := Spectrum(nil, fs, 0); len(f) != 1 || m[0] != 0 {
		t.Errorf("spectrum of nothing: %v %v", f, m)
	}
}
