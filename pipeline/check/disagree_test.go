// Check values in this file: the inputs are hand-built decays; the limits
// are the default thresholds of thresholds.go, each marked there as common
// practice or our own choice; messages quote the numbers they were given.

package check

import (
	"math"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
)

func TestEstimatesDisagree(t *testing.T) {
	in := input(goodHit())
	th := DefaultThresholds()
	wantNone(t, Disagreement{}.Check(in, th)) // 3 % and 2 % off the primary

	in.Decay.Modes[0].Estimates[1].DampingRatio = 0.014 // envelope 40 % high
	rs := wantReason(t, Disagreement{}.Check(in, th), CodeEstimatesApart, pipeline.SeverityFlag, 1)
	wantMode(t, rs[0], 0)
	wantIn(t, rs[0].Message, "envelope gives 1.4 %", "1.0 % from subspace", "40 % apart", "limit 25 %")

	// A failed estimator (NaN) is not a disagreement.
	in.Decay.Modes[0].Estimates[1].DampingRatio = math.NaN()
	wantNone(t, Disagreement{}.Check(in, th))
}

// Half-power resolution floor 0.44 df/f_n (DESIGN.md sec. 5), df = 1/T.
func TestEstimatesDisagreeHalfPowerFloor(t *testing.T) {
	in := input(goodHit()) // 1 s record, decay part 0.95 s: df = 1.053 Hz
	m := &in.Decay.Modes[0]

	// At 20 Hz and zeta 0.2 % the floor is 0.44*1.053/20 = 2.3 %, above the
	// damping itself: a half-power reading of 2.5 % says nothing.
	m.FrequencyHz, m.DampingRatio = 20, 0.002
	m.Estimates = []pipeline.Estimate{
		{Method: "subspace", FrequencyHz: 20, DampingRatio: 0.002},
		{Method: MethodHalfPower, FrequencyHz: 20, DampingRatio: 0.025},
	}
	wantNone(t, Disagreement{}.Check(in, DefaultThresholds()))

	// At 500 Hz and zeta 1 % the floor is 0.093 %: a 2 % reading counts.
	m.FrequencyHz, m.DampingRatio = 500, 0.01
	m.Estimates = []pipeline.Estimate{
		{Method: "subspace", FrequencyHz: 500, DampingRatio: 0.01},
		{Method: MethodHalfPower, FrequencyHz: 500, DampingRatio: 0.02},
		{Method: "logdec", FrequencyHz: 500, DampingRatio: 0.0102},
	}
	rs := wantReason(t, Disagreement{}.Check(in, DefaultThresholds()), CodeEstimatesApart, pipeline.SeverityFlag, 1)
	wantIn(t, rs[0].Message, "halfpower gives 2.0 %")
}

func TestEstimatesDisagreeSpreadOnly(t *testing.T) {
	in := input(goodHit())
	m := &in.Decay.Modes[0]
	m.Estimates = m.Estimates[:1]
	m.Spread = 0.5
	wantReason(t, Disagreement{}.Check(in, DefaultThresholds()), CodeEstimatesApart, pipeline.SeverityFlag, 1)
	m.Spread = 0.1
	wantNone(t, Disagreement{}.Check(in, DefaultThresholds()))
}

// A mode with a neighbour in its band: the envelope reading is of the
// pair, not a cross-check; the parametric ones still are.
func TestEstimatesDisagreeNotIsolated(t *testing.T) {
	in := input(goodHit())
	in.Decay.Diag[0].Isolated = false
	in.Decay.Modes[0].Estimates[1].DampingRatio = 0.02 // envelope, 100 % off
	wantNone(t, Disagreement{}.Check(in, DefaultThresholds()))
	in.Decay.Modes[0].Estimates = append(in.Decay.Modes[0].Estimates,
		pipeline.Estimate{Method: "nls", FrequencyHz: 60, DampingRatio: 0.007})
	rs := wantReason(t, Disagreement{}.Check(in, DefaultThresholds()), CodeEstimatesApart, pipeline.SeverityFlag, 1)
	wantIn(t, rs[0].Message, "nls gives 0.70 %")
}
