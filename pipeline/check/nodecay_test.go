// Check values in this file: the inputs are hand-built decays; the limits
// are the default thresholds of thresholds.go, each marked there as common
// practice or our own choice; messages quote the numbers they were given.

package check

import (
	"math"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/modal"
)

func TestNoDecay(t *testing.T) {
	th := DefaultThresholds()
	wantNone(t, NoDecay{}.Check(input(goodHit()), th))
	wantNone(t, NoDecay{}.Check(input(multiHit()), th))

	// A disconnected accelerometer: noise only, the estimators found nothing.
	h := goodHit()
	h.Modes = nil
	in := input(h)
	rs := wantReason(t, NoDecay{}.Check(in, th), CodeNoDecay, pipeline.SeverityReject, 1)
	wantIn(t, rs[0].Message, "no decaying mode")

	in.Decay = nil
	wantReason(t, NoDecay{}.Check(in, th), CodeNoDecay, pipeline.SeverityReject, 1)

	// Only poles that do not decay, or that sit in the noise.
	in = input(goodHit())
	in.Decay.Modes = append(in.Decay.Modes, in.Decay.Modes[0])
	in.Decay.Diag = append(in.Decay.Diag, in.Decay.Diag[0])
	in.Decay.Modes[0].DampingRatio = -0.001               // growing
	in.Decay.Modes[1].Amplitude = 2.5 * in.Decay.NoiseRMS // 2.5 noise RMS
	rs = wantReason(t, NoDecay{}.Check(in, th), CodeNoDecay, pipeline.SeverityReject, 1)
	wantIn(t, rs[0].Message, "2.5 times the noise RMS")
	in.Decay.Modes[1].Amplitude = 3.5 * in.Decay.NoiseRMS
	wantNone(t, NoDecay{}.Check(in, th))

	in.Decay.Modes[1].DampingRatio = math.NaN()
	wantReason(t, NoDecay{}.Check(in, th), CodeNoDecay, pipeline.SeverityReject, 1)

	// No samples at all.
	in = Input{Response: &pipeline.Channel{SampleRate: fsTest}, Decay: &modal.Decay{}}
	wantReason(t, NoDecay{}.Check(in, th), CodeNoDecay, pipeline.SeverityReject, 1)
}
