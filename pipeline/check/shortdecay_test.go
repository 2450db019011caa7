package check

import (
	"math"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/synth"
)

func TestShortDecayCycles(t *testing.T) {
	// A 3.5 Hz mode in a 1 s record: at most 0.95 s * 3.5 Hz = 3.3 cycles
	// after the hit, whatever the noise (record length bounds it).
	h := goodHit()
	h.Modes = []synth.Mode{{FrequencyHz: 3.5, DampingRatio: 0.01, Amplitude: 20}}
	in := input(h)
	if c := in.Decay.Modes[0].Cycles; math.Abs(c-0.95*3.5) > 0.01 {
		t.Fatalf("ideal decay gives %.2f cycles, want 3.33", c)
	}
	rs := wantReason(t, ShortDecay{}.Check(in, DefaultThresholds()), CodeShortDecay, pipeline.SeverityDrop, 1)
	wantMode(t, rs[0], 0)
	wantIn(t, rs[0].Message, "3.3 cycles", "minimum 5")

	// The same mode at 12 Hz has 11 cycles in the record.
	h.Modes[0].FrequencyHz = 12
	wantNone(t, ShortDecay{}.Check(input(h), DefaultThresholds()))

	wantNone(t, ShortDecay{}.Check(input(goodHit()), DefaultThresholds()))
	wantNone(t, ShortDecay{}.Check(input(multiHit()), DefaultThresholds()))
}

// Cramer-Rao relation of DESIGN.md sec. 6: sd(zeta)/zeta >= 2/sqrt(ENR).
// Asking for 10 % needs ENR >= (2/0.1)^2 = 400.
func TestShortDecayCramerRao(t *testing.T) {
	in := input(goodHit())
	in.Decay.Modes[0].Cycles = 30 // plenty of cycles: only the ENR test can fire
	th := DefaultThresholds()
	for _, c := range []struct {
		enr  float64
		drop bool
	}{
		{300, true},  // floor 2/sqrt(300) = 11.5 %
		{399, true},  // 10.01 %
		{401, false}, // 9.99 %
		{1e6, false}, // 0.2 %
		{0, false},   // not filled in: unknown
		{math.NaN(), false},
	} {
		in.Decay.Diag[0].ENR = c.enr
		rs := ShortDecay{}.Check(in, th)
		if c.drop {
			rs = wantReason(t, rs, CodeShortDecay, pipeline.SeverityDrop, 1)
			wantIn(t, rs[0].Message, "Cramer-Rao")
		} else {
			wantNone(t, rs)
		}
	}
	// A looser precision accepts ENR 300.
	th.MaxDampingRelSD = 0.2
	in.Decay.Diag[0].ENR = 300
	wantNone(t, ShortDecay{}.Check(in, th))
}

// A 60 Hz mode, 1 % damping, at a peak SNR of -4 dB (noise sd 1.6 times
// the amplitude): the closed-form decay energy over the noise variance is
// fs A^2/(4 sigma)/var = 4000/(4*3.77) * 10^(-4/10) = 105, so the best
// possible relative sd is 2/sqrt(105) = 19.5 %: dropped at the default
// 10 %.
func TestShortDecayLowSNR(t *testing.T) {
	h := goodHit()
	h.NoiseSD = synth.NoiseForSNR(h.Modes, -4)
	in := input(h)
	in.Decay.Modes[0].Cycles = 8 // let only the energy test decide
	if enr := in.Decay.Diag[0].ENR; math.Abs(enr-105.5) > 0.5 {
		t.Fatalf("ENR %.1f, want 105.5", enr)
	}
	rs := wantReason(t, ShortDecay{}.Check(in, DefaultThresholds()), CodeShortDecay, pipeline.SeverityDrop, 1)
	wantIn(t, rs[0].Message, "19 %")
}

// Cycles not filled in by the estimators: counted from the usable span.
func TestShortDecayFromUsableSpan(t *testing.T) {
	in := input(goodHit())
	in.Decay.Modes[0].Cycles = 0
	in.Decay.Diag[0].UsableS = 0.05 // 3 cycles at 60 Hz
	rs := wantReason(t, ShortDecay{}.Check(in, DefaultThresholds()), CodeShortDecay, pipeline.SeverityDrop, 1)
	wantIn(t, rs[0].Message, "3.0 cycles")
	in.Decay.Diag[0].UsableS = 0.5 // 30 cycles
	wantNone(t, ShortDecay{}.Check(in, DefaultThresholds()))
}
