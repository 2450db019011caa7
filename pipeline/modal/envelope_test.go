package modal

import (
	"errors"
	"fmt"
	"math"
	"testing"

	"github.com/ringlog/ringlog/pipeline/synth"
)

// TestHilbertMatchesScipy compares Hilbert with abs(scipy.signal.hilbert)
// (testdata/scipy/modal_refs.json): the default transform on a 512-sample
// signal and the transform with N = 1024 on a 600-sample one. Tolerance
// 1e-10 of the largest value (the references carry 12 significant digits).
func TestHilbertMatchesScipy(t *testing.T) {
	r := loadScipyModalRefs(t)
	for _, h := range r.Hilbert {
		if ceilPow2(h.N) != h.NFFT {
			t.Fatalf("reference n=%d nfft=%d: Hilbert pads to %d", h.N, h.NFFT, ceilPow2(h.N))
		}
		env := Hilbert(nil, r.X[:h.N])
		diff, scale := maxAbsDiff(env, h.Env)
		t.Logf("n=%d nfft=%d: max |Go - scipy| = %.2g of %.2g", h.N, h.NFFT, diff, scale)
		if diff > 1e-10*scale {
			t.Errorf("n=%d nfft=%d: max |Go - scipy| = %.3g (scale %.3g)", h.N, h.NFFT, diff, scale)
		}
	}
	if got := Hilbert(nil, nil); len(got) != 0 {
		t.Errorf("Hilbert of nothing has %d samples", len(got))
	}
	// A single sample is its own envelope (|x|).
	if got := Hilbert(nil, []float64{-2}); len(got) != 1 || got[0] != 2 {
		t.Errorf("Hilbert([-2]) = %v, want [2]", got)
	}
}

// TestHilbertSinusoid: the envelope of A cos(w t) over a whole number of
// cycles of a power-of-two record is A (a textbook property of the analytic
// signal, cos -> exp(i w t)).
func TestHilbertSinusoid(t *testing.T) {
	x := make([]float64, 1024)
	for i := range x {
		x[i] = 3 * math.Cos(2*math.Pi*37*float64(i)/1024+0.4)
	}
	env := Hilbert(x, x) // in place
	for i, v := range env {
		if math.Abs(v-3) > 1e-12 {
			t.Fatalf("envelope[%d] = %.15g, want 3", i, v)
		}
	}
}

// TestEnvelopeDampingSynthetic fits the Hilbert envelope of single-mode
// decays from pipeline/synth, the closed-form free response
// A exp(-zeta wn t) sin(wd t) plus white noise (independent of this
// package), without filtering.
func TestEnvelopeDampingSynthetic(t *testing.T) {
	for _, zeta := range []float64{0.005, 0.02, 0.05} {
		const fn, fs = 30.0, 1000.0
		h := synth.Hit{SampleRate: fs, Modes: []synth.Mode{{FrequencyHz: fn, DampingRatio: zeta, Amplitude: 1}}, Seed: 3}
		h.Duration = math.Min(8/(zeta*2*math.Pi*fn), 20) // about 8 time constants
		h.NoiseSD = synth.NoiseForSNR(h.Modes, 60)
		env := Hilbert(nil, h.Response())
		fd := DampedFromNatural(fn, zeta)
		z, usable, err := EnvelopeDamping(env, fs, fd, h.NoiseSD)
		if err != nil {
			t.Fatalf("zeta %g: %v", zeta, err)
		}
		// The envelope A exp(-sigma t) reaches 10 times the noise at
		// t = ln(A/(10 sd))/sigma.
		wantUsable := math.Log(1/(10*h.NoiseSD)) / (zeta * 2 * math.Pi * fn)
		t.Logf("zeta %.3f: got %.6f, usable %.3f s (envelope model %.3f s)", zeta, z, usable, wantUsable)
		if math.Abs(z/zeta-1) > 0.01 {
			t.Errorf("zeta %g: envelope gives %.6f, want within 1 %%", zeta, z)
		}
		if math.Abs(usable/wantUsable-1) > 0.05 {
			t.Errorf("zeta %g: usable span %.4f s, the envelope model crosses 10x noise at %.4f s", zeta, usable, wantUsable)
		}
		early, late := EnvelopeSplit(env, fs, fd, h.NoiseSD)
		if math.Abs(early/zeta-1) > 0.05 || math.Abs(late/zeta-1) > 0.1 {
			t.Errorf("zeta %g: split early %.5f late %.5f, a viscous decay should give the same value", zeta, early, late)
		}
	}
}

// TestEnvelopeStopsAtFirstCrossing: the fit must stop at the FIRST sample
// under 10 times the noise, not the last (DESIGN.md section 5).
func TestEnvelopeStopsAtFirstCrossing(t *testing.T) {
	const fs, fd = 1000.0, 50.0
	env := make([]float64, 2000)
	for i := range env {
		env[i] = math.Exp(-5 * float64(i) / fs)
	}
	// A burst late in the record climbs back above the threshold.
	for i := 1500; i < 1600; i++ {
		env[i] = 1
	}
	noise := 0.01 // threshold 0.1, first reached at t = ln(10)/5
	_, usable, err := EnvelopeDamping(env, fs, fd, noise)
	if err != nil {
		t.Fatal(err)
	}
	want := math.Ceil(math.Log(10)/5*fs) / fs
	if math.Abs(usable-want) > 1.5/fs {
		t.Errorf("usable span %.4f s, want the first crossing at %.4f s", usable, want)
	}
}

func TestEnvelopeErrors(t *testing.T) {
	env := make([]float64, 100)
	for i := range env {
		env[i] = math.Exp(-float64(i) / 20)
	}
	// 100 samples at 1000 Hz and 10 Hz: one cycle, less the edge.
	if _, _, err := EnvelopeDamping(env, 1000, 10, 0); !errors.Is(err, ErrFewCycles) {
		t.Errorf("one cycle: err = %v, want ErrFewCycles", err)
	}
	if _, _, err := EnvelopeDamping(env, 1000, 600, 0); err == nil {
		t.Error("frequency above Nyquist: no error")
	}
	if _, _, err := EnvelopeDamping(env, -1, 10, 0); err == nil {
		t.Error("negative sample rate: no error")
	}
	if _, _, err := EnvelopeDamping(env, 1000, 100, -1); err == nil {
		t.Error("negative noise: no error")
	}
	flat := make([]float64, 1000)
	for i := range flat {
		flat[i] = 1 + 0.001*float64(i)
	}
	if _, _, err := EnvelopeDamping(flat, 1000, 50, 0); err == nil || errors.Is(err, ErrFewCycles) {
		t.Errorf("growing envelope: err = %v, want a no-decay error", err)
	}
	if e, l := EnvelopeSplit(env, 1000, 10, 0); !math.IsNaN(e) || !math.IsNaN(l) {
		t.Errorf("split of a too-short span = %g, %g, want NaN", e, l)
	}
	if a, b := EnvelopeShape(env[:3], 1000, 0); !math.IsNaN(a) || !math.IsNaN(b) {
		t.Errorf("shape of 3 samples = %g, %g, want NaN", a, b)
	}
}

// TestEnvelopeFriction: Coulomb friction gives a linearly falling envelope
// (a textbook result: the amplitude drops by 4 F/k per cycle); synth's
// Friction option makes one. The shape test must say "linear", and the
// split fits must show damping growing as the amplitude falls. A viscous
// decay must say "exponential".
func TestEnvelopeFriction(t *testing.T) {
	const fn, fs = 20.0, 1000.0
	base := synth.Hit{SampleRate: fs, Duration: 3, Modes: []synth.Mode{{FrequencyHz: fn, DampingRatio: 0.01, Amplitude: 1}}, NoiseSD: 1e-4, Seed: 11}
	fd := DampedFromNatural(fn, 0.01)
	edge := EnvelopeEdge(fs, fd)

	fric := base
	fric.Friction = 0.5 // envelope 1 - 0.5 t, gone at 2 s
	env := Hilbert(nil, fric.Response())
	expRSS, linRSS := EnvelopeShape(env[edge:], fs, fric.NoiseSD)
	t.Logf("friction: expRSS %.3g linRSS %.3g", expRSS, linRSS)
	if !(linRSS < 0.1*expRSS) {
		t.Errorf("friction decay: linear RSS %.3g not well below exponential RSS %.3g", linRSS, expRSS)
	}
	early, late := EnvelopeSplit(env, fs, fd, fric.NoiseSD)
	t.Logf("friction: early zeta %.4f late zeta %.4f", early, late)
	if !(late > 2*early) {
		t.Errorf("friction decay: late zeta %.4f should be well above early %.4f", late, early)
	}

	env = Hilbert(nil, base.Response())
	expRSS, linRSS = EnvelopeShape(env[edge:], fs, base.NoiseSD)
	t.Logf("viscous: expRSS %.3g linRSS %.3g", expRSS, linRSS)
	if !(expRSS < 0.1*linRSS) {
		t.Errorf("viscous decay: exponential RSS %.3g not well below linear RSS %.3g", expRSS, linRSS)
	}
}

// ExampleEnvelopeDamping isolates one mode of a two-mode synthetic hit with
// a band-pass at least MinBandwidth wide, takes the Hilbert envelope of the
// band-passed record and fits the decay from the onset.
func ExampleEnvelopeDamping() {
	const fs = 2000.0
	hit := synth.Hit{
		SampleRate: fs, Duration: 2, PreTrigger: 0.1,
		Modes: []synth.Mode{
			{FrequencyHz: 48, DampingRatio: 0.02, Amplitude: 1},
			{FrequencyHz: 310, DampingRatio: 0.01, Amplitude: 0.6},
		},
		NoiseSD: 1e-4, Seed: 1,
	}
	x := hit.Response()

	fn, zetaGuess := 48.0, 0.02 // e.g. from the subspace estimate
	fd := DampedFromNatural(fn, zetaGuess)
	half := math.Max(MinBandwidth(fn, zetaGuess), 0.5*fn) / 2
	band, err := BandPass(nil, x, fs, fd-half, fd+half, 2)
	if err != nil {
		fmt.Println(err)
		return
	}
	onset := int(hit.PreTrigger * fs)
	env := Hilbert(nil, band)[onset:]
	zeta, usable, err := EnvelopeDamping(env, fs, fd, hit.NoiseSD)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("zeta = %.2f %%, %.0f cycles usable\n", 100*zeta, usable*fd)
	// Output: zeta = 2.00 %, 55 cycles usable
}

func BenchmarkHilbert16384(b *testing.B) {
	x := benchSignal(16384)
	dst := make([]float64, len(x))
	b.ReportAllocs()
	for b.Loop() {
		dst = Hilbert(dst, x)
	}
}

// BenchmarkEnvelopeDamping4096 is the per-mode cost on a decimated band
// signal of a few thousand samples: envelope and fit.
func BenchmarkEnvelopeDamping4096(b *testing.B) {
	x := benchSignal(4096)
	env := make([]float64, len(x))
	b.ReportAllocs()
	for b.Loop() {
		env = Hilbert(env, x)
		if _, _, err := EnvelopeDamping(env, 2048, 60, 1e-3); err != nil {
			b.Fatal(err)
		}
	}
}
