package check

import (
	"math"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/synth"
)

// The Fourier transform of a half-sine pulse sin(pi t/tau), 0 <= t <= tau,
// has the magnitude (2 tau/pi) |cos(pi f tau)| / |1 - (2 f tau)^2| (a
// standard transform pair, e.g. in shock-and-vibration handbooks; derived
// by integrating sin(pi t/tau) e^{-i 2 pi f t} over the pulse). The drop
// below 0 Hz is 20 log10 |1 - (2 f tau)^2| / |cos(pi f tau)|: 9.54 dB at
// f tau = 1, the first zero at f tau = 1.5.
func halfSineDropDB(f, tau float64) float64 {
	x := f * tau
	return 20 * math.Log10(math.Abs(1-4*x*x)/math.Abs(math.Cos(math.Pi*x)))
}

func TestSpectrumDropHalfSine(t *testing.T) {
	const (
		fs  = 200000.0 // Hz: 200 samples on the pulse, so the sampled pulse follows the continuous one closely
		tau = 0.001    // s
	)
	g := make([]float64, int(tau*fs)+1)
	for i := range g {
		g[i] = math.Sin(math.Pi * float64(i) / (tau * fs))
	}
	if d := halfSineDropDB(1000, tau); math.Abs(d-9.542) > 0.001 { // 20 log10(3)
		t.Fatalf("closed form at f tau = 1: %.4f dB, want 9.542", d)
	}
	for _, ft := range []float64{0.3, 0.7, 1, 1.25, 1.4, 2.2, 3.6} {
		f := ft / tau
		got := spectrumDropDB(g, fs, f)
		want := halfSineDropDB(f, tau)
		if math.Abs(got-want) > 0.1 {
			t.Errorf("f tau = %.2f: drop %.3f dB, closed form %.3f dB", ft, got, want)
		}
	}
}

// Two modes, 60 Hz and 900 Hz. A soft tip (4 ms pulse, first spectral
// zero at 375 Hz) leaves the 900 Hz mode some 40 dB down; a hard tip
// (0.5 ms, two samples at 4000 Hz) excites both.
func excitationHit(width float64) synth.Hit {
	h := goodHit()
	h.Modes = []synth.Mode{
		{FrequencyHz: 60, DampingRatio: 0.01, Amplitude: 20},
		{FrequencyHz: 900, DampingRatio: 0.005, Amplitude: 8},
	}
	h.NoiseSD = synth.NoiseForSNR(h.Modes, 40)
	h.PulseWidth = width
	return h
}

func TestExcitation(t *testing.T) {
	th := DefaultThresholds()
	rs := wantReason(t, Excitation{}.Check(input(excitationHit(0.004)), th), CodeUnderExcited, pipeline.SeverityDrop, 1)
	wantMode(t, rs[0], 1)
	wantIn(t, rs[0].Message, "mode at 900.0 Hz", "limit 20 dB")

	wantNone(t, Excitation{}.Check(input(excitationHit(0.0005)), th))
	wantNone(t, Excitation{}.Check(input(goodHit()), th))
	wantNone(t, Excitation{}.Check(input(multiHit()), th))

	// Closed form at 900 Hz for the 4 ms pulse: the rule's figure must be
	// near it (the 4000 Hz sampling and the force noise move it a little).
	want := halfSineDropDB(900, 0.004)
	if want < 35 {
		t.Fatalf("closed form %.1f dB: the test hit is not as intended", want)
	}
	in := input(excitationHit(0.004))
	fp, ok := findPulse(in.Force, th)
	if !ok {
		t.Fatal("no pulse found")
	}
	if got := spectrumDropDB(fp.segment(th), fsTest, 900); math.Abs(got-want) > 3 {
		t.Fatalf("drop at 900 Hz %.1f dB, closed form %.1f dB", got, want)
	}

	// Without a force channel the rule is silent.
	in.Force = nil
	wantNone(t, Excitation{}.Check(in, th))
}
