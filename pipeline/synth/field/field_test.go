package field

import (
	"bytes"
	"encoding/json"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
)

type filterRef struct {
	Name     string    `json:"name"`
	Order    int       `json:"order"`
	CornerHz float64   `json:"corner_hz"`
	Kind     string    `json:"kind"`
	Fs       float64   `json:"fs"`
	Freqs    []float64 `json:"freqs"`
	Re, Im   []float64
	X, Y     []float64
}

// The instrument filters against scipy.signal.butter(output='sos') with
// sosfreqz and sosfilt (testdata/field/make_refs.py, Debian's
// python3-scipy): the response on a grid and the output on a test input.
func TestFiltersAgainstScipy(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("..", "..", "..", "testdata", "field", "filter_refs.json"))
	if err != nil {
		t.Fatal(err)
	}
	var refs struct {
		Designs []filterRef `json:"designs"`
	}
	if err := json.Unmarshal(b, &refs); err != nil {
		t.Fatal(err)
	}
	if len(refs.Designs) < 5 {
		t.Fatalf("%d designs in the reference file", len(refs.Designs))
	}
	for _, d := range refs.Designs {
		var f sos
		switch d.Kind {
		case "lowpass":
			f = butterLowPass(d.Order, d.CornerHz, d.Fs)
		case "highpass":
			if d.Order != 1 {
				t.Fatalf("%s: only first-order high-pass", d.Name)
			}
			f = highPass1(d.CornerHz, d.Fs)
		}
		for i, fr := range d.Freqs {
			want := complex(d.Re[i], d.Im[i])
			got := f.response(fr, d.Fs)
			if cmplx.Abs(got-want) > 1e-9*math.Max(cmplx.Abs(want), 1e-6) && cmplx.Abs(got-want) > 1e-12 {
				t.Errorf("%s: H(%g Hz) = %v, scipy %v", d.Name, fr, got, want)
			}
		}
		y := append([]float64(nil), d.X...)
		f.apply(y, false)
		for i := range y {
			if math.Abs(y[i]-d.Y[i]) > 1e-9*(1+math.Abs(d.Y[i])) {
				t.Errorf("%s: sosfilt sample %d = %.12g, scipy %.12g", d.Name, i, y[i], d.Y[i])
				break
			}
		}
	}
}

// A constant input through a filter started in its steady state stays
// where the DC gain puts it (1 for the low-pass, 0 for the high-pass).
func TestFilterSteadyStart(t *testing.T) {
	for _, c := range []struct {
		f    sos
		gain float64
	}{{butterLowPass(6, 2048, 40960), 1}, {butterLowPass(5, 300, 8000), 1}, {highPass1(0.5, 40960), 0}} {
		x := make([]float64, 200)
		for i := range x {
			x[i] = 3.5
		}
		c.f.apply(x, true)
		for i, v := range x {
			if math.Abs(v-3.5*c.gain) > 1e-9 {
				t.Fatalf("sample %d = %g, want %g", i, v, 3.5*c.gain)
			}
		}
	}
}

// Runge-Kutta integration of a linear oscillator against the textbook
// free response of a viscously damped single-degree-of-freedom system
// (Thomson, Theory of Vibration with Applications, section 2.6):
// q(t) = exp(-zeta w t) (q0 cos wd t + (v0 + zeta w q0)/wd sin wd t).
func TestRK4LinearOscillator(t *testing.T) {
	w, z := 2*math.Pi*100, 0.02
	o := &oscillator{w: w, c: 2 * z * w, force: func(float64) float64 { return 0 }, q: 0.3, v: 50}
	h := 1 / (8 * 2560.0)
	wd := w * math.Sqrt(1-z*z)
	var worst float64
	for i := 0; i < 8*2560; i++ {
		tt := float64(i) * h
		want := math.Exp(-z*w*tt) * (0.3*math.Cos(wd*tt) + (50+z*w*0.3)/wd*math.Sin(wd*tt))
		worst = math.Max(worst, math.Abs(o.q-want))
		o.step(tt, h)
	}
	if worst > 1e-6 {
		t.Errorf("largest deviation from the closed form %g (initial amplitude about 0.1)", worst)
	}
}

// peaks returns the positive peaks of q over time.
func freeDecayPeaks(m Mode, cycles int) []float64 {
	hm := Hammer{PeakN: 100, ContactS: 1e-5}
	o := newModeOscillator(m, hm)
	o.v = o.g * hm.Impulse() // the impulse, without integrating the pulse
	fso := 400 * m.FrequencyHz
	h := 1 / fso
	var peaks []float64
	prev, prev2 := 0.0, 0.0
	for i := 0; i < cycles*400; i++ {
		a := math.Abs(o.accel(o.q, o.v, 1))
		if i > 1 && prev > prev2 && prev >= a {
			peaks = append(peaks, prev)
		}
		prev2, prev = prev, a
		o.step(1, h)
	}
	return peaks
}

// Coulomb friction: the amplitude falls by the same amount every half
// cycle, 2 mu / w^2 (Den Hartog, Mechanical Vibrations, the decay under
// dry friction is a straight line). Mode.FrictionPerCycle is that fall per
// cycle as a share of the nominal amplitude.
func TestFrictionLinearDecay(t *testing.T) {
	m := Mode{FrequencyHz: 50, Amplitude: 10, FrictionPerCycle: 0.05}
	p := freeDecayPeaks(m, 12)
	if len(p) < 20 {
		t.Fatalf("%d peaks", len(p))
	}
	// |accel| peaks come every half cycle; the fall per half cycle in
	// acceleration units is FrictionPerCycle * Amplitude / 2.
	want := 0.05 * 10 / 2
	for i := 2; i < 16; i++ {
		if d := p[i] - p[i+1]; math.Abs(d-want) > 0.03*want {
			t.Errorf("half cycle %d: amplitude fell by %.4f, Coulomb friction gives %.4f", i, d, want)
		}
	}
}

// Cubic damping: the decay rate at amplitude A is that of the equivalent
// viscous ratio zeta + 3 c3 w a^2 / 8 (first-order averaging). Measured as
// the log decrement between peaks a few cycles apart.
func TestCubicDampingEquivalentRatio(t *testing.T) {
	m := Mode{FrequencyHz: 40, DampingRatio: 0.002, Amplitude: 5, CubicZeta: 0.01}
	p := freeDecayPeaks(m, 80)
	for _, i := range []int{4, 40, 100} {
		a := math.Sqrt(p[i] * p[i+8]) // amplitude in the middle of the span
		delta := math.Log(p[i]/p[i+8]) / 4
		got := delta / (2 * math.Pi)
		want := m.EquivalentZeta(a)
		if math.Abs(got-want) > 0.03*want {
			t.Errorf("peak %d at amplitude %.3f: damping %.5f from the decay, averaging gives %.5f", i, a, got, want)
		}
	}
}

// The 1/f noise: Welch-style averaged periodograms (1024-point segments,
// no overlap, rectangular window) of the generated sensor noise against
// the density asked for, N0^2 (1 + fc/f), within 10 % averaged over a
// dozen bins at a low and a high frequency. 64 segments give a relative
// standard error of about 1/sqrt(64*12) = 3.6 %.
func TestSensorNoiseSpectrum(t *testing.T) {
	const fs, n0, fc, seg = 1024.0, 0.01, 50.0, 1024
	x := sensorNoise(rand.New(rand.NewPCG(3, 4)), 64*seg, fs, n0, fc)
	ft := fourier.NewFFT(seg)
	psd := make([]float64, seg/2+1)
	for s := 0; s < 64; s++ {
		c := ft.Coefficients(nil, x[s*seg:(s+1)*seg])
		for k := range c {
			psd[k] += 2 * real(c[k]*cmplx.Conj(c[k])) / (fs * seg) / 64
		}
	}
	for _, band := range [][2]int{{4, 16}, {300, 312}} {
		var got, want float64
		for k := band[0]; k < band[1]; k++ {
			f := float64(k) * fs / seg
			got += psd[k]
			want += n0 * n0 * (1 + fc/f)
		}
		if r := got / want; math.Abs(r-1) > 0.1 {
			t.Errorf("bins %v: measured density %.3g, asked %.3g (ratio %.3f)", band, got/12, want/12, r)
		}
	}
}

// The ADC: a 16-bit converter with full scale 1 has a step of 2^-15;
// values beyond the range stick at the end codes.
func TestADC(t *testing.T) {
	x := []float64{0.5, 1.7, -3, 1e-6, 0.0000400}
	step := adc(x, 16, 1)
	if step != 1.0/32768 {
		t.Fatalf("step %g", step)
	}
	want := []float64{0.5, 32767.0 / 32768, -1, 0, 1.0 / 32768}
	for i := range x {
		if x[i] != want[i] {
			t.Errorf("sample %d = %.9g, want %.9g", i, x[i], want[i])
		}
	}
}

// The truth of a linear mode (amplitude and phase at the onset, through
// the filters) describes the recorded free decay: a noiseless one-mode
// record against Amplitude exp(-sigma t) cos(wd t + Phase) once the
// anti-alias filter's own transient (a few ms) has died away. The
// truth is computed from the integrated state at the end of the contact
// and the filters' transfer function at the mode's complex frequency; the
// record from the whole chain. Both agreeing checks the chain's filtering
// and decimation as well.
func TestTruthMatchesRecordedDecay(t *testing.T) {
	for _, c := range []struct{ fs, f, zeta float64 }{
		{5120, 410, 0.008}, // 0.2 of the anti-alias corner
		{2560, 410, 0.008}, // 0.4 of it, as in the corpus
		{2560, 800, 0.005}, // 0.78 of it, as the plate's upper modes
		{256, 41, 0.01},    // a slow record
	} {
		s := Spec{SampleRate: c.fs, Duration: 0.6, PreTrigger: 0.05, Seed: 1,
			Modes:  []Mode{{FrequencyHz: c.f, DampingRatio: c.zeta, Amplitude: 20}},
			Hammer: Hammer{PeakN: 200, ContactS: 0.001}, Sensor: Sensor{HighpassHz: 0.5}}
		if c.fs < 1000 {
			s.Duration, s.Hammer.ContactS = 6, 0.01
		}
		rec, err := Generate(s)
		if err != nil {
			t.Fatal(err)
		}
		tr := rec.Modes[0]
		y := rec.Response().Samples
		w := 2 * math.Pi * tr.FrequencyHz
		sigma, wd := tr.DampingRatio*w, w*math.Sqrt(1-tr.DampingRatio*tr.DampingRatio)
		var worst float64
		// skip the anti-alias filter's own transient: 30 samples (its
		// slowest pole, 0.26 of the corner's angular frequency, has decayed
		// by e^-20 then)
		for i := int((tr.OnsetS+0.01)*s.SampleRate) + 30; i < len(y); i++ {
			tt := float64(i)/s.SampleRate - tr.OnsetS
			want := tr.Amplitude * math.Exp(-sigma*tt) * math.Cos(wd*tt+tr.Phase)
			worst = math.Max(worst, math.Abs(y[i]-want))
		}
		// 2e-4 of the amplitude: a damping ratio off by 0.05 % of itself
		// would already show (the deviation peaks near A t d(sigma) at
		// t = 1/sigma, A d(zeta)/(zeta e)). What remains is the
		// Runge-Kutta phase error, a relative frequency error of about
		// (w h)^4/120: 2e-6 for 800 Hz at 16 x 2560 Hz.
		if worst > 2e-4*tr.Amplitude {
			t.Errorf("%+v: largest deviation %g of a decay starting at %g", c, worst, tr.Amplitude)
		}
		// an ideal impulse would give 20; a half-sine pulse a little less
		if tr.Amplitude > 20 || tr.Amplitude < 10 {
			t.Errorf("%+v: amplitude at onset %g", c, tr.Amplitude)
		}
	}
}

func TestDeterministic(t *testing.T) {
	s := Spec{SampleRate: 2000, Duration: 0.5, PreTrigger: 0.05, Seed: 9,
		Modes:  []Mode{{FrequencyHz: 120, DampingRatio: 0.01, Amplitude: 2}},
		Hammer: Hammer{PeakN: 100, ContactS: 0.001}, Sensor: Sensor{NoiseDensity: 1e-3, PinkCornerHz: 20},
		Hum: Hum{FrequencyHz: 50, Amplitudes: []float64{0.01}}, ADC: ADC{Bits: 16, FullScale: 10}}
	a, err := Generate(s)
	if err != nil {
		t.Fatal(err)
	}
	b, _ := Generate(s)
	s.Seed++
	c, _ := Generate(s)
	same, diff := true, false
	for i, v := range a.Response().Samples {
		same = same && v == b.Response().Samples[i]
		diff = diff || v != c.Response().Samples[i]
	}
	if !same || !diff {
		t.Errorf("same seed same record: %v; other seed other record: %v", same, diff)
	}
}

func TestSpecErrors(t *testing.T) {
	good := Spec{SampleRate: 2000, Duration: 0.5, Hammer: Hammer{PeakN: 1, ContactS: 0.001}}
	if _, err := Generate(good); err != nil {
		t.Fatal(err)
	}
	for name, mod := range map[string]func(*Spec){
		"rate":     func(s *Spec) { s.SampleRate = 0 },
		"duration": func(s *Spec) { s.Duration = math.Inf(1) },
		"pre":      func(s *Spec) { s.PreTrigger = 1 },
		"hammer":   func(s *Spec) { s.Hammer.ContactS = 0 },
		"adc":      func(s *Spec) { s.ADC.Bits = 16 },
		"mode":     func(s *Spec) { s.Modes = []Mode{{FrequencyHz: 5000, DampingRatio: 0.01}} },
		"zeta":     func(s *Spec) { s.Modes = []Mode{{FrequencyHz: 50, DampingRatio: 1.5}} },
		"noise":    func(s *Spec) { s.Sensor.NoiseDensity = -1 },
	} {
		s := good
		mod(&s)
		if _, err := Generate(s); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
}

// Every committed file of testdata/field is exactly what the generator
// makes for its case today (README.md there says how each was made);
// `go run ./testdata/field/gen.go` rewrites them after a change.
func TestCorpusFilesUpToDate(t *testing.T) {
	cs := Corpus()
	if len(cs) < 20 {
		t.Fatalf("%d cases", len(cs))
	}
	names := map[string]bool{}
	for _, c := range cs {
		if names[c.Name] {
			t.Errorf("case %q twice", c.Name)
		}
		names[c.Name] = true
		if c.Clean == (c.Want != "") {
			t.Errorf("%s: a case is clean or wants a reason code, not both or neither", c.Name)
		}
		rec, err := Generate(c.Spec)
		if err != nil {
			t.Fatalf("%s: %v", c.Name, err)
		}
		b, err := Encode(rec)
		if err != nil {
			t.Fatal(err)
		}
		old, err := os.ReadFile(filepath.Join("..", "..", "..", "testdata", "field", c.File()))
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(b, old) {
			t.Errorf("%s differs from what the generator makes: run go run ./testdata/field/gen.go and commit", c.File())
		}
	}
}

// The chain's natural frequencies against the closed form for a
// fixed-free chain of n equal masses and springs,
// w_r = 2 sqrt(k/m) sin((2r - 1) pi / (2 (2n + 1))), r = 1..n (e.g.
// Meirovitch, Elements of Vibration Analysis, lumped systems; from
// memory), and the driving-point amplitudes all positive.
func TestChainModes(t *testing.T) {
	c := Chain{Masses: 6, MassKg: 2, Stiffness: 3e5, Drive: 5, Response: 5}
	ms, err := ChainModes(c, 0.1, 0.01)
	if err != nil {
		t.Fatal(err)
	}
	if len(ms) != 6 {
		t.Fatalf("%d modes", len(ms))
	}
	for r, m := range ms {
		w := 2 * math.Sqrt(c.Stiffness/c.MassKg) * math.Sin(float64(2*r+1)*math.Pi/float64(2*(2*c.Masses+1)))
		if want := w / (2 * math.Pi); math.Abs(m.FrequencyHz-want) > 1e-9*want {
			t.Errorf("mode %d: %.9g Hz, closed form %.9g", r+1, m.FrequencyHz, want)
		}
		if !(m.Amplitude > 0) {
			t.Errorf("mode %d: driving-point amplitude %g", r+1, m.Amplitude)
		}
	}
	if _, err := ChainModes(Chain{Masses: 3, MassKg: 1, Stiffness: 1, Drive: 3}, 1, 0.01); err == nil {
		t.Error("a drive point off the chain was accepted")
	}
}
