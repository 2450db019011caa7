package check

import (
	"math"

	"github.com/ringlog/ringlog/pipeline"
)

// minPulseNoiseRatio: a force channel whose largest excursion is below
// this multiple of its noise standard deviation holds no usable pulse
// (our choice, 26 dB); the force rules then stay silent.
const minPulseNoiseRatio = 20

// riseNoiseSD: a second pulse must also rise above this many noise
// standard deviations of the force channel, so that noise on a weak force
// signal is not taken for a bounce (our choice).
const riseNoiseSD = 5

// forcePulse is the force channel prepared for the force rules.
type forcePulse struct {
	g          []float64 // baseline removed, main pulse positive; non-finite samples set to 0
	fs         float64   // sample rate
	peak       int       // index of the main pulse's peak
	height     float64   // main pulse's peak above the baseline
	start, end int       // main pulse: first and last sample above the return level
	sd         float64   // robust noise standard deviation of the force
	unit       string
}

// findPulse locates the main force pulse, ok false when the channel has
// none that stands out of its noise.
func findPulse(ch *pipeline.Channel, th Thresholds) (forcePulse, bool) {
	if !usable(ch) || len(ch.Samples) < 3 {
		return forcePulse{}, false
	}
	// the baseline is the median of the channel: a pulse is a few samples
	// of a long record, so an evenly spaced subsample of 65536 gives it
	// as well at a fraction of the cost
	base := median(strided(ch.Samples, 1<<16))
	g := make([]float64, len(ch.Samples))
	hi, lo := 0.0, 0.0
	for i, v := range ch.Samples {
		if finite(v) {
			g[i] = v - base
		}
		if g[i] > hi { // g is finite: plain comparisons suffice
			hi = g[i]
		}
		if g[i] < lo {
			lo = g[i]
		}
	}
	if -lo > hi { // hammer wired with negative polarity
		for i := range g {
			g[i] = -g[i]
		}
	}
	p := 0
	for i, v := range g {
		if v > g[p] {
			p = i
		}
	}
	fp := forcePulse{g: g, fs: ch.SampleRate, peak: p, height: g[p], sd: robustSD(strided(g, 1<<16), 0), unit: ch.Unit}
	if !(fp.height > 0) || fp.height < minPulseNoiseRatio*fp.sd {
		return forcePulse{}, false
	}
	ret := th.StrikeReturnFraction * fp.height
	fp.start, fp.end = p, p
	for fp.start > 0 && g[fp.start-1] > ret {
		fp.start--
	}
	for fp.end+1 < len(g) && g[fp.end+1] > ret {
		fp.end++
	}
	return fp, true
}

// strided returns at most about n evenly spaced samples of x (x itself
// when it is not longer).
func strided(x []float64, n int) []float64 {
	if len(x) <= n {
		return x
	}
	step := (len(x) + n - 1) / n
	out := make([]float64, 0, len(x)/step+1)
	for i := 0; i < len(x); i += step {
		out = append(out, x[i])
	}
	return out
}

// quiet0 reports whether the rest samples before the rising edge that
// reaches i (the samples above ret leading to it) all lie within the
// return level ret on both sides.
func quiet0(g []float64, i, rest int, ret float64) bool {
	for i > 0 && g[i-1] >= ret {
		i--
	}
	if i < rest {
		return false
	}
	for _, v := range g[i-rest : i] {
		if math.Abs(v) >= ret {
			return false
		}
	}
	return true
}

// pulseCache holds the force pulse of one hit, found once by whichever
// rule asks first.
type pulseCache struct {
	done bool
	fp   forcePulse
	ok   bool
}

// forcePulseOf returns the hit's main force pulse, located once per Run.
func (in Input) forcePulseOf(th Thresholds) (forcePulse, bool) {
	if in.pulse == nil {
		return findPulse(in.Force, th)
	}
	if !in.pulse.done {
		in.pulse.fp, in.pulse.ok = findPulse(in.Force, th)
		in.pulse.done = true
	}
	return in.pulse.fp, in.pulse.ok
}

// pulse is one excursion of the force above the rise level.
type pulse struct {
	peak   int
	height float64
}

// pulses splits the force into pulses: a pulse starts when the force
// rises above the rise level and ends when it falls below the return
// level.
//
// A hammer only pushes: a pulse is positive. And a pulse rings: the
// recorder's anti-alias filter answers a short pulse with alternating
// lobes, the negative one first. So the force is back at rest only when it
// has stayed within the return level on both sides for as long as the main
// pulse lasted (at least half a millisecond); a rise before that is the
// pulse's own ringing, not a second strike. The same quiet lead-in is asked
// of a pulse before the main one: a rise in the record's first samples,
// with nothing before it to show the force at rest, is the recorder's or
// the noise's, not a strike that can be told from them.
func (fp forcePulse) pulses(th Thresholds) []pulse {
	rise := math.Max(th.StrikeRiseFraction*fp.height, riseNoiseSD*fp.sd)
	ret := th.StrikeReturnFraction * fp.height
	rest := max(fp.end-fp.start+1, int(math.Ceil(0.0005*fp.fs)), 2)
	var out []pulse
	in := false
	quiet := rest // samples in a row within the return level
	for i, v := range fp.g {
		if math.Abs(v) < ret {
			quiet++
		} else {
			quiet = 0
		}
		switch {
		case !in && v > rise && ((i >= fp.start && i <= fp.end) || quiet0(fp.g, i, rest, ret)):
			in = true
			out = append(out, pulse{peak: i, height: v})
		case in && quiet >= rest:
			in = false
		}
		if in && v > out[len(out)-1].height {
			out[len(out)-1] = pulse{peak: i, height: v}
		}
	}
	return out
}
