package check

import (
	"fmt"
	"math"

	"github.com/ringlog/ringlog/pipeline"
)

// ShortDecay drops a mode whose decay above the noise is too short for a
// damping estimate:
//
//   - fewer than MinCycles cycles above the noise (Mode.Cycles, or
//     ModeDiag.UsableS times the frequency when Cycles was not filled in); or
//   - a decay energy over the noise variance (ModeDiag.ENR) so small that
//     the Cramer-Rao floor of the relative standard deviation of the
//     damping ratio, 2/sqrt(ENR) (DESIGN.md sec. 6, for a fully decayed
//     record), exceeds the precision asked for, MaxDampingRelSD. No
//     estimator can do better than that floor on this hit.
//
// The ENR test is skipped when the estimators did not fill ENR (0 or NaN).
type ShortDecay struct{}

// Code returns CodeShortDecay.
func (ShortDecay) Code() string { return CodeShortDecay }

// Info describes the rule's reason code.
func (ShortDecay) Info() []RuleInfo {
	return []RuleInfo{{
		Code:     CodeShortDecay,
		Severity: pipeline.SeverityDrop,
		Summary: "too few cycles above the noise, or too little decay energy for the damping precision asked " +
			"(Cramer-Rao floor 2/sqrt(ENR))",
		Thresholds: []string{"min_cycles", "max_damping_rel_sd"},
	}}
}

// Check looks at every mode.
func (ShortDecay) Check(in Input, th Thresholds) []pipeline.Reason {
	var out []pipeline.Reason
	for i, m := range modes(in) {
		var msg string
		d, hasDiag := diag(in, i)
		cycles := m.Cycles
		if !(cycles > 0) && hasDiag && finite(d.UsableS) && d.UsableS > 0 && finite(m.FrequencyHz) {
			cycles = d.UsableS * m.FrequencyHz // Cycles not filled in: count them from the usable span
		}
		if finite(cycles) && cycles < th.MinCycles {
			msg = fmt.Sprintf("%s: only %.1f cycles above the noise (minimum %.0f); "+
				"the decay is too short to estimate damping: hit harder, lower the noise or record longer",
				modeName(m), cycles, th.MinCycles)
		} else if hasDiag && finite(d.ENR) && d.ENR > 0 {
			if floor := 2 / math.Sqrt(d.ENR); floor > th.MaxDampingRelSD {
				msg = fmt.Sprintf("%s: the decay energy is only %.3g times the noise variance, so no estimate of its "+
					"damping ratio can be better than %s (1 sd, Cramer-Rao bound 2/sqrt(ENR)); %s was asked: "+
					"hit harder or lower the noise", modeName(m), d.ENR, pct(floor), pct(th.MaxDampingRelSD))
			}
		}
		if msg != "" {
			out = append(out, pipeline.Reason{Code: CodeShortDecay, Severity: pipeline.SeverityDrop, Mode: pipeline.ModeRef(i), Message: msg})
		}
	}
	return out
}
