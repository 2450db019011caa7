package check

import (
	"fmt"
	"math"

	"github.com/ringlog/ringlog/pipeline"
)

// MethodHalfPower is the Estimate.Method of the half-power bandwidth
// estimate, the one whose resolution floor the rule allows for.
const MethodHalfPower = "halfpower"

// parametric names the estimators that fit all modes together and so stay
// valid when a neighbouring mode shares the band (pipeline.Estimate.Method).
var parametric = map[string]bool{"subspace": true, "nls": true}

// Disagreement flags a mode whose cross-check damping estimates differ
// from the primary damping ratio by more than MaxEstimatorSpread
// (relative).
//
// The cross-checks are Mode.Estimates after the first (the primary) with
// a finite, positive damping ratio. When the mode could not be
// band-isolated (ModeDiag.Isolated false: a neighbour shares its band),
// only the parametric estimates (subspace, nls) take part: the envelope,
// the decrement and the half-power bandwidth then measure the pair, not
// the mode. A half-power estimate is left out when
// its resolution floor 0.44*df/f_n (DESIGN.md sec. 5; df = 1/T with T the
// decay part of the record, unpadded, since zero padding interpolates but
// does not resolve) exceeds HalfPowerFloorShare of the primary damping
// ratio: on a short record of a lightly damped mode the half-power
// bandwidth measures the record length, not the damping. With fewer than
// two estimates the rule falls back to Mode.Spread.
type Disagreement struct{}

// Code returns CodeEstimatesApart.
func (Disagreement) Code() string { return CodeEstimatesApart }

// Info describes the rule's reason code.
func (Disagreement) Info() []RuleInfo {
	return []RuleInfo{{
		Code:     CodeEstimatesApart,
		Severity: pipeline.SeverityFlag,
		Summary: "the independent damping estimates of a mode differ by more than the tolerance " +
			"(half-power left out where its resolution floor is reached)",
		Thresholds: []string{"max_estimator_spread", "halfpower_floor_share"},
	}}
}

// Check compares the estimates of every mode.
func (Disagreement) Check(in Input, th Thresholds) []pipeline.Reason {
	span := decaySpan(in)
	var out []pipeline.Reason
	for i, m := range modes(in) {
		z := m.DampingRatio
		if !finite(z) || z <= 0 || in.isDropped(i) {
			continue
		}
		var (
			worst     spread
			compared  int
			left      []string
			primaryOf = "primary"
		)
		if len(m.Estimates) > 0 && m.Estimates[0].Method != "" {
			primaryOf = m.Estimates[0].Method
		}
		d, hasDiag := diag(in, i)
		for k := 1; k < len(m.Estimates); k++ {
			e := m.Estimates[k]
			if !finite(e.DampingRatio) || e.DampingRatio <= 0 {
				continue
			}
			if hasDiag && !d.Isolated && !parametric[e.Method] {
				continue // a neighbour shares the band: band-based estimates are not cross-checks
			}
			if e.Method == MethodHalfPower && span > 0 && m.FrequencyHz > 0 {
				if floor := 0.44 * (1 / span) / m.FrequencyHz; floor > th.HalfPowerFloorShare*z {
					left = append(left, fmt.Sprintf("half-power left out: its resolution floor %s is above %s of the damping ratio",
						pct(floor), pct(th.HalfPowerFloorShare)))
					continue
				}
			}
			compared++
			if dev := math.Abs(e.DampingRatio-z) / z; dev > worst.Dev {
				worst = spread{Method: e.Method, Zeta: e.DampingRatio, Dev: dev}
			}
		}
		var msg string
		switch {
		case compared > 0 && worst.Dev > th.MaxEstimatorSpread:
			msg = fmt.Sprintf("%s: the damping estimates disagree: %s gives %s against %s from %s (%s apart, limit %s)",
				modeName(m), worst.Method, pct(worst.Zeta), pct(z), primaryOf, pct(worst.Dev), pct(th.MaxEstimatorSpread))
		case len(m.Estimates) < 2 && finite(m.Spread) && m.Spread > th.MaxEstimatorSpread:
			msg = fmt.Sprintf("%s: the damping estimates disagree by %s (limit %s)",
				modeName(m), pct(m.Spread), pct(th.MaxEstimatorSpread))
		default:
			continue
		}
		for _, l := range left {
			msg += "; " + l
		}
		out = append(out, pipeline.Reason{Code: CodeEstimatesApart, Severity: pipeline.SeverityFlag, Mode: pipeline.ModeRef(i), Message: msg})
	}
	return out
}

// spread is the cross-check estimate farthest from the primary damping
// ratio.
type spread struct {
	Method string  // estimator
	Zeta   float64 // its damping ratio
	Dev    float64 // |Zeta - primary| / primary
}
