// Check values in this file: the decays come from
// pipeline/synth/oscillator (Runge-Kutta integration of one mode with
// cubic, quadratic or Coulomb damping, independent of the estimators) and
// pipeline/synth (closed-form viscous decays); the damping laws and their
// equivalent viscous damping are the textbook ones cited in
// pipeline/modal/amplitude_test.go. The limits are the default thresholds.

package check

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/modal"
	"github.com/ringlog/ringlog/pipeline/synth"
	"github.com/ringlog/ringlog/pipeline/synth/oscillator"
)

// analysed runs the estimators and every rule on a response channel.
func analysed(t *testing.T, x []float64, fs float64, force []float64) (*modal.Decay, []pipeline.Reason) {
	t.Helper()
	rec := &pipeline.Recording{Path: "oscillator.csv", Format: "csv", Meta: map[string]string{}}
	rec.Channels = append(rec.Channels, pipeline.Channel{Name: "disp", Unit: "mm", Role: pipeline.RoleResponse, SampleRate: fs, Samples: x})
	if force != nil {
		rec.Channels = append(rec.Channels, pipeline.Channel{Name: "force", Unit: "N", Role: pipeline.RoleForce, SampleRate: fs, Samples: force})
	}
	d, err := modal.Analyze(x, fs, force, modal.Options{})
	if err != nil {
		t.Fatal(err)
	}
	in := Input{Rec: rec, Response: &rec.Channels[0], Decay: d}
	if force != nil {
		in.Force = &rec.Channels[1]
	}
	return d, Run(in, DefaultThresholds())
}

func codeCount(rs []pipeline.Reason) map[string]int {
	c := map[string]int{}
	for _, r := range rs {
		c[r.Code]++
	}
	return c
}

func TestCubicDampingIsAmplitudeDependentNotBeating(t *testing.T) {
	wn := 2 * math.Pi * 25
	o := oscillator.Oscillator{Mass: 1, Stiffness: wn * wn, Viscous: 2 * 0.002 * wn, Cubic: 0.04 * 8 / (3 * wn)}
	x := o.Displacement(oscillator.Record{SampleRate: 2000, Duration: 4, PreTrigger: 0.1, Velocity: wn, NoiseSD: 1e-3, Seed: 11})
	d, rs := analysed(t, x, 2000, nil)
	c := codeCount(rs)
	if len(d.Modes) != 1 || c[CodeBeatingModes] > 0 || c[CodeFrictionDecay] > 0 || c[CodeAmplitudeDamping] != 1 {
		t.Fatalf("%d modes, reasons %v: want one mode flagged %s only", len(d.Modes), rs, CodeAmplitudeDamping)
	}
	for _, r := range rs {
		if r.Code == CodeAmplitudeDamping {
			wantIn(t, r.Message, "grows with the amplitude", "mm", "limit 30 %")
		}
	}
}

func TestQuadraticDampingIsAmplitudeDependent(t *testing.T) {
	wn := 2 * math.Pi * 40
	o := oscillator.Oscillator{Mass: 1, Stiffness: wn * wn, Viscous: 2 * 0.002 * wn, Quadratic: 0.02 * 3 * math.Pi / 4}
	x := o.Displacement(oscillator.Record{SampleRate: 2000, Duration: 4, PreTrigger: 0.1, Velocity: wn, NoiseSD: 1e-3, Seed: 12})
	d, rs := analysed(t, x, 2000, nil)
	if c := codeCount(rs); len(d.Modes) != 1 || c[CodeAmplitudeDamping] != 1 || c[CodeBeatingModes] > 0 {
		t.Fatalf("%d modes, reasons %v", len(d.Modes), rs)
	}
}

func TestFrictionIsFrictionNotSplit(t *testing.T) {
	wn := 2 * math.Pi * 25
	k := wn * wn
	for _, seed := range []uint64{13, 14, 15} {
		o := oscillator.Oscillator{Mass: 1, Stiffness: k, Viscous: 2 * 0.0005 * wn, Friction: k / 120}
		x := o.Displacement(oscillator.Record{SampleRate: 2000, Duration: 4, PreTrigger: 0.1, Velocity: wn, NoiseSD: 1e-3, Seed: seed})
		d, rs := analysed(t, x, 2000, nil)
		c := codeCount(rs)
		if len(d.Modes) != 1 || c[CodeFrictionDecay] != 1 || c[CodeBeatingModes] > 0 || c[CodeAmplitudeDamping] > 0 {
			t.Errorf("seed %d: %d modes, reasons %v: want one mode flagged %s only", seed, len(d.Modes), rs, CodeFrictionDecay)
		}
	}
}

// realisticNoise is white noise plus low-frequency noise rising towards
// 0 Hz (three first-order low-passed white noises at 0.5, 5 and 50 Hz, a
// common way to approximate 1/f noise over a few decades), a 50 Hz mains
// line and a slow baseline drift of 1 % of peak over the record.
func realisticNoise(n int, fs, sd, peak float64, seed uint64) []float64 {
	r := rand.New(rand.NewPCG(seed, 0xc0105))
	out := make([]float64, n)
	var s [3]float64
	corners := [3]float64{0.5, 5, 50}
	for i := range out {
		v := sd * r.NormFloat64()
		for k, fc := range corners {
			a := math.Exp(-2 * math.Pi * fc / fs)
			// scaled so that each term carries about the white noise's variance
			s[k] = a*s[k] + math.Sqrt(1-a*a)*sd*r.NormFloat64()
			v += s[k]
		}
		tt := float64(i) / fs
		v += 0.5*sd*math.Sin(2*math.Pi*50*tt+0.7) + 0.01*peak*tt/(float64(n)/fs)
		out[i] = v
	}
	return out
}

// Viscous decays in realistic noise keep one damping ratio at every
// amplitude: no amplitude_damping, whatever the frequency, damping or SNR.
// (One seed per case: the estimators are slow on strong low-frequency
// noise today, so more cases rather than more seeds.)
func TestViscousInRealisticNoiseNotAmplitudeDependent(t *testing.T) {
	cases := []struct {
		f, zeta, snr float64
	}{
		{12, 0.02, 40}, {60, 0.01, 50}, {60, 0.003, 40}, {230, 0.005, 60}, {230, 0.02, 30}, {700, 0.002, 50},
	}
	noCurve := 0
	for ci, c := range cases {
		seed := uint64(ci + 1)
		ms := []synth.Mode{{FrequencyHz: c.f, DampingRatio: c.zeta, Amplitude: 10}}
		h := synth.Hit{SampleRate: 2000, Duration: 2.5, PreTrigger: 0.1, Modes: ms, Seed: seed,
			PulseWidth: 0.001, PulsePeak: 100}
		x := h.Response()
		sd := synth.NoiseForSNR(ms, c.snr)
		for i, v := range realisticNoise(len(x), h.SampleRate, sd, 10, seed) {
			x[i] += v
		}
		d, rs := analysed(t, x, h.SampleRate, h.Force())
		if n := codeCount(rs)[CodeAmplitudeDamping]; n > 0 {
			t.Errorf("%g Hz, zeta %g, %g dB: viscous decay flagged: %v", c.f, c.zeta, c.snr, rs)
		}
		curve := false
		for _, m := range d.Modes {
			if math.Abs(m.FrequencyHz-c.f) < 0.01*c.f && len(m.AmplitudeDamping) >= 2 {
				curve = true
			}
		}
		if !curve {
			noCurve++
			t.Logf("%g Hz, zeta %g, %g dB: no amplitude curve for the mode (%d modes found)", c.f, c.zeta, c.snr, len(d.Modes))
		}
	}
	// a test that passes because no curve was made would prove nothing
	if noCurve > 1 {
		t.Errorf("%d of %d cases made no amplitude curve", noCurve, len(cases))
	}
}

func TestAmplitudeRuleThreshold(t *testing.T) {
	in := input(goodHit())
	th := DefaultThresholds()
	m := &in.Decay.Modes[0]
	// a hand-made curve: 1 % at 10, 1.5 % at 5, 2 % at 2.5 (amplitudes in
	// m/s^2): the damping falls with amplitude by ~67 % of its mean
	bin := func(a, z, se float64) pipeline.AmplitudeBin {
		return pipeline.AmplitudeBin{Amplitude: a, DampingRatio: z, DampingRatioCI: [2]float64{z - 1.96*se, z + 1.96*se}}
	}
	m.AmplitudeDamping = []pipeline.AmplitudeBin{bin(10, 0.010, 1e-4), bin(5, 0.015, 1e-4), bin(2.5, 0.020, 1e-4)}
	rs := wantReason(t, AmplitudeDependence{}.Check(in, th), CodeAmplitudeDamping, pipeline.SeverityFlag, 1)
	wantMode(t, rs[0], 0)
	wantIn(t, rs[0].Message, "falls with the amplitude", "1.0 % at 10 m/s^2", "2.0 % at 2.5 m/s^2", "67 %", "limit 30 %")
	// the same change within its noise: no finding
	m.AmplitudeDamping = []pipeline.AmplitudeBin{bin(10, 0.010, 3e-3), bin(5, 0.015, 3e-3), bin(2.5, 0.020, 3e-3)}
	wantNone(t, AmplitudeDependence{}.Check(in, th))
	// a significant change below the limit: no finding; a stricter lab flags it
	m.AmplitudeDamping = []pipeline.AmplitudeBin{bin(10, 0.010, 1e-5), bin(5, 0.011, 1e-5), bin(2.5, 0.012, 1e-5)}
	wantNone(t, AmplitudeDependence{}.Check(in, th))
	th.MaxAmplitudeDampingChange = 0.1
	wantReason(t, AmplitudeDependence{}.Check(in, th), CodeAmplitudeDamping, pipeline.SeverityFlag, 1)
	// fewer than three bins: nothing to judge
	m.AmplitudeDamping = m.AmplitudeDamping[:2]
	wantNone(t, AmplitudeDependence{}.Check(in, th))
}
