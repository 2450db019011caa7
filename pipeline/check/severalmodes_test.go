package check

import (
	"testing"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/modal"
	"github.com/ringlog/ringlog/pipeline/synth"
)

// Two modes of similar energy: 60 Hz (A 20, 1 %) and 150 Hz (A 20,
// 0.6 %). Closed-form energies A^2/(4 sigma): 400/15.1 = 26.5 and
// 400/22.6 = 17.7, shares 60 % and 40 %.
func twoModeHit() synth.Hit {
	h := goodHit()
	h.Modes = []synth.Mode{
		{FrequencyHz: 60, DampingRatio: 0.01, Amplitude: 20},
		{FrequencyHz: 150, DampingRatio: 0.006, Amplitude: 20, Phase: 0.5},
	}
	h.NoiseSD = synth.NoiseForSNR(h.Modes, 40)
	return h
}

func TestMixedModes(t *testing.T) {
	in := input(twoModeHit())
	if s := in.Decay.Modes[1].EnergyShare; s < 0.39 || s > 0.41 {
		t.Fatalf("second mode share %.3f, want 0.40", s)
	}
	th := DefaultThresholds()
	wantNone(t, SeveralModes{}.Check(in, th)) // nobody said one mode was meant

	th.ExpectSingleMode = true
	rs := wantReason(t, SeveralModes{}.Check(in, th), CodeMixedModes, pipeline.SeverityFlag, 1)
	wantMode(t, rs[0], 1)
	wantIn(t, rs[0].Message, "mode at 150.0 Hz carries 40 %", "limit 20 %", "intended mode at 60.0 Hz")

	// Aiming at 150 Hz makes the 60 Hz mode the unwanted one.
	th.TargetHz = 150
	rs = wantReason(t, SeveralModes{}.Check(in, th), CodeMixedModes, pipeline.SeverityFlag, 1)
	wantMode(t, rs[0], 0)
	wantIn(t, rs[0].Message, "target 150.0 Hz")

	// A weak second mode (A 2: share 0.7 %) is fine.
	h := twoModeHit()
	h.Modes[1].Amplitude = 2
	th = DefaultThresholds()
	th.ExpectSingleMode = true
	wantNone(t, SeveralModes{}.Check(input(h), th))
}

func TestMixedModesMetadata(t *testing.T) {
	in := input(twoModeHit())
	th := DefaultThresholds()
	in.Rec.Meta[MetaExpectSingleMode] = "true"
	wantReason(t, SeveralModes{}.Check(in, th), CodeMixedModes, pipeline.SeverityFlag, 1)
	in.Rec.Meta[MetaExpectSingleMode] = "yes"
	wantReason(t, SeveralModes{}.Check(in, th), CodeMixedModes, pipeline.SeverityFlag, 1)

	// The file says no: it overrides the configuration's yes.
	th.ExpectSingleMode = true
	in.Rec.Meta[MetaExpectSingleMode] = "false"
	wantNone(t, SeveralModes{}.Check(in, th))

	delete(in.Rec.Meta, MetaExpectSingleMode)
	th.ExpectSingleMode = false
	in.Rec.Meta[MetaTargetHz] = "148"
	rs := wantReason(t, SeveralModes{}.Check(in, th), CodeMixedModes, pipeline.SeverityFlag, 1)
	wantMode(t, rs[0], 0)
}

// Two modes 2.5 Hz apart at 100 Hz, 0.5 % damping: half-power bandwidth
// 2 zeta f = 1.0 and 1.025 Hz, so 2.5/1.025 = 2.4 of the wider bandwidth
// apart (limit 4); 15 Hz apart they
// are clear.
func TestBeatingModes(t *testing.T) {
	h := goodHit()
	h.Modes = []synth.Mode{
		{FrequencyHz: 100, DampingRatio: 0.005, Amplitude: 10},
		{FrequencyHz: 102.5, DampingRatio: 0.005, Amplitude: 10, Phase: 1},
	}
	h.NoiseSD = synth.NoiseForSNR(h.Modes, 40)
	rs := wantReason(t, SeveralModes{}.Check(input(h), DefaultThresholds()), CodeBeatingModes, pipeline.SeverityFlag, 2)
	wantMode(t, rs[0], 0)
	wantMode(t, rs[1], 1)
	wantIn(t, rs[0].Message, "2.4 half-power bandwidths")

	h.Modes[1].FrequencyHz = 115
	wantNone(t, SeveralModes{}.Check(input(h), DefaultThresholds()))

	wantNone(t, SeveralModes{}.Check(input(goodHit()), DefaultThresholds()))
	wantNone(t, SeveralModes{}.Check(input(multiHit()), DefaultThresholds()))
}

// Very light damping (bandwidths far below the spacing) but a usable span
// of 1 s for modes 1 Hz apart: one beat period, below the limit of 2.
func TestBeatingModesRecordLength(t *testing.T) {
	in := Input{Decay: &modal.Decay{
		Modes: []pipeline.Mode{
			{FrequencyHz: 101, DampingRatio: 0.0001, Amplitude: 1},
			{FrequencyHz: 100, DampingRatio: 0.0001, Amplitude: 1},
		},
		Diag: []modal.ModeDiag{{UsableS: 1}, {UsableS: 1.2}},
	}}
	rs := wantReason(t, SeveralModes{}.Check(in, DefaultThresholds()), CodeBeatingModes, pipeline.SeverityFlag, 2)
	wantMode(t, rs[0], 1) // lower frequency first
	wantIn(t, rs[0].Message, "1.0 beat periods")

	in.Decay.Diag = []modal.ModeDiag{{UsableS: 5}, {UsableS: 6}}
	wantNone(t, SeveralModes{}.Check(in, DefaultThresholds()))
}
