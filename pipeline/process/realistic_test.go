package process_test

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/check"
	"github.com/ringlog/ringlog/pipeline/process"
)

// Recordings with what sensors and recorders do to a decay (DESIGN.md
// section 9). The structure is a sum of textbook damped sines started by a
// half-sine hammer pulse (closed form, as pipeline/synth, written out here
// so that each effect can be applied the way the instrument applies it):
// coloured (1/f) noise, mains hum with harmonics, drift, a first-order
// AC-coupling high-pass (a recursive filter run on the signal, not a model
// term), an exponential window, ADC quantisation, anti-alias ringing on the
// force pulse, a rattle inside the decay. The truth is the generator's
// parameters. Each effect has a clean variant that must pass unflagged and,
// where the effect spoils a hit, one that must be flagged.

type rmode struct{ f, zeta, amp, phase float64 }

type rhit struct {
	fs, dur, pre float64
	modes        []rmode
	white        float64 // white noise sd
	pink         float64 // 1/f noise scale (Kellet's filter on unit white noise)
	hum          float64 // 50 Hz amplitude; harmonics 2..5 at hum/k
	drift        float64 // quadratic drift reaching this at the record end
	highpassHz   float64 // first-order AC coupling corner (applied as a filter)
	windowTau    float64 // exponential window time constant (applied to the record)
	step         float64 // ADC step (quantisation)
	forceRing    float64 // anti-alias ringing on the force: lobe amplitude as a fraction of the pulse
	secondStrike float64 // > 0: a second hammer pulse this long after the first (s)
	rattleAt     float64 // > 0: a rattle burst at this time after the hit (s)
	rattleAmp    float64
	seed         uint64
}

// pink returns n samples of 1/f noise by Paul Kellet's refined filter of
// white noise (coefficients from memory; the spectrum falls 3 dB per
// octave within about 1 % over most of the band).
func pinkNoise(r *rand.Rand, n int) []float64 {
	out := make([]float64, n)
	var b0, b1, b2, b3, b4, b5, b6 float64
	for i := range out {
		w := r.NormFloat64()
		b0 = 0.99886*b0 + w*0.0555179
		b1 = 0.99332*b1 + w*0.0750759
		b2 = 0.96900*b2 + w*0.1538520
		b3 = 0.86650*b3 + w*0.3104856
		b4 = 0.55000*b4 + w*0.5329522
		b5 = -0.7616*b5 - w*0.0168980
		out[i] = b0 + b1 + b2 + b3 + b4 + b5 + b6 + w*0.5362
		b6 = w * 0.115926
	}
	return out
}

func (h rhit) recording(t testing.TB) *pipeline.Recording {
	t.Helper()
	n := int(h.dur * h.fs)
	r := rand.New(rand.NewPCG(h.seed, 77))
	x := make([]float64, n)
	f := make([]float64, n)
	width := 0.001
	pulse := func(t0, peak float64) {
		for i := range f {
			tt := float64(i)/h.fs - t0
			if tt >= 0 && tt <= width {
				f[i] += peak * math.Sin(math.Pi*tt/width)
			}
		}
		if h.forceRing > 0 {
			// anti-alias filter ringing after a short pulse: a damped
			// oscillation at 0.4 fs, alternating lobes
			i0 := int((t0 + width) * h.fs)
			for i := i0; i < min(n, i0+60); i++ {
				k := float64(i - i0)
				f[i] += -h.forceRing * peak * math.Exp(-k/12) * math.Cos(2*math.Pi*0.4*k)
			}
		}
	}
	decay := func(t0, scale float64) {
		for _, m := range h.modes {
			wn := 2 * math.Pi * m.f
			wd := wn * math.Sqrt(1-m.zeta*m.zeta)
			for i := range x {
				tt := float64(i)/h.fs - t0
				if tt >= 0 {
					x[i] += scale * m.amp * math.Exp(-m.zeta*wn*tt) * math.Sin(wd*tt+m.phase)
				}
			}
		}
	}
	pulse(h.pre, 100)
	decay(h.pre, 1)
	if h.secondStrike > 0 {
		pulse(h.pre+h.secondStrike, 40)
		decay(h.pre+h.secondStrike, 0.4)
	}
	if h.rattleAt > 0 {
		// a rattle: a short burst of a 1.7 kHz rattle tone (or the highest
		// the rate allows) with a fast envelope, 15 ms
		fr := math.Min(1700, 0.3*h.fs)
		t0 := h.pre + h.rattleAt
		for i := range x {
			tt := float64(i)/h.fs - t0
			if tt >= 0 && tt < 0.015 {
				x[i] += h.rattleAmp * math.Sin(math.Pi*tt/0.015) * math.Sin(2*math.Pi*fr*tt)
			}
		}
	}
	var pk []float64
	if h.pink > 0 {
		pk = pinkNoise(r, n)
	}
	for i := range x {
		tt := float64(i) / h.fs
		x[i] += h.white * r.NormFloat64()
		if pk != nil {
			x[i] += h.pink * pk[i]
		}
		if h.hum > 0 {
			for k := 1; k <= 5; k++ {
				x[i] += h.hum / float64(k) * math.Sin(2*math.Pi*50*float64(k)*tt+0.7*float64(k))
			}
		}
		if h.drift != 0 {
			u := tt / h.dur
			x[i] += h.drift * (0.3*u + 0.7*u*u)
		}
		f[i] += 0.05 * r.NormFloat64()
	}
	if h.highpassHz > 0 {
		// first-order RC high-pass, discretised by the bilinear transform
		k := math.Tan(math.Pi * h.highpassHz / h.fs)
		b0 := 1 / (1 + k)
		a1 := (1 - k) / (1 + k)
		var xp, yp float64
		for i, v := range x {
			y := b0*(v-xp) + a1*yp
			xp, yp = v, y
			x[i] = y
		}
	}
	if h.windowTau > 0 {
		for i := range x {
			x[i] *= math.Exp(-float64(i) / (h.fs * h.windowTau))
		}
	}
	if h.step > 0 {
		for i := range x {
			x[i] = h.step * math.Round(x[i]/h.step)
		}
	}
	return &pipeline.Recording{Path: "realistic.csv", Format: "csv", Channels: []pipeline.Channel{
		{Name: "force", Unit: "N", Role: pipeline.RoleForce, SampleRate: h.fs, Samples: f},
		{Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: h.fs, Samples: x},
	}}
}

func analyse(t *testing.T, h rhit, opt process.Options) *pipeline.Result {
	t.Helper()
	res, err := process.Recording(context.Background(), h.recording(t), opt)
	if err != nil {
		t.Fatal(err)
	}
	return res
}

// wantClean asserts an accepted hit with every true mode found, its damping
// ratio inside the reported 95 % interval (with widen > 1, that interval's
// half-width times widen: with a dozen modes one of them misses its 95 %
// interval in about half the hits), and no mode that is not a true one.
func wantClean(t *testing.T, res *pipeline.Result, h rhit, widen float64) {
	t.Helper()
	if res.Verdict != pipeline.Accepted {
		t.Errorf("verdict %s on a clean hit, reasons %+v", res.Verdict, res.Reasons)
	}
	wantModes(t, res, h, widen)
}

func wantModes(t *testing.T, res *pipeline.Result, h rhit, widen float64) {
	t.Helper()
	for _, m := range h.modes {
		found := false
		for _, g := range res.Modes {
			if math.Abs(g.FrequencyHz-m.f) < 0.01*m.f {
				found = true
				hw := max(widen, 1) * (g.DampingRatioCI[1] - g.DampingRatioCI[0]) / 2
				lo, hi := g.DampingRatio-hw, g.DampingRatio+hw
				if m.zeta < lo || m.zeta > hi {
					t.Errorf("mode %.4g Hz: zeta %.6g, interval %.6g..%.6g misses the true %.6g", m.f, g.DampingRatio, g.DampingRatioCI[0], g.DampingRatioCI[1], m.zeta)
				}
			}
		}
		if !found {
			t.Errorf("mode %.4g Hz not found; modes %v", m.f, freqs(res))
		}
	}
	for _, g := range res.Modes {
		ok := false
		for _, m := range h.modes {
			if math.Abs(g.FrequencyHz-m.f) < 0.01*m.f {
				ok = true
			}
		}
		if !ok && !g.Dropped {
			t.Errorf("phantom mode at %.4g Hz (zeta %.4f, snr %.1f dB)", g.FrequencyHz, g.DampingRatio, g.DecaySNRdB)
		}
	}
}

func freqs(res *pipeline.Result) []float64 {
	var f []float64
	for _, m := range res.Modes {
		f = append(f, m.FrequencyHz)
	}
	return f
}

func hasCode(res *pipeline.Result, code string) bool {
	for _, r := range res.Reasons {
		if r.Code == code {
			return true
		}
	}
	return false
}

func twoModes() []rmode {
	return []rmode{{85, 0.015, 2, 0.3}, {320, 0.01, 1, 1.1}}
}

// 1/f noise stronger than the white floor below a few hundred hertz, with a
// pre-trigger: no noise peak becomes a mode, none raises a flag.
func TestRealisticColouredNoise(t *testing.T) {
	for seed := uint64(1); seed <= 3; seed++ {
		h := rhit{fs: 5120, dur: 3, pre: 0.3, modes: twoModes(), white: 2e-4, pink: 4e-3, seed: seed}
		res := analyse(t, h, process.Defaults())
		wantClean(t, res, h, 0)
	}
}

// Mains hum at 50 Hz and harmonics beside a mode at 153 Hz (1 Hz from the
// third harmonic's 150 Hz... 3 Hz): the lines are not modes and do not
// spoil the mode.
func TestRealisticHum(t *testing.T) {
	h := rhit{fs: 5120, dur: 3, pre: 0.2, modes: []rmode{{153, 0.01, 2, 0.2}, {420, 0.012, 1, 0.9}},
		white: 1e-3, hum: 0.02, seed: 4}
	res := analyse(t, h, process.Defaults())
	wantClean(t, res, h, 0)
}

var _ = check.CodeClipped

// A slow drift of 4 % of the peak over the record (thermal drift, an
// amplifier settling) moves no mode's damping outside its interval.
func TestRealisticDrift(t *testing.T) {
	h := rhit{fs: 2048, dur: 4, pre: 0.2, modes: []rmode{{12, 0.01, 2, 0.3}, {47, 0.008, 1, 1.1}},
		white: 2e-3, drift: 0.12, seed: 5}
	res := analyse(t, h, process.Defaults())
	wantClean(t, res, h, 0)
}

// fmin_hz = 0 means 0: a 0.5 Hz mode in a 60 s record is found, and no
// phantom mode appears below it.
func TestRealisticHalfHertzMode(t *testing.T) {
	h := rhit{fs: 100, dur: 60, pre: 1, modes: []rmode{{0.5, 0.01, 2, 0.3}, {3.1, 0.01, 1, 1.1}},
		white: 2e-3, seed: 6}
	res := analyse(t, h, process.Defaults())
	wantClean(t, res, h, 0)
}

// The AC coupling of the sensor (a first-order high-pass at 0.5 Hz, run on
// the signal as the amplifier does) beside a 2 Hz mode: with its corner in
// the configuration (highpass_hz) the mode is not biased.
func TestRealisticACCoupling(t *testing.T) {
	h := rhit{fs: 200, dur: 30, pre: 1, modes: []rmode{{2, 0.02, 2, 0.3}, {11, 0.01, 1, 1.1}},
		white: 1e-3, highpassHz: 0.5, seed: 7}
	opt := process.Defaults()
	opt.HighpassHz = map[string]float64{"accel": 0.5}
	res := analyse(t, h, opt)
	wantClean(t, res, h, 0)
}

// An exponential window (tau given): the noise reported is the unwindowed
// one, the estimates are corrected, and the clean windowed hit gets no
// flag.
func TestRealisticExpWindow(t *testing.T) {
	h := rhit{fs: 5120, dur: 3, pre: 0.1, modes: twoModes(), white: 1e-3, windowTau: 0.6, seed: 8}
	opt := process.Defaults()
	opt.WindowTauS = 0.6
	res := analyse(t, h, opt)
	wantClean(t, res, h, 0)
	if math.Abs(res.NoiseRMS-h.white) > 0.15*h.white {
		t.Errorf("noise %.3g, the unwindowed noise is %.3g", res.NoiseRMS, h.white)
	}
}

// A 16-bit converter with a small signal: the noise is below one step, so
// the samples sit on a few levels. The noise floor is step/sqrt(12) and
// the interval covers the truth.
func TestRealisticQuantised(t *testing.T) {
	step := 10.0 / 32768 // +/- 10 full scale, 16 bits
	h := rhit{fs: 5120, dur: 3, pre: 0.2, modes: []rmode{{85, 0.015, 0.05, 0.3}, {320, 0.01, 0.03, 1.1}},
		white: 2e-5, step: step, seed: 9}
	res := analyse(t, h, process.Defaults())
	wantModes(t, res, h, 0)
	if res.NoiseRMS < 0.99*step/math.Sqrt(12) {
		t.Errorf("noise %.3g below the quantisation floor %.3g", res.NoiseRMS, step/math.Sqrt(12))
	}
}

// A rattle 0.6 s into the decay (15 ms burst at 1.7 kHz) is flagged with
// its time; the same hit without it is clean.
func TestRealisticRattle(t *testing.T) {
	h := rhit{fs: 5120, dur: 3, pre: 0.2, modes: twoModes(), white: 1e-3, seed: 10}
	wantClean(t, analyse(t, h, process.Defaults()), h, 0)
	h.rattleAt, h.rattleAmp = 0.6, 0.05
	res := analyse(t, h, process.Defaults())
	found := false
	for _, r := range res.Reasons {
		if r.Code == check.CodeTransient {
			found = true
			var at float64
			if _, err := fmt.Sscanf(r.Message, "a burst at %f s", &at); err != nil || math.Abs(at-0.8) > 0.01 {
				t.Errorf("transient reason does not give the time 0.80 s (0.2 s pre-trigger + 0.6 s): %s", r.Message)
			}
		}
	}
	if !found {
		t.Errorf("rattle not flagged: %+v", res.Reasons)
	}
	wantModes(t, res, h, 0)
}

// A plate with a dozen modes in band: every mode, the weakest 36 dB above
// the noise, is reported; with max_modes below their number the result
// says that modes were left out.
func TestRealisticManyModes(t *testing.T) {
	var ms []rmode
	for i := 0; i < 12; i++ {
		f := 40 * math.Pow(1.25, float64(i))
		ms = append(ms, rmode{f, 0.004 + 0.001*float64(i%3), 1 / (1 + 0.3*float64(i)), 0.5 * float64(i)})
	}
	ms[7].amp = 0.063 // 36 dB above the white noise of 1e-3
	h := rhit{fs: 25600, dur: 2, pre: 0.1, modes: ms, white: 1e-3, seed: 11}
	res := analyse(t, h, process.Defaults())
	wantClean(t, res, h, 1.7) // 3.3 standard errors
	opt := process.Defaults()
	opt.Modal.MaxModes = 8
	res = analyse(t, h, opt)
	if !hasCode(res, check.CodeModeLimit) {
		t.Errorf("12 modes with max_modes 8 and no mode_limit reason: %+v", res.Reasons)
	}
}

// Anti-alias filter ringing after a short force pulse (alternating lobes
// up to 30 % of the pulse, the negative one first) is not a second strike;
// a second positive pulse 30 ms later, after the force was back at rest,
// is.
func TestRealisticForceRinging(t *testing.T) {
	h := rhit{fs: 25600, dur: 1.5, pre: 0.05, modes: []rmode{{210, 0.01, 2, 0.3}, {640, 0.012, 1, 1.1}},
		white: 1e-3, forceRing: 0.3, seed: 12}
	wantClean(t, analyse(t, h, process.Defaults()), h, 0)
	h.secondStrike = 0.03
	res := analyse(t, h, process.Defaults())
	if !hasCode(res, check.CodeDoubleStrike) {
		t.Errorf("second strike not found: %+v", res.Reasons)
	}
}
