package check

import (
	"fmt"
	"math"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/modal"
)

// CodeAmplitudeDamping is the reason code of AmplitudeDependence.
const CodeAmplitudeDamping = "amplitude_damping" // flag: damping ratio changes with the amplitude along the decay

// amplitudeMinZ is how many standard errors the change of the damping
// ratio over the amplitude range must stand from zero (a three-sigma
// detection, our choice, as MinModeNoiseRatio).
const amplitudeMinZ = 3.0

// AmplitudeDependence flags a mode whose damping ratio changes with its
// amplitude along the decay (Mode.AmplitudeDamping): a weighted straight
// line of the bins' damping ratios against the logarithm of their
// amplitude (modal.AmplitudeTrend) changes the damping ratio over the
// amplitude range of the decay by more than MaxAmplitudeDampingChange of
// its mean, at least amplitudeMinZ standard errors from no change. Joints
// that slip, dampers whose force grows faster than the speed (quadratic,
// cubic) and rubbing do this; a viscously damped mode keeps one damping
// ratio at every amplitude. A mode whose envelope falls along a straight
// line is friction (NonViscous) and is not flagged twice.
type AmplitudeDependence struct{}

// Code returns CodeAmplitudeDamping.
func (AmplitudeDependence) Code() string { return CodeAmplitudeDamping }

// Info describes the rule's reason code.
func (AmplitudeDependence) Info() []RuleInfo {
	return []RuleInfo{{
		Code:       CodeAmplitudeDamping,
		Severity:   pipeline.SeverityFlag,
		Summary:    "the damping ratio changes with the amplitude along the decay (the hit's strength matters)",
		Thresholds: []string{"max_amplitude_damping_change"},
	}}
}

// Check looks at every mode's amplitude curve.
func (AmplitudeDependence) Check(in Input, th Thresholds) []pipeline.Reason {
	var out []pipeline.Reason
	for i, m := range modes(in) {
		bins := m.AmplitudeDamping
		change, z := modal.AmplitudeTrend(bins)
		if !finite(change) || !finite(z) || math.Abs(z) < amplitudeMinZ || math.Abs(change) <= th.MaxAmplitudeDampingChange {
			continue
		}
		if d, ok := diag(in, i); ok && frictionLike(m, d, th) {
			continue
		}
		// quote the measured bins at the two ends whose intervals are
		// narrower than half their value (+/- 25 %)
		hi, lo := bins[0], bins[len(bins)-1]
		var good []pipeline.AmplitudeBin
		for _, b := range bins {
			if b.DampingRatio > 0 && b.DampingRatioCI[1]-b.DampingRatioCI[0] < 0.5*b.DampingRatio {
				good = append(good, b)
			}
		}
		if len(good) >= 2 {
			hi, lo = good[0], good[len(good)-1]
		}
		trend := "grows"
		if change < 0 {
			trend = "falls"
		}
		out = append(out, pipeline.Reason{
			Code:     CodeAmplitudeDamping,
			Severity: pipeline.SeverityFlag,
			Mode:     pipeline.ModeRef(i),
			Message: fmt.Sprintf("%s: the damping ratio %s with the amplitude, %s at %s and %s at %s along the decay "+
				"(a change of %s of its mean, limit %s): the damping depends on how hard the structure was struck",
				modeName(m), trend, pct(hi.DampingRatio), qty(hi.Amplitude, unit(in)), pct(lo.DampingRatio),
				qty(lo.Amplitude, unit(in)), pct(math.Abs(change)), pct(th.MaxAmplitudeDampingChange)),
		})
	}
	return out
}

// unit returns the response channel's unit, "" when unknown.
func unit(in Input) string {
	if in.Response == nil {
		return ""
	}
	return in.Response.Unit
}
