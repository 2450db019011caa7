package check

import (
	"fmt"

	"github.com/ringlog/ringlog/pipeline"
)

// Transient flags a burst inside the decay: something the fitted model of
// decaying modes cannot follow stands out of the model's residual for a
// short time (a sensor rattle, a cable knock, another part ringing in).
// The estimators find the bursts (modal.Decay.Transients: the residual's
// mean square over 4 ms blocks, at least 6 dB and ten robust spreads above
// its ordinary level, after the residual was back at that level); the rule
// reports those whose RMS is at least TransientMinRatio times the
// residual's ordinary RMS, with their time.
type Transient struct{}

// Code returns CodeTransient.
func (Transient) Code() string { return CodeTransient }

// Info describes the rule's reason code.
func (Transient) Info() []RuleInfo {
	return []RuleInfo{{
		Code:       CodeTransient,
		Severity:   pipeline.SeverityFlag,
		Summary:    "a burst inside the decay that no decaying mode explains (rattle, knock, something else ringing in), with its time",
		Thresholds: []string{"transient_min_ratio"},
	}}
}

// Check reports the bursts of the decay.
func (Transient) Check(in Input, th Thresholds) []pipeline.Reason {
	if in.Decay == nil {
		return nil
	}
	var out []pipeline.Reason
	for _, tr := range in.Decay.Transients {
		if !finite(tr.Ratio) || tr.Ratio < th.TransientMinRatio {
			continue
		}
		out = append(out, pipeline.Reason{Code: CodeTransient, Severity: pipeline.SeverityFlag,
			Message: fmt.Sprintf("a burst at %.3f s (%.0f ms long) stands %.1f times above the residual of the fitted decay "+
				"(limit %g): a rattle, a knock or something else ringing in; check the sensor mounting and the cable",
				tr.TimeS, 1000*tr.DurationS, tr.Ratio, th.TransientMinRatio)})
	}
	return out
}

// ModeLimit tells when more modes stood above the noise than the analysis
// reports (modal.Options.MaxModes, the configuration key max_modes, or the
// joint fit's component limit): the weakest were left out, and the result
// says so instead of dropping them silently.
type ModeLimit struct{}

// Code returns CodeModeLimit.
func (ModeLimit) Code() string { return CodeModeLimit }

// Info describes the rule's reason code.
func (ModeLimit) Info() []RuleInfo {
	return []RuleInfo{{
		Code:       CodeModeLimit,
		Severity:   pipeline.SeverityFlag,
		Summary:    "more modes stood above the noise than the analysis reports (max_modes); the weakest were left out",
		Thresholds: []string{"mode_limit_min_left_out"},
	}}
}

// Check reports a reached cap.
func (ModeLimit) Check(in Input, th Thresholds) []pipeline.Reason {
	if in.Decay == nil || in.Decay.Capped <= 0 || in.Decay.Capped < th.ModeLimitMinLeftOut {
		return nil
	}
	return []pipeline.Reason{{Code: CodeModeLimit, Severity: pipeline.SeverityFlag,
		Message: fmt.Sprintf("%d more mode(s) stood above the noise but were left out: the limit of reported modes "+
			"was reached (raise max_modes in [analysis], or narrow fmin_hz/fmax_hz)", in.Decay.Capped)}}
}
