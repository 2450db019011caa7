package check

import (
	"testing"

	"github.com/ringlog/ringlog/pipeline"
)

func TestDoubleStrike(t *testing.T) {
	h := goodHit()
	h.DoubleHitDelay = 0.030 // the hammer bounces back 30 ms later
	h.DoubleHitScale = 0.4   // with 40 % of the first blow
	in := input(h)
	rs := wantReason(t, DoubleStrike{}.Check(in, DefaultThresholds()), CodeDoubleStrike, pipeline.SeverityReject, 1)
	// The generator puts both half-sine peaks exactly 120 samples apart
	// at 4000 Hz; the noise (0.1 % of the peak) cannot move the 40 % ratio
	// by a whole percent.
	wantIn(t, rs[0].Message, "30.0 ms after", "40 % of the main pulse", "2 pulses")

	// A hammer wired with negative polarity.
	for i, v := range in.Force.Samples {
		in.Force.Samples[i] = -v
	}
	wantReason(t, DoubleStrike{}.Check(in, DefaultThresholds()), CodeDoubleStrike, pipeline.SeverityReject, 1)
}

func TestDoubleStrikeBefore(t *testing.T) {
	h := goodHit()
	h.PreTrigger = 0.1
	h.DoubleHitDelay = 0.02
	h.DoubleHitScale = 2.5 // the second blow is the main one
	rs := wantReason(t, DoubleStrike{}.Check(input(h), DefaultThresholds()), CodeDoubleStrike, pipeline.SeverityReject, 1)
	wantIn(t, rs[0].Message, "20.0 ms before", "40 % of the main pulse")
}

func TestDoubleStrikeClean(t *testing.T) {
	th := DefaultThresholds()
	wantNone(t, DoubleStrike{}.Check(input(goodHit()), th))

	// A small bounce of 6 % stays under the 10 % rise threshold.
	h := goodHit()
	h.DoubleHitDelay, h.DoubleHitScale = 0.03, 0.06
	wantNone(t, DoubleStrike{}.Check(input(h), th))
	// ... but not under a stricter 5 % one.
	th.StrikeReturnFraction, th.StrikeRiseFraction = 0.02, 0.05
	wantReason(t, DoubleStrike{}.Check(input(h), th), CodeDoubleStrike, pipeline.SeverityReject, 1)

	// No force channel, or a dead one: nothing to say.
	in := input(goodHit())
	in.Force = nil
	wantNone(t, DoubleStrike{}.Check(in, DefaultThresholds()))
	in = input(goodHit())
	h = goodHit()
	h.PulsePeak = 0
	in.Force.Samples = make([]float64, len(in.Force.Samples))
	wantNone(t, DoubleStrike{}.Check(in, DefaultThresholds()))
}

// On a noisy force channel (pulse only 30 noise sd high, so 10 % of the
// peak is 3 sd) the noise must not pass for a second pulse.
func TestDoubleStrikeNoisyForce(t *testing.T) {
	h := goodHit()
	in := input(h)
	noisy := goodHit()
	noisy.PulseWidth = 0
	noisy.Modes = nil
	noisy.NoiseSD = h.PulsePeak / 30
	noisy.Seed = 7
	n := noisy.Response() // white noise only
	for i := range in.Force.Samples {
		in.Force.Samples[i] += n[i]
	}
	wantNone(t, DoubleStrike{}.Check(in, DefaultThresholds()))
}

// A rise in the record's first samples, with nothing before it to show the
// force at rest, is not a strike (the defect shown by the corpus file
// testdata/field/quantisation-spoiled.csv: a weak tap whose force noise
// started the record at 19 % of the pulse was rejected as a double strike).
func TestDoubleStrikeRecordStart(t *testing.T) {
	in := input(goodHit())
	fp, ok := findPulse(in.Force, DefaultThresholds())
	if !ok {
		t.Fatal("no pulse in the good hit")
	}
	in.Force.Samples[0] += 0.3 * fp.height
	in.Force.Samples[1] += 0.2 * fp.height
	wantNone(t, DoubleStrike{}.Check(in, DefaultThresholds()))
	// the same excursion after a quiet lead-in is a strike
	in = input(goodHit())
	for i := 40; i < 44; i++ {
		in.Force.Samples[i] += 0.3 * fp.height
	}
	if fp.start <= 100 {
		t.Skipf("the good hit's pulse starts at sample %d: no room for a lead-in", fp.start)
	}
	wantReason(t, DoubleStrike{}.Check(in, DefaultThresholds()), CodeDoubleStrike, pipeline.SeverityReject, 1)
}
