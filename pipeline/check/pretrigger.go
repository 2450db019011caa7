package check

import (
	"fmt"
	"math"

	"github.com/ringlog/ringlog/pipeline"
	"gonum.org/v1/gonum/mat"
)

// PreTrigger rejects a hit whose structure was already vibrating when the
// record started, and flags a hit whose record has no quiet lead-in to
// check that on.
//
// The lead-in is the response before Decay.Trigger, less LeadInGuardS
// seconds just before the trigger. With at least MinLeadInSamples samples
// it is checked twice:
//
//   - broadband: its RMS (about its mean) exceeds PreRingNoiseRatio times
//     the noise RMS and PreRingPeakFraction of the response peak; the noise
//     RMS is the smaller of Decay.NoiseRMS and the RMS of the record's last
//     tenth, both of which ringing can only inflate;
//   - at each mode frequency (that fits at least one cycle into the
//     lead-in): a least-squares sinusoid fitted to the lead-in has an
//     amplitude above PreRingPeakFraction of the peak and above 4
//     standard errors, 4*sqrt(2/n)*s with s the residual RMS (for white
//     noise the squared amplitude over its scale is chi-square with 2
//     degrees of freedom, so chance exceeds 4 standard errors with
//     probability exp(-8), about 3e-4). This catches ringing that also
//     went on after the hit and so inflates every noise estimate.
//
// With a shorter lead-in, a first sample above StartLevelFraction of the
// peak and above 5 noise RMS means the recording began in the middle of a
// vibration (a struck structure at rest starts from zero): rejected.
// Otherwise the hit is flagged no_lead_in: the start cannot be checked.
type PreTrigger struct{}

// Code returns CodePreRinging.
func (PreTrigger) Code() string { return CodePreRinging }

// Info describes the rule's reason codes.
func (PreTrigger) Info() []RuleInfo {
	return []RuleInfo{
		{
			Code:     CodePreRinging,
			Severity: pipeline.SeverityReject,
			Summary:  "the structure was already vibrating before the hit, or the record starts mid-vibration",
			Thresholds: []string{"min_lead_in_samples", "lead_in_guard_s", "pre_ring_noise_ratio",
				"pre_ring_peak_fraction", "start_level_fraction"},
		},
		{
			Code:       CodeNoLeadIn,
			Severity:   pipeline.SeverityFlag,
			Summary:    "the record has no quiet lead-in before the hit, so a structure already vibrating cannot be detected",
			Thresholds: []string{"min_lead_in_samples", "lead_in_guard_s"},
		},
	}
}

// Check looks at the response before the trigger.
func (PreTrigger) Check(in Input, th Thresholds) []pipeline.Reason {
	if !usable(in.Response) || in.Decay == nil {
		return nil
	}
	x := in.Response.Samples
	fs := in.Response.SampleRate
	trig := min(max(in.Decay.Trigger, 0), len(x))
	guard := int(math.Ceil(th.LeadInGuardS * fs))
	n := trig - guard

	peak := in.Decay.Peak
	if !finite(peak) || peak <= 0 {
		peak = peakAbs(x[trig:])
	}
	if peak <= 0 {
		return nil // a dead channel: no_decay says so
	}
	noise := math.Inf(1)
	if d := in.Decay.NoiseRMS; finite(d) && d > 0 {
		noise = d
	}
	if k := len(x) / 10; k >= th.MinLeadInSamples {
		noise = math.Min(noise, rmsAboutMean(x[len(x)-k:]))
	}
	if math.IsInf(noise, 1) {
		noise = 0
	}
	reject := func(format string, args ...any) []pipeline.Reason {
		return []pipeline.Reason{{Code: CodePreRinging, Severity: pipeline.SeverityReject, Message: fmt.Sprintf(format, args...)}}
	}

	if n < th.MinLeadInSamples {
		x0 := x[0] - median(x)
		if finite(x0) && math.Abs(x0) > th.StartLevelFraction*peak && math.Abs(x0) > 5*noise {
			return reject("the record starts at %s of the response peak with no quiet lead-in (the hit at %.4f s): "+
				"the structure was already vibrating when recording began; set a pre-trigger on the recorder",
				pct(math.Abs(x0)/peak), float64(trig)/fs)
		}
		return []pipeline.Reason{{
			Code:     CodeNoLeadIn,
			Severity: pipeline.SeverityFlag,
			Message: fmt.Sprintf("only %d samples (%.1f ms) before the hit at %.4f s, fewer than %d: cannot check "+
				"that the structure was at rest; set a pre-trigger of at least %.0f ms on the recorder",
				max(trig, 0), 1000*float64(trig)/fs, float64(trig)/fs, th.MinLeadInSamples,
				math.Ceil(1000*(float64(th.MinLeadInSamples+guard)/fs))),
		}}
	}

	lead := x[:n]
	span := fmt.Sprintf("0-%.4f s", float64(n)/fs)
	if rms := rmsAboutMean(lead); rms > th.PreRingNoiseRatio*noise && rms > th.PreRingPeakFraction*peak {
		return reject("before the hit (%s) the response RMS is %s of the peak and %.1f times the noise "+
			"(limits %s and %g times): the structure was already vibrating; let it settle before hitting",
			span, pct(rms/peak), rms/noise, pct(th.PreRingPeakFraction), th.PreRingNoiseRatio)
	}
	best, bestF := 0.0, 0.0
	for _, m := range modes(in) {
		f := m.FrequencyHz
		if !finite(f) || f <= 0 || f >= fs/2 || f*float64(n)/fs < 1 {
			continue
		}
		amp, se, ok := toneAmplitude(lead, fs, f)
		if ok && amp > th.PreRingPeakFraction*peak && amp > 4*se && amp > best {
			best, bestF = amp, f
		}
	}
	if best > 0 {
		return reject("before the hit (%s) the response already rings at the mode at %s with %s of the peak "+
			"amplitude (limit %s): the structure was still vibrating; let it settle before hitting",
			span, hz(bestF), pct(best/peak), pct(th.PreRingPeakFraction))
	}
	return nil
}

// toneAmplitude fits c + a cos(2 pi f t) + b sin(2 pi f t) to x by least
// squares and returns the amplitude sqrt(a^2+b^2) and its white-noise
// standard error sqrt(2/n) times the residual RMS. ok is false when the
// fit is singular or x holds non-finite values.
func toneAmplitude(x []float64, fs, f float64) (amp, se float64, ok bool) {
	n := len(x)
	if n < 4 {
		return 0, 0, false
	}
	a := mat.NewDense(n, 3, nil)
	y := mat.NewVecDense(n, nil)
	w := 2 * math.Pi * f / fs
	for i, v := range x {
		if !finite(v) {
			return 0, 0, false
		}
		s, c := math.Sincos(w * float64(i))
		a.Set(i, 0, 1)
		a.Set(i, 1, c)
		a.Set(i, 2, s)
		y.SetVec(i, v)
	}
	var coef mat.VecDense
	if err := coef.SolveVec(a, y); err != nil {
		return 0, 0, false
	}
	var fit mat.VecDense
	fit.MulVec(a, &coef)
	var ss float64
	for i := 0; i < n; i++ {
		r := y.AtVec(i) - fit.AtVec(i)
		ss += r * r
	}
	s := math.Sqrt(ss / float64(n-3))
	return math.Hypot(coef.AtVec(1), coef.AtVec(2)), s * math.Sqrt(2/float64(n)), true
}
