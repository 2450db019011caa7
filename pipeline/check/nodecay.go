package check

import (
	"fmt"

	"github.com/ringlog/ringlog/pipeline"
)

// NoDecay rejects a hit in which nothing decays like a structural mode:
// the estimators found no mode, or none with a positive damping ratio, a
// positive natural frequency and an initial amplitude above
// MinModeNoiseRatio times the noise RMS.
type NoDecay struct{}

// Code returns CodeNoDecay.
func (NoDecay) Code() string { return CodeNoDecay }

// Info describes the rule's reason code.
func (NoDecay) Info() []RuleInfo {
	return []RuleInfo{{
		Code:       CodeNoDecay,
		Severity:   pipeline.SeverityReject,
		Summary:    "nothing in the record decays like a structural mode",
		Thresholds: []string{"min_mode_noise_ratio"},
	}}
}

// Check looks for at least one decaying mode above the noise.
func (NoDecay) Check(in Input, th Thresholds) []pipeline.Reason {
	reject := func(format string, args ...any) []pipeline.Reason {
		return []pipeline.Reason{{Code: CodeNoDecay, Severity: pipeline.SeverityReject, Message: fmt.Sprintf(format, args...)}}
	}
	if !usable(in.Response) {
		return reject("the response channel holds no samples to analyse")
	}
	ms := modes(in)
	if len(ms) == 0 {
		return reject("no decaying mode found in the response: check the accelerometer, its cable and the hit location")
	}
	noise := 0.0
	if in.Decay.NoiseRMS > 0 && finite(in.Decay.NoiseRMS) {
		noise = in.Decay.NoiseRMS
	}
	best := 0.0
	for _, m := range ms {
		if !finite(m.DampingRatio) || m.DampingRatio <= 0 || !finite(m.FrequencyHz) || m.FrequencyHz <= 0 || !finite(m.Amplitude) {
			continue
		}
		a := m.Amplitude
		if a < 0 {
			a = -a
		}
		if a > th.MinModeNoiseRatio*noise && a > 0 {
			return nil
		}
		if a > best {
			best = a
		}
	}
	if best > 0 && noise > 0 {
		return reject("none of the %d modes found decays clearly above the noise: the strongest starts at %.3g times "+
			"the noise RMS (minimum %g); check the accelerometer, its cable and the hit location",
			len(ms), best/noise, th.MinModeNoiseRatio)
	}
	return reject("none of the %d modes found decays (no positive damping ratio with an amplitude above the noise): "+
		"check the accelerometer, its cable and the hit location", len(ms))
}
