package check

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/ringlog/ringlog/pipeline"
)

// Metadata keys of a recording that the rules read. A key present in
// Recording.Meta overrides the threshold of the same name (in-file
// metadata is a later source than the configuration, DESIGN.md sec. 3).
const (
	MetaExpectSingleMode = "expect_single_mode" // true/false, yes/no, 1/0
	MetaTargetHz         = "target_hz"          // frequency of the intended mode, Hz
)

// SeveralModes flags a hit where several modes rang although one was
// meant, and pairs of modes so close that they beat.
//
// Mixed modes: when the hit was meant to excite one mode
// (ExpectSingleMode or TargetHz > 0, or the recording's metadata says
// so), every other mode whose share of the response energy exceeds
// MaxOtherEnergyShare is flagged. The intended mode is the one nearest to
// TargetHz, else the most energetic one.
//
// Beating: two neighbouring modes are flagged (both) when they are closer
// than BeatBandwidths half-power bandwidths (2 zeta f_n, the larger of
// the two), or when their separation times the usable decay span is below
// MinBeatPeriods. Close modes share one band: the envelope and the
// logarithmic decrement see a beat rather than a decay, and the parametric
// estimates of the two are correlated.
type SeveralModes struct{}

// Code returns CodeMixedModes.
func (SeveralModes) Code() string { return CodeMixedModes }

// Info describes the rule's reason codes.
func (SeveralModes) Info() []RuleInfo {
	return []RuleInfo{
		{
			Code:       CodeMixedModes,
			Severity:   pipeline.SeverityFlag,
			Summary:    "the hit was meant for one mode but another carries a large share of the response energy",
			Thresholds: []string{"expect_single_mode", "target_hz", "max_other_energy_share"},
		},
		{
			Code:       CodeBeatingModes,
			Severity:   pipeline.SeverityFlag,
			Summary:    "two modes are so close in frequency that they beat",
			Thresholds: []string{"beat_bandwidths", "min_beat_periods"},
		},
	}
}

// Check looks at the energy shares and the spacing of the modes.
func (SeveralModes) Check(in Input, th Thresholds) []pipeline.Reason {
	out := mixedModes(in, th)
	return append(out, beatingModes(in, th)...)
}

// intention returns whether one mode was meant and its target frequency
// (0 when none), from the thresholds overridden by the metadata.
func intention(in Input, th Thresholds) (single bool, target float64) {
	single, target = th.ExpectSingleMode, th.TargetHz
	if in.Rec != nil && in.Rec.Meta != nil {
		if v, ok := in.Rec.Meta[MetaExpectSingleMode]; ok {
			switch strings.ToLower(strings.TrimSpace(v)) {
			case "yes", "y", "on":
				single = true
			case "no", "n", "off":
				single = false
			default:
				if b, err := strconv.ParseBool(strings.TrimSpace(v)); err == nil {
					single = b
				}
			}
		}
		if v, ok := in.Rec.Meta[MetaTargetHz]; ok {
			if f, err := strconv.ParseFloat(strings.TrimSpace(v), 64); err == nil && finite(f) && f >= 0 {
				target = f
			}
		}
	}
	return single || target > 0, target
}

func mixedModes(in Input, th Thresholds) []pipeline.Reason {
	single, target := intention(in, th)
	ms := modes(in)
	if !single || len(ms) < 2 {
		return nil
	}
	main := -1
	for i, m := range ms {
		if in.isDropped(i) {
			continue
		}
		switch {
		case target > 0:
			if finite(m.FrequencyHz) && (main < 0 || math.Abs(m.FrequencyHz-target) < math.Abs(ms[main].FrequencyHz-target)) {
				main = i
			}
		case finite(m.EnergyShare) && (main < 0 || m.EnergyShare > ms[main].EnergyShare):
			main = i
		}
	}
	if main < 0 {
		return nil
	}
	meant := "the intended " + modeName(ms[main])
	if target > 0 {
		meant = fmt.Sprintf("the %s nearest the target %s", modeName(ms[main]), hz(target))
	}
	var out []pipeline.Reason
	for i, m := range ms {
		if i == main || in.isDropped(i) || !finite(m.EnergyShare) || !(m.EnergyShare > th.MaxOtherEnergyShare) {
			continue
		}
		out = append(out, pipeline.Reason{
			Code:     CodeMixedModes,
			Severity: pipeline.SeverityFlag,
			Mode:     pipeline.ModeRef(i),
			Message: fmt.Sprintf("the hit was meant for one mode, but the %s carries %s of the response energy "+
				"(limit %s; %s carries %s): move the hit or the pick-up away from this mode's nodes",
				modeName(m), pct(m.EnergyShare), pct(th.MaxOtherEnergyShare), meant, pct(ms[main].EnergyShare)),
		})
	}
	return out
}

func beatingModes(in Input, th Thresholds) []pipeline.Reason {
	ms := modes(in)
	if len(ms) < 2 {
		return nil
	}
	idx := make([]int, 0, len(ms))
	for i, m := range ms {
		if finite(m.FrequencyHz) && m.FrequencyHz > 0 && !in.isDropped(i) {
			idx = append(idx, i)
		}
	}
	sort.SliceStable(idx, func(a, b int) bool { return ms[idx[a]].FrequencyHz < ms[idx[b]].FrequencyHz })
	span := decaySpan(in)
	var out []pipeline.Reason
	for k := 1; k < len(idx); k++ {
		i, j := idx[k-1], idx[k]
		a, b := ms[i], ms[j]
		df := b.FrequencyHz - a.FrequencyHz
		bw := math.Max(halfPowerBW(a), halfPowerBW(b))
		t := span
		if da, ok := diag(in, i); ok && da.UsableS > 0 && finite(da.UsableS) {
			if db, ok := diag(in, j); ok && db.UsableS > 0 && finite(db.UsableS) {
				t = math.Min(da.UsableS, db.UsableS)
			}
		}
		var why string
		switch {
		case bw > 0 && df < th.BeatBandwidths*bw:
			why = fmt.Sprintf("%.1f half-power bandwidths (limit %g)", df/bw, th.BeatBandwidths)
		case t > 0 && df*t < th.MinBeatPeriods:
			why = fmt.Sprintf("%.1f beat periods in the %.3f s decay (limit %g)", df*t, t, th.MinBeatPeriods)
		default:
			continue
		}
		msg := fmt.Sprintf("modes at %s and %s are only %.3g Hz apart, %s: they beat, and their damping "+
			"ratios are less certain than their intervals say", hz(a.FrequencyHz), hz(b.FrequencyHz), df, why)
		for _, m := range []int{i, j} {
			out = append(out, pipeline.Reason{Code: CodeBeatingModes, Severity: pipeline.SeverityFlag, Mode: pipeline.ModeRef(m), Message: msg})
		}
	}
	return out
}

// halfPowerBW returns the half-power bandwidth 2 zeta f_n of a mode, 0
// when its damping ratio is unusable.
func halfPowerBW(m pipeline.Mode) float64 {
	if !finite(m.DampingRatio) || m.DampingRatio <= 0 || !finite(m.FrequencyHz) {
		return 0
	}
	return 2 * m.DampingRatio * m.FrequencyHz
}

// decaySpan returns the length in seconds of the response from the onset
// of the decay to the end of the record, 0 when unknown.
func decaySpan(in Input) float64 {
	if !usable(in.Response) {
		return 0
	}
	onset := 0
	if in.Decay != nil && in.Decay.Onset > 0 && in.Decay.Onset < len(in.Response.Samples) {
		onset = in.Decay.Onset
	}
	return float64(len(in.Response.Samples)-onset) / in.Response.SampleRate
}
