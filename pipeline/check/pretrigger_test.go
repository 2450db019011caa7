package check

import (
	"math"
	"strings"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/synth"
)

func TestPreTriggerClean(t *testing.T) {
	th := DefaultThresholds()
	wantNone(t, PreTrigger{}.Check(input(goodHit()), th))
	wantNone(t, PreTrigger{}.Check(input(multiHit()), th))
	// A noisy but quiet lead-in (20 dB peak SNR) is not ringing.
	for seed := uint64(1); seed <= 20; seed++ {
		h := goodHit()
		h.NoiseSD = synth.NoiseForSNR(h.Modes, 20)
		h.Seed = seed
		wantNone(t, PreTrigger{}.Check(input(h), th))
	}
}

// The structure rings at its 60 Hz mode with 10 % of the hit's amplitude
// from the start of the record and on through it (synth RingingBefore),
// and the estimator's noise figure took that ringing for noise.
func TestPreRingingTone(t *testing.T) {
	h := goodHit()
	h.PreTrigger = 0.1
	h.RingingBefore = 0.1 * h.Modes[0].Amplitude
	in := input(h)
	in.Decay.NoiseRMS = rmsAboutMean(in.Response.Samples[:int(0.1*fsTest)])
	rs := wantReason(t, PreTrigger{}.Check(in, DefaultThresholds()), CodePreRinging, pipeline.SeverityReject, 1)
	// Closed form: amplitude 2 over a peak of about 20-22: 9-10 %.
	wantIn(t, rs[0].Message, "rings at the mode at 60.0 Hz")
	if !containsAny(rs[0].Message, "9.0 %", "9.1 %", "9.2 %", "9.3 %", "9.4 %", "9.5 %", "9.6 %", "9.7 %", "9.8 %", "9.9 %", "10 %") {
		t.Errorf("message %q: want a ringing amplitude of 9-10 %% of the peak", rs[0].Message)
	}

	// Ringing at 1 % of the amplitude stays under the 2 % limit.
	h.RingingBefore = 0.01 * h.Modes[0].Amplitude
	in = input(h)
	in.Decay.NoiseRMS = rmsAboutMean(in.Response.Samples[:int(0.1*fsTest)])
	wantNone(t, PreTrigger{}.Check(in, DefaultThresholds()))
}

// Broadband vibration (a noise burst ten times the record's noise) before
// the hit, gone by the time of the hit.
func TestPreRingingBroadband(t *testing.T) {
	h := goodHit()
	in := input(h)
	burst := goodHit()
	burst.Modes, burst.PulseWidth, burst.NoiseSD, burst.Seed = nil, 0, 10*h.NoiseSD, 9
	b := burst.Response()
	for i := 0; i < int(0.04*fsTest); i++ {
		in.Response.Samples[i] += b[i]
	}
	rs := wantReason(t, PreTrigger{}.Check(in, DefaultThresholds()), CodePreRinging, pipeline.SeverityReject, 1)
	wantIn(t, rs[0].Message, "response RMS")
}

func TestPreTriggerNoLeadIn(t *testing.T) {
	// The hit at the first sample: nothing to check, flag only.
	h := goodHit()
	h.PreTrigger = 0
	rs := wantReason(t, PreTrigger{}.Check(input(h), DefaultThresholds()), CodeNoLeadIn, pipeline.SeverityFlag, 1)
	wantIn(t, rs[0].Message, "only 0 samples", "fewer than 16")

	// A record that starts in the middle of a vibration: the response
	// begins at its peak (cosine phase), where a structure at rest that is
	// struck starts from zero.
	h.Modes[0].Phase = math.Pi / 2
	rs = wantReason(t, PreTrigger{}.Check(input(h), DefaultThresholds()), CodePreRinging, pipeline.SeverityReject, 1)
	wantIn(t, rs[0].Message, "starts at")

	// A lead-in of 2 ms + 10 samples is still too short.
	h = goodHit()
	h.PreTrigger = (8 + 10) / fsTest
	wantReason(t, PreTrigger{}.Check(input(h), DefaultThresholds()), CodeNoLeadIn, pipeline.SeverityFlag, 1)
	h.PreTrigger = (8 + 16) / fsTest
	wantNone(t, PreTrigger{}.Check(input(h), DefaultThresholds()))
}

// toneAmplitude must recover a sinusoid's amplitude and give a standard
// error that matches the scatter of white noise: for n samples of noise
// with sd s, the least-squares cosine and sine coefficients each have a
// standard deviation s*sqrt(2/n) (linear regression on nearly orthogonal
// regressors of mean square 1/2).
func TestToneAmplitude(t *testing.T) {
	const n = 400
	x := make([]float64, n)
	for i := range x {
		x[i] = 0.3 + 2*math.Sin(2*math.Pi*60*float64(i)/fsTest+0.7)
	}
	amp, se, ok := toneAmplitude(x, fsTest, 60)
	if !ok || math.Abs(amp-2) > 1e-9 || se > 1e-9 {
		t.Fatalf("pure tone: amp %g se %g ok %v, want 2, 0, true", amp, se, ok)
	}
	// Noise only: amplitude over its standard error below 4 in nearly
	// every trial (chance exp(-8) per trial), and around 1.25 on average
	// (mean of a Rayleigh variable with scale 1, sqrt(pi/2)).
	sum := 0.0
	const trials = 200
	for seed := uint64(1); seed <= trials; seed++ {
		h := synth.Hit{SampleRate: fsTest, Duration: n / fsTest, NoiseSD: 1, Seed: seed}
		amp, se, ok := toneAmplitude(h.Response(), fsTest, 60)
		if !ok {
			t.Fatal("fit failed")
		}
		if amp/se > 4.5 {
			t.Errorf("seed %d: noise-only amplitude %.2f standard errors", seed, amp/se)
		}
		sum += amp / se
	}
	if mean := sum / trials; math.Abs(mean-math.Sqrt(math.Pi/2)) > 0.12 {
		t.Errorf("mean amplitude over standard error %.3f, want %.3f", mean, math.Sqrt(math.Pi/2))
	}
}

func containsAny(s string, parts ...string) bool {
	for _, p := range parts {
		if strings.Contains(s, p) {
			return true
		}
	}
	return false
}
