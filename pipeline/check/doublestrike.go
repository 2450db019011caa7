package check

import (
	"fmt"

	"github.com/ringlog/ringlog/pipeline"
)

// DoubleStrike rejects a hit whose force channel holds more than one
// pulse: after a pulse the force fell below StrikeReturnFraction of the
// main peak and later rose above StrikeRiseFraction of it again (and
// above 5 noise standard deviations of the force). The response then
// holds two overlapping decays started at different times, and the force
// spectrum has notches. Without a force channel the rule is silent.
type DoubleStrike struct{}

// Code returns CodeDoubleStrike.
func (DoubleStrike) Code() string { return CodeDoubleStrike }

// Info describes the rule's reason code.
func (DoubleStrike) Info() []RuleInfo {
	return []RuleInfo{{
		Code:       CodeDoubleStrike,
		Severity:   pipeline.SeverityReject,
		Summary:    "the force returned near zero and then rose again: the hammer struck twice",
		Thresholds: []string{"strike_return_fraction", "strike_rise_fraction"},
	}}
}

// Check looks at the force channel.
func (DoubleStrike) Check(in Input, th Thresholds) []pipeline.Reason {
	fp, ok := in.forcePulseOf(th)
	if !ok {
		return nil
	}
	ps := fp.pulses(th)
	if len(ps) < 2 {
		return nil
	}
	// Report the strongest pulse other than the main one.
	var other pulse
	for _, p := range ps {
		if p.peak != fp.peak && p.height > other.height {
			other = p
		}
	}
	if other.height == 0 {
		return nil
	}
	delayMS := 1000 * float64(other.peak-fp.peak) / fp.fs
	when := fmt.Sprintf("%.1f ms after", delayMS)
	if delayMS < 0 {
		when = fmt.Sprintf("%.1f ms before", -delayMS)
	}
	msg := fmt.Sprintf("the force shows %d pulses: one of %s of the main pulse (%s at %.4f s) peaks %s it, "+
		"with the force below %s in between; the hammer struck twice: re-hit with a quick, firm stroke",
		len(ps), pct(other.height/fp.height), qty(fp.height, fp.unit), float64(fp.peak)/fp.fs, when, pct(th.StrikeReturnFraction))
	return []pipeline.Reason{{Code: CodeDoubleStrike, Severity: pipeline.SeverityReject, Message: msg}}
}
