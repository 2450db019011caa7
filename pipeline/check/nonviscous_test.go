// Check values in this file: the inputs are hand-built decays; the limits
// are the default thresholds of thresholds.go, each marked there as common
// practice or our own choice; messages quote the numbers they were given.

package check

import (
	"math"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
)

func TestFrictionDecay(t *testing.T) {
	in := input(goodHit())
	th := DefaultThresholds()
	wantNone(t, NonViscous{}.Check(in, th)) // ideal viscous decay: LinRSS 6 x ExpRSS

	in.Decay.Diag[0].LinRSS, in.Decay.Diag[0].ExpRSS = 0.2, 1
	rs := wantReason(t, NonViscous{}.Check(in, th), CodeFrictionDecay, pipeline.SeverityFlag, 1)
	wantMode(t, rs[0], 0)
	wantIn(t, rs[0].Message, "straight line", "20 %", "limit 50 %")

	// Both fits equally good: no finding.
	in.Decay.Diag[0].LinRSS = 1
	wantNone(t, NonViscous{}.Check(in, th))

	// A line fits better, but the decay falls only to 81 % over the span
	// (3.5 Hz, 1 %, 0.95 s: exp(-0.209)), where e^-x ~ 1-x: no finding.
	in.Decay.Modes[0].FrequencyHz = 3.5
	in.Decay.Diag[0].UsableS = 0.95
	in.Decay.Diag[0].LinRSS = 0.2
	wantNone(t, NonViscous{}.Check(in, th))
	th.FrictionMaxEndLevel = 0.9
	wantReason(t, NonViscous{}.Check(in, th), CodeFrictionDecay, pipeline.SeverityFlag, 1)
	th = DefaultThresholds()
	in.Decay.Diag[0].LinRSS, in.Decay.Diag[0].ExpRSS = math.NaN(), math.NaN()
	wantNone(t, NonViscous{}.Check(in, th))
}

func TestDampingDrift(t *testing.T) {
	in := input(goodHit())
	th := DefaultThresholds()
	d := &in.Decay.Diag[0]

	d.ZetaEarly, d.ZetaLate = 0.020, 0.010 // 67 % apart: joint damping that grows with amplitude
	rs := wantReason(t, NonViscous{}.Check(in, th), CodeDampingDrift, pipeline.SeverityFlag, 1)
	wantIn(t, rs[0].Message, "falls along the decay", "2.0 % early", "1.0 % late", "67 % apart", "limit 50 %")

	d.ZetaEarly, d.ZetaLate = 0.010, 0.013 // 26 % apart: within the scatter of two half-span fits
	wantNone(t, NonViscous{}.Check(in, th))
	th.MaxDampingDrift = 0.25 // a stricter lab
	wantReason(t, NonViscous{}.Check(in, th), CodeDampingDrift, pipeline.SeverityFlag, 1)
	th = DefaultThresholds()

	d.ZetaEarly, d.ZetaLate = 0.010, math.NaN() // span too short to split
	wantNone(t, NonViscous{}.Check(in, th))

	// Missing diagnostics (Diag not parallel to Modes) are ignored.
	in.Decay.Diag = nil
	wantNone(t, NonViscous{}.Check(in, th))
}
