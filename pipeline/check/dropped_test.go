package check

import (
	"testing"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/synth"
)

// A mode dropped by a rule (here short_decay: a noise peak that rings for
// a cycle) raises no flag, alone or as half of a pair: the pair 100/101.5
// Hz beats (1.5 half-power bandwidths, the beat rule's limit is 4) when both
// modes are real, and raises nothing when one of them is dropped.
func TestDroppedModeRaisesNoFlag(t *testing.T) {
	h := goodHit()
	h.Modes = []synth.Mode{
		{FrequencyHz: 100, DampingRatio: 0.005, Amplitude: 15},
		{FrequencyHz: 101.5, DampingRatio: 0.005, Amplitude: 10, Phase: 0.4},
	}
	h.NoiseSD = synth.NoiseForSNR(h.Modes, 40)
	th := DefaultThresholds()

	in := input(h)
	rs := Run(in, th)
	wantReason(t, rs, CodeBeatingModes, pipeline.SeverityFlag, 2)

	in = input(h)
	in.Decay.Modes[1].Cycles = 1 // too short: dropped
	in.Decay.Modes[1].Estimates[1].DampingRatio = 0.05
	rs = Run(in, th)
	wantReason(t, rs, CodeShortDecay, pipeline.SeverityDrop, 1)
	for _, r := range rs {
		if r.Severity == pipeline.SeverityFlag {
			t.Errorf("flag %s raised with the dropped mode: %s", r.Code, r.Message)
		}
	}
}
