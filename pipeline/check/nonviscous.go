package check

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/floats"

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
		level := endLevel(m, d)
		if !d.Isolated && !(finite(d.ExpRSS) && finite(d.LinRSS)) {
			// A decay with a straight-line envelope has a broad spectral
			// peak that the subspace fit may split into two close poles,
			// which are then not band-isolated and carry no envelope
			// diagnostics. Judge the envelope of the group instead.
			d.ExpRSS, d.LinRSS, level = groupShape(in, i)
		}
		if frictionShape(d.ExpRSS, d.LinRSS, level, th) {
			out = append(out, pipeline.Reason{
				Code:     CodeFrictionDecay,
				Severity: pipeline.SeverityFlag,
				Mode:     pipeline.ModeRef(i),
				Message: fmt.Sprintf("%s: the envelope falls along a straight line (its residual is %s of an "+
					"exponential fit's, limit %s): friction, not viscous damping; the damping ratio depends on the "+
					"hit's strength", modeName(m), pct(d.LinRSS/d.ExpRSS), pct(th.FrictionRSSRatio)),
			})
		}
		// a mode with an amplitude curve is judged by AmplitudeDependence
		e, l := d.ZetaEarly, d.ZetaLate
		if len(m.AmplitudeDamping) < 2 && finite(e) && finite(l) && e > 0 && l > 0 {
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

// frictionShape reports a straight-line envelope: the line fits better
// than FrictionRSSRatio of the exponential's residual, over a fall to
// FrictionMaxEndLevel of the start or lower.
func frictionShape(expRSS, linRSS, level float64, th Thresholds) bool {
	return finite(expRSS) && finite(linRSS) && expRSS > 0 && linRSS >= 0 && linRSS < th.FrictionRSSRatio*expRSS &&
		level <= th.FrictionMaxEndLevel
}

// frictionLike reports whether NonViscous judges mode m friction from its
// own envelope diagnostics.
func frictionLike(m pipeline.Mode, d modal.ModeDiag, th Thresholds) bool {
	return frictionShape(d.ExpRSS, d.LinRSS, endLevel(m, d), th)
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

// groupShape returns the envelope diagnostics of the group of modes within
// groupWidth of mode i: the response band-passed around the group (the band
// stops half-way to any mode outside it), its Hilbert envelope from the
// onset, the residuals of the exponential and straight-line fits, and the
// level the envelope falls to over its span above the noise. NaN when the
// input does not allow it.
func groupShape(in Input, i int) (expRSS, linRSS, level float64) {
	nan := math.NaN()
	ms := modes(in)
	if in.Response == nil || in.Decay == nil || i < 0 || i >= len(ms) {
		return nan, nan, 1
	}
	x, fs := in.Response.Samples, in.Response.SampleRate
	f := ms[i].FrequencyHz
	const groupWidth = 0.05
	lo, hi := f*(1-3*groupWidth), f*(1+3*groupWidth)
	for j, m := range ms {
		if j == i || math.Abs(m.FrequencyHz-f) <= groupWidth*f {
			continue
		}
		if m.FrequencyHz < f {
			lo = math.Max(lo, (m.FrequencyHz+f)/2)
		} else {
			hi = math.Min(hi, (m.FrequencyHz+f)/2)
		}
	}
	onset := in.Decay.Onset
	if !(fs > 0) || !(lo > 0) || hi >= fs/2 || onset < 0 || onset >= len(x) {
		return nan, nan, 1
	}
	// Only the span where the group stands above the noise matters: twice
	// the time its slowest mode takes to fall to the band's noise, and a
	// second more (the filter settles, a friction stop shows) -- not the
	// whole record (a 30 s record costs 2^20-point transforms otherwise).
	noise := in.Decay.NoiseRMS * math.Sqrt((hi-lo)/(fs/2))
	end := len(x)
	if noise > 0 {
		tEnd := 0.0
		for _, m := range ms {
			if m.FrequencyHz < lo || m.FrequencyHz > hi {
				continue
			}
			sg := m.DampingRatio * 2 * math.Pi * m.FrequencyHz
			if !(sg > 0) || !(m.Amplitude > 0) {
				tEnd = math.Inf(1)
				break
			}
			tEnd = math.Max(tEnd, math.Log(math.Max(m.Amplitude/noise, 1))/sg)
		}
		if n := 2*tEnd + 1; n*fs < float64(len(x)-onset) {
			end = onset + int(n*fs)
		}
	}
	// at the reduced rate of the cross-checks (16 samples a cycle at the
	// band's top): the envelope is the same, the transforms a fraction
	xd, fsx, dec := modal.Decimate(x[:end], fs, 1.2*hi)
	if !(hi < fsx/2) {
		return nan, nan, 1
	}
	band, err := modal.BandPass(nil, xd, fsx, lo, hi, 2)
	if err != nil {
		return nan, nan, 1
	}
	env := modal.Hilbert(nil, band)
	start := onset/dec + modal.EnvelopeEdge(fsx, f)
	if start >= len(env)-4 {
		return nan, nan, 1
	}
	env = env[start:]
	expRSS, linRSS = modal.EnvelopeShape(env, fsx, noise)
	n := len(env)
	for k, v := range env {
		if v < 10*noise {
			n = k
			break
		}
	}
	if n < 2 || env[0] <= 0 {
		return expRSS, linRSS, 1
	}
	// Beating modes also send the group envelope to a null, but it rises
	// again; a friction decay stays down once it has stopped.
	if rest := env[n:]; len(rest) > 0 && floats.Max(rest) > 0.3*env[0] {
		return nan, nan, 1
	}
	return expRSS, linRSS, env[n-1] / env[0]
}
