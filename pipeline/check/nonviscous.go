package check

import (
	"fmt"
	"math"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/modal"
)

// NonViscous flags a mode whose decay is not that of viscous damping:
//
//   - friction: the envelope falls along a straight line (Coulomb
//     friction) rather than exponentially: the straight-line fit leaves less
//     than FrictionRSSRatio of the residual of the exponential fit
//     (ModeDiag.LinRSS < FrictionRSSRatio * ModeDiag.ExpRSS), tested only
//     when the decay falls far enough over the usable span to tell a line
//     from an exponential (to FrictionMaxEndLevel of its start or lower);
//   - drift: the damping ratio fitted on the early half of the decay and
//     the one fitted on the late half differ by more than MaxDampingDrift
//     of their mean: the damping depends on the amplitude (joints, rubbing,
//     material non-linearity).
//
// A viscous damping ratio of such a mode depends on the hit's strength
// and on where the fit stops. NaN or missing diagnostics are ignored.
type NonViscous struct{}

// Code returns CodeFrictionDecay.
func (NonViscous) Code() string { return CodeFrictionDecay }

// Info describes the rule's reason codes.
func (NonViscous) Info() []RuleInfo {
	return []RuleInfo{
		{
			Code:       CodeFrictionDecay,
			Severity:   pipeline.SeverityFlag,
			Summary:    "the envelope falls along a straight line (friction) rather than exponentially",
			Thresholds: []string{"friction_rss_ratio", "friction_max_end_level"},
		},
		{
			Code:       CodeDampingDrift,
			Severity:   pipeline.SeverityFlag,
			Summary:    "the damping early in the decay differs from the damping late in it (amplitude dependence)",
			Thresholds: []string{"max_damping_drift"},
		},
	}
}

// Check looks at every mode's envelope diagnostics.
func (NonViscous) Check(in Input, th Thresholds) []pipeline.Reason {
	var out []pipeline.Reason
	for i, m := range modes(in) {
		d, ok := diag(in, i)
		if !ok {
			continue
		}
		if finite(d.ExpRSS) && finite(d.LinRSS) && d.ExpRSS > 0 && d.LinRSS >= 0 && d.LinRSS < th.FrictionRSSRatio*d.ExpRSS &&
			endLevel(m, d) <= th.FrictionMaxEndLevel {
			out = append(out, pipeline.Reason{
				Code:     CodeFrictionDecay,
				Severity: pipeline.SeverityFlag,
				Mode:     pipeline.ModeRef(i),
				Message: fmt.Sprintf("%s: the envelope falls along a straight line (its residual is %s of an "+
					"exponential fit's, limit %s): friction, not viscous damping; the damping ratio depends on the "+
					"hit's strength", modeName(m), pct(d.LinRSS/d.ExpRSS), pct(th.FrictionRSSRatio)),
			})
		}
		e, l := d.ZetaEarly, d.ZetaLate
		if finite(e) && finite(l) && e > 0 && l > 0 {
			if rel := math.Abs(e-l) / ((e + l) / 2); rel > th.MaxDampingDrift {
				trend := "falls"
				if l > e {
					trend = "rises"
				}
				out = append(out, pipeline.Reason{
					Code:     CodeDampingDrift,
					Severity: pipeline.SeverityFlag,
					Mode:     pipeline.ModeRef(i),
					Message: fmt.Sprintf("%s: the damping ratio %s along the decay, %s early and %s late "+
						"(%s apart, limit %s): the damping depends on the amplitude",
						modeName(m), trend, pct(e), pct(l), pct(rel), pct(th.MaxDampingDrift)),
				})
			}
		}
	}
	return out
}

// endLevel returns the fraction of its start that the mode's fitted
// exponential keeps at the end of the usable span, exp(-zeta wn T); 1
// (no fall) when the span or the damping is unknown.
func endLevel(m pipeline.Mode, d modal.ModeDiag) float64 {
	z, f, t := m.DampingRatio, m.FrequencyHz, d.UsableS
	if !finite(z) || !finite(f) || !finite(t) || z <= 0 || f <= 0 || t <= 0 {
		return 1
	}
	return math.Exp(-z * 2 * math.Pi * f * t)
}
