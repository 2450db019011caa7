package modal

import (
	"math"
	"slices"
)

// Transient detection: a burst in the residual of the fitted model inside
// the decay (a sensor rattle, a cable knock, something else ringing in).
// The residual of a good fit is the noise; the model cannot follow a burst,
// so it stands out of the residual where it happens.
const (
	transientBlockS   = 0.004 // block length for the residual's mean square, seconds
	transientRatio    = 4.0   // a burst's mean square is at least this many times the ordinary one (6 dB)
	transientSpread   = 10.0  // ... and this many robust spreads above it
	transientMaxShare = 0.25  // a burst is shorter than this share of the fitted span
)

// findTransients looks for bursts in the residual y - model over the fit.
// A burst must rise again after the residual was back at its ordinary
// level: a model error at the start of the decay (the impact, an
// unmodelled heavily damped mode) falls off from the onset and is no burst.
func (a *analysis) findTransients(fit *Fit, y []float64) {
	b := max(16, int(transientBlockS*a.fs))
	nb := len(y) / b
	if nb < 8 {
		return
	}
	r := fit.ModelTo(make([]float64, len(y)), 0, nil, true)
	for i := range r {
		r[i] = y[i] - r[i]
	}
	// a moving average over four blocks is taken out first: the slow
	// wander of 1/f noise is no burst (a knock or a rattle rings well
	// above 1/(16 ms))
	w := 2 * b
	var acc float64
	for i := 0; i < min(w, len(r)); i++ {
		acc += r[i]
	}
	hp := make([]float64, len(r))
	for i := range r {
		if j := i + w; j < len(r) {
			acc += r[j]
		}
		if j := i - w - 1; j >= 0 {
			acc -= r[j]
		}
		cnt := min(i+w, len(r)-1) - max(i-w, 0) + 1
		hp[i] = r[i] - acc/float64(cnt)
	}
	ms := make([]float64, nb)
	for j := range ms {
		var s float64
		for _, d := range hp[j*b : (j+1)*b] {
			s += d * d
		}
		ms[j] = s / float64(b)
	}
	srt := slices.Clone(ms)
	slices.Sort(srt)
	m0 := srt[nb/2]
	for i := range srt {
		srt[i] = math.Abs(srt[i] - m0)
	}
	slices.Sort(srt)
	spread := math.Max(1.4826*srt[nb/2], m0*math.Sqrt(2/float64(b)))
	thr := math.Max(transientRatio*m0, m0+transientSpread*spread)
	quiet := 2 * m0
	// skip the start until the residual has been quiet for two blocks
	j := 0
	for run := 0; j < nb && run < 2; j++ {
		if ms[j] < quiet {
			run++
		} else {
			run = 0
		}
	}
	for j < nb {
		if ms[j] <= thr {
			j++
			continue
		}
		k, peak := j, 0.0
		for k < nb && ms[k] > quiet {
			peak = math.Max(peak, ms[k])
			k++
		}
		if float64(k-j) <= transientMaxShare*float64(nb) && k < nb {
			a.transients = append(a.transients, Transient{
				TimeS:     float64(a.hit.onset+j*b) / a.fs,
				DurationS: float64((k-j)*b) / a.fs,
				Ratio:     math.Sqrt(peak / m0),
			})
		}
		j = k
	}
}
