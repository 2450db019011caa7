package check

import (
	"fmt"
	"math"

	"github.com/ringlog/ringlog/pipeline"
)

// Clipping rejects a hit whose response or force channel clipped: samples
// at the channel's full scale (when the range is known), or flat tops at
// the extremes of the record.
//
// A flat top is a run of at least ClipFlatRun consecutive equal samples
// at the record's maximum or minimum. Only an extreme of at least half the
// channel's largest magnitude is looked at (a one-sided force pulse has a
// quiet minimum), and a run is not counted when, within one run length on
// either side, the record falls away from it by no more than 30
// resolution steps (the finest non-zero step between samples): that is a
// smooth peak that the converter's resolution flattened, not a cut one.
type Clipping struct{}

// Code returns CodeClipped.
func (Clipping) Code() string { return CodeClipped }

// Info describes the rule's reason code.
func (Clipping) Info() []RuleInfo {
	return []RuleInfo{{
		Code:       CodeClipped,
		Severity:   pipeline.SeverityReject,
		Summary:    "the response or force reached the channel's full scale or is flat-topped at its extremes",
		Thresholds: []string{"clip_full_scale_tolerance", "clip_full_scale_samples", "clip_flat_run"},
	}}
}

// Check looks at the response and the force channel.
func (Clipping) Check(in Input, th Thresholds) []pipeline.Reason {
	var out []pipeline.Reason
	for _, ch := range []*pipeline.Channel{in.Response, in.Force} {
		if !usable(ch) {
			continue
		}
		if msg := clipMessage(ch, th); msg != "" {
			out = append(out, pipeline.Reason{Code: CodeClipped, Severity: pipeline.SeverityReject, Message: msg})
		}
	}
	return out
}

// clipMessage returns the finding for one channel, "" when clean.
func clipMessage(ch *pipeline.Channel, th Thresholds) string {
	x := ch.Samples
	fs := ch.SampleRate
	if ch.FullScale > 0 && finite(ch.FullScale) {
		lim := ch.FullScale * (1 - th.ClipFullScaleTolerance)
		n, first := 0, -1
		for i, v := range x {
			if finite(v) && math.Abs(v) >= lim {
				n++
				if first < 0 {
					first = i
				}
			}
		}
		if n >= max(th.ClipFullScaleSamples, 1) {
			return fmt.Sprintf("%s reaches its full scale of %s on %d samples (first at %.4f s); "+
				"the amplifier or converter clipped: re-hit softer or raise the range",
				channelLabel(ch), qty(ch.FullScale, ch.Unit), n, float64(first)/fs)
		}
	}

	hi, lo := math.Inf(-1), math.Inf(1)
	for _, v := range x {
		// plain comparisons: v is finite, so math.Max's NaN and signed
		// zero handling (several times the cost on a long record) is not
		// needed
		if finite(v) {
			if v > hi {
				hi = v
			}
			if v < lo {
				lo = v
			}
		}
	}
	if !(hi > lo) {
		return "" // constant or empty record: nothing to clip
	}
	mag := math.Max(math.Abs(hi), math.Abs(lo))
	minRun := max(th.ClipFlatRun, 2)
	q := -1.0 // finestStep(x), found when a flat run first needs it
	var (
		runs, samples, longest int
		first                  = -1
		level                  float64
	)
	for _, ext := range []float64{hi, lo} {
		if math.Abs(ext) < 0.5*mag {
			continue
		}
		tol := 1e-12 * mag
		for i := 0; i < len(x); {
			if !(math.Abs(x[i]-ext) <= tol) {
				i++
				continue
			}
			j := i
			for j+1 < len(x) && math.Abs(x[j+1]-ext) <= tol {
				j++
			}
			n := j - i + 1
			if n >= minRun {
				if q < 0 {
					q = finestStep(x)
				}
				if fall := sideFall(x, i, j, ext); fall > flatFallQuanta*q {
					runs++
					samples += n
					if n > longest {
						longest = n
					}
					if first < 0 || i < first {
						first = i
						level = ext
					}
				}
			}
			i = j + 1
		}
	}
	if runs == 0 {
		return ""
	}
	return fmt.Sprintf("%s is flat-topped at %s: %d samples in %d flat runs at the record's extremes "+
		"(longest %d samples, first at %.4f s); the amplifier or converter clipped: re-hit softer or raise the range",
		channelLabel(ch), qty(level, ch.Unit), samples, runs, longest, float64(first)/fs)
}

// flatFallQuanta: a flat run counts as clipping when the record falls
// away from it by more than this many resolution steps within one run
// length on each side. A smooth peak flattened by quantisation falls by
// at most about 10 steps there: a parabola x = M - c t^2 that stays within
// one step q of its top for |t| <= h has fallen by c (3h)^2 <= 9q at
// three half-widths. Our choice, three times that.
const flatFallQuanta = 30

// sideFall returns how far the record falls away from the flat run
// x[i..j] at level ext within one run length on either side: the smaller
// of the two sides' largest departures (the one side there is at a record
// end).
func sideFall(x []float64, i, j int, ext float64) float64 {
	n := j - i + 1
	fall := math.Inf(1)
	side := func(from, to int) {
		d, any := 0.0, false
		for k := max(from, 0); k <= min(to, len(x)-1); k++ {
			if finite(x[k]) {
				d = math.Max(d, math.Abs(ext-x[k]))
				any = true
			}
		}
		if any {
			fall = math.Min(fall, d)
		}
	}
	if i > 0 {
		side(i-n, i-1)
	}
	if j+1 < len(x) {
		side(j+1, j+n)
	}
	if math.IsInf(fall, 1) {
		return 0
	}
	return fall
}

// finestStep returns the smallest non-zero difference between consecutive
// samples: the resolution of the record (its quantisation step when it
// came from a converter; for an unquantised record a tiny number), 0 when
// there is none.
func finestStep(x []float64) float64 {
	q := math.Inf(1)
	for i := 1; i < len(x); i++ {
		if finite(x[i]) && finite(x[i-1]) {
			if d := math.Abs(x[i] - x[i-1]); d > 0 && d < q {
				q = d
			}
		}
	}
	if math.IsInf(q, 1) {
		return 0
	}
	return q
}
