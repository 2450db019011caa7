package check

import (
	"math"
	"strings"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/modal"
	"github.com/ringlog/ringlog/pipeline/synth"
)

// The tests build hits with pipeline/synth (closed-form damped sinusoids
// plus white noise) and hand-build the modal.Decay an ideal estimator
// would return for them (idealDecay), so the rules are tested without
// the estimators.

const fsTest = 4000.0 // Hz

// goodHit is an ordinary good hit: one mode at 60 Hz, 1 % damping, 40 dB
// peak SNR, a clean 1 ms half-sine force pulse of 200 N after 50 ms of
// quiet lead-in.
func goodHit() synth.Hit {
	ms := []synth.Mode{{FrequencyHz: 60, DampingRatio: 0.01, Amplitude: 20}}
	return synth.Hit{
		SampleRate: fsTest, Duration: 1, PreTrigger: 0.05, Modes: ms,
		NoiseSD: synth.NoiseForSNR(ms, 40), Seed: 1,
		PulseWidth: 0.001, PulsePeak: 200,
	}
}

// multiHit is a good hit with three modes far apart.
func multiHit() synth.Hit {
	h := goodHit()
	h.Modes = []synth.Mode{
		{FrequencyHz: 45, DampingRatio: 0.012, Amplitude: 15},
		{FrequencyHz: 210, DampingRatio: 0.008, Amplitude: 10, Phase: 0.4},
		{FrequencyHz: 640, DampingRatio: 0.005, Amplitude: 6, Phase: 1.1},
	}
	h.NoiseSD = synth.NoiseForSNR(h.Modes, 40)
	h.Seed = 2
	return h
}

// input turns a synthetic hit into rule input with an ideal Decay.
func input(h synth.Hit) Input {
	rec := &pipeline.Recording{Path: "synthetic.csv", Format: "csv", Meta: map[string]string{}}
	rec.Channels = append(rec.Channels, pipeline.Channel{
		Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: h.SampleRate, Samples: h.Response(),
	})
	if f := h.Force(); f != nil {
		rec.Channels = append(rec.Channels, pipeline.Channel{
			Name: "force", Unit: "N", Role: pipeline.RoleForce, SampleRate: h.SampleRate, Samples: f,
		})
	}
	in := Input{Rec: rec, Response: &rec.Channels[0]}
	if len(rec.Channels) > 1 {
		in.Force = &rec.Channels[1]
	}
	in.Decay = idealDecay(h, in.Response.Samples)
	return in
}

// idealDecay is what a perfect estimator would report for a synthetic
// hit: the generator's modes, the closed-form decay energy and the span
// above ten times the noise.
func idealDecay(h synth.Hit, x []float64) *modal.Decay {
	trig := int(math.Round(h.PreTrigger * h.SampleRate))
	d := &modal.Decay{
		Trigger:  trig,
		Onset:    trig + int(math.Ceil(h.PulseWidth*h.SampleRate)),
		NoiseRMS: h.NoiseSD,
		Peak:     peakAbs(x[trig:]),
	}
	span := h.Duration - h.PreTrigger
	var total float64
	energy := make([]float64, len(h.Modes))
	for i, m := range h.Modes {
		sigma := m.DampingRatio * 2 * math.Pi * m.FrequencyHz
		// sum over samples of (A e^{-sigma t} sin)^2 ~ fs A^2 (1-e^{-2 sigma T}) / (4 sigma)
		energy[i] = h.SampleRate * m.Amplitude * m.Amplitude * (1 - math.Exp(-2*sigma*span)) / (4 * sigma)
		total += energy[i]
	}
	for i, m := range h.Modes {
		sigma := m.DampingRatio * 2 * math.Pi * m.FrequencyHz
		usable := span
		if h.NoiseSD > 0 {
			usable = math.Min(span, math.Log(m.Amplitude/(10*h.NoiseSD))/sigma)
		}
		usable = math.Max(usable, 0)
		fd := m.FrequencyHz * math.Sqrt(1-m.DampingRatio*m.DampingRatio)
		enr := math.Inf(1)
		if h.NoiseSD > 0 {
			enr = energy[i] / (h.NoiseSD * h.NoiseSD)
		}
		z := m.DampingRatio
		d.Modes = append(d.Modes, pipeline.Mode{
			FrequencyHz:  m.FrequencyHz,
			DampingRatio: z,
			Amplitude:    m.Amplitude,
			EnergyShare:  energy[i] / total,
			Cycles:       usable * fd,
			DecaySNRdB:   20 * math.Log10(m.Amplitude/math.Max(h.NoiseSD, 1e-300)),
			Spread:       0.03,
			Estimates: []pipeline.Estimate{
				{Method: "subspace", FrequencyHz: m.FrequencyHz, DampingRatio: z},
				{Method: "envelope", FrequencyHz: m.FrequencyHz, DampingRatio: z * 1.03},
				{Method: "logdec", FrequencyHz: m.FrequencyHz, DampingRatio: z * 0.98},
			},
		})
		d.Diag = append(d.Diag, modal.ModeDiag{
			UsableS:   usable,
			ENR:       enr,
			ZetaEarly: z * 0.97,
			ZetaLate:  z * 1.04,
			ExpRSS:    1,
			LinRSS:    6,
			Isolated:  true,
		})
	}
	return d
}

// codes lists the codes of reasons.
func codes(rs []pipeline.Reason) []string {
	var out []string
	for _, r := range rs {
		out = append(out, r.Code)
	}
	return out
}

// wantReason fails unless rs holds exactly n reasons, all with the code
// and severity, and returns them.
func wantReason(t *testing.T, rs []pipeline.Reason, code string, sev pipeline.Severity, n int) []pipeline.Reason {
	t.Helper()
	if len(rs) != n {
		t.Fatalf("got %d reasons %v, want %d %q", len(rs), messages(rs), n, code)
	}
	for _, r := range rs {
		if r.Code != code || r.Severity != sev {
			t.Fatalf("got reason %q/%s (%s), want %q/%s", r.Code, r.Severity, r.Message, code, sev)
		}
		if r.Message == "" {
			t.Fatalf("reason %q has no message", r.Code)
		}
	}
	return rs
}

// wantNone fails when rs holds any reason.
func wantNone(t *testing.T, rs []pipeline.Reason) {
	t.Helper()
	if len(rs) != 0 {
		t.Fatalf("want no reason, got %v", messages(rs))
	}
}

// wantMode fails unless r concerns mode i.
func wantMode(t *testing.T, r pipeline.Reason, i int) {
	t.Helper()
	if r.Mode == nil || *r.Mode != i {
		t.Fatalf("reason %q concerns mode %v, want %d", r.Code, r.Mode, i)
	}
}

// wantIn fails unless every part occurs in the message.
func wantIn(t *testing.T, msg string, parts ...string) {
	t.Helper()
	for _, p := range parts {
		if !strings.Contains(msg, p) {
			t.Errorf("message %q lacks %q", msg, p)
		}
	}
}

func messages(rs []pipeline.Reason) []string {
	var out []string
	for _, r := range rs {
		s := r.Code + "/" + string(r.Severity) + ": " + r.Message
		if r.Mode != nil {
			s += " [mode " + string(rune('0'+*r.Mode)) + "]"
		}
		out = append(out, s)
	}
	return out
}
