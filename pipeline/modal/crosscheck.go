package modal

import (
	"fmt"
	"math"
	"math/cmplx"

	"github.com/ringlog/ringlog/pipeline"
)

// Cross-check estimators of one mode: Hilbert envelope and logarithmic
// decrement on a band-isolated signal, half-power bandwidth on the FRF or
// the response spectrum. They run on the record as recorded (windowed, if
// a window was applied) and are corrected for the window afterwards.

// crossBandFactor widens the cross-check band beyond the minimum of
// MinBandwidth (7 half-power bandwidths), so that the filter edges sit
// further from the mode.
const crossBandFactor = 1.2

// decimateLow low-passes src (sampled at fs) with a zero-phase FIR (pass
// band up to hi, samples beyond the ends taken as zero) and returns every
// d-th output, output m at the time of src[m d] (d < 2: src itself).
func decimateLow(src []float64, fs, hi float64, d int) (y []float64, fsx float64) {
	if d < 2 {
		return src, fs
	}
	fsx = fs / float64(d)
	tw := math.Min(fsx-2*hi, 4*hi)
	h := kaiserLowPass(fs, hi+tw/2, tw)
	half := len(h) / 2
	n := (len(src)-1)/d + 1
	y = make([]float64, n)
	for m := range y {
		c := m*d - half
		j0, j1 := max(0, -c), min(len(h), len(src)-c)
		var s float64
		for j := j0; j < j1; j++ {
			s += h[j] * src[c+j]
		}
		y[m] = s
	}
	return y, fsx
}

// Decimate low-passes x (sampled at fs) below hi hertz with a zero-phase
// FIR and keeps every d-th sample, d chosen so that at least 16 samples
// fall on a cycle at hi (and 64 remain); output m is at the time of
// x[m d]. With d = 1 it returns x itself. The cross-checks and the quality
// rules work on such reduced-rate band signals.
func Decimate(x []float64, fs, hi float64) (y []float64, fsx float64, d int) {
	d = decimFactor(fs, hi, 16, len(x))
	y, fsx = decimateLow(x, fs, hi, d)
	return y, fsx, d
}

// decimFactor returns the decimation factor that keeps at least perCycle
// samples per cycle at hi hertz and 64 samples out of n (1: none).
func decimFactor(fs, hi, perCycle float64, n int) int {
	d := int(fs / (perCycle * hi))
	if d < 2 || n < 64*d {
		return 1
	}
	return d
}

// crossChecks fills the envelope, log-decrement and half-power estimates
// of fitted component k, the usable span, cycles and the envelope
// diagnostics.
func (a *analysis) crossChecks(m *pipeline.Mode, diag *ModeDiag, fit *Fit, k int) {
	c := fit.Components[k]
	tau := a.tau()
	t0 := float64(a.hit.onset) / a.fs
	// the mode as recorded (windowed)
	sigRec, ampRec := c.Sigma, c.Amp
	if tau > 0 {
		sigRec += 1 / tau
		ampRec *= math.Exp(-t0 / tau)
	}
	fd := c.Omega / (2 * math.Pi)
	zetaRec := sigRec / math.Hypot(sigRec, c.Omega)
	bw := crossBandFactor * MinBandwidth(fd, zetaRec)
	lo, hi := fd-bw/2, fd+bw/2
	lowOnly := lo < 0.2*fd
	if lowOnly {
		lo = 0
	}
	hi = math.Min(hi, 0.45*a.fs)
	isolated := hi > fd
	for j, o := range fit.Components {
		if j == k {
			continue
		}
		fj := o.Omega / (2 * math.Pi)
		hp := 3 * math.Abs(o.Sigma) / math.Pi // three half-power bandwidths
		if lowOnly {
			if fj-hp < 1.5*hi {
				isolated = false
			}
		} else if !(fj+hp < lo/1.5 || fj-hp > 1.5*hi) {
			isolated = false
		}
	}
	// noise in the band, from the noise spectrum
	nb := a.nm.BandSD(lo, hi)
	// model-based usable span: until the envelope falls to 10 times the
	// noise in the band
	maxT := float64(len(a.x0)) / a.fs
	usable := 0.0
	if ampRec > 10*nb && sigRec > 0 {
		usable = math.Min(math.Log(ampRec/(10*nb))/sigRec, maxT)
	}
	diag.UsableS = usable
	m.Cycles = usable * fd
	// span of the cross-check signal: to 0.3 times the band noise, and a
	// pre-onset margin of two periods (at most back to the trigger) so
	// that the filters and the Hilbert transform settle before the onset
	spanT := maxT
	if ampRec > 0.3*nb && sigRec > 0 {
		spanT = math.Min(1.2*math.Log(ampRec/(0.3*nb))/sigRec+8/fd, maxT)
	}
	nSpan := max(int(spanT*a.fs), min(len(a.x0), 64))
	d := decimFactor(a.fs, hi, 16, nSpan)
	pre := max(min(a.hit.onset-a.hit.trigger, int(2*a.fs/fd))/d*d, 0)
	seg := make([]float64, pre+nSpan)
	for i := range seg {
		seg[i] = a.x[a.hit.onset-pre+i] - a.hit.offset
	}
	// take the fitted lines (hum) and the baseline (drift) out: a line
	// beside the mode would beat with it in the band and spoil the
	// envelope and the decrement
	corr := fit.ModelTo(make([]float64, len(seg)), -pre, func(j int) bool { return a.lineK[j] }, true)
	for i := range seg {
		seg[i] -= corr[i]
	}
	y, fsx := decimateLow(seg, a.fs, hi, d)
	i0 := pre / d

	// Rounding to the ADC step is noise only while the signal spans many
	// steps; a decay of a few steps is distorted (below half a step it is
	// erased), which the envelope, the decrement and the bandwidth read as
	// extra damping. So the cross-checks take the quantisation noise
	// step/sqrt(12) as a floor of their band noise, and a mode that does not
	// start 10 times above it (about 3 steps) gets none: there is nothing
	// to cross-check it with that the rounding leaves intact.
	nbx := nb
	rounded := false
	if a.step > 0 {
		nbx = math.Max(nb, a.step/math.Sqrt(12))
		rounded = ampRec < 10*nbx
	}
	if !rounded {
		a.halfPower(m, fd, hi, isolated)
	}
	if !isolated {
		return
	}
	if lowOnly {
		diag.BandLowHz, diag.BandHighHz = 0, hi
	} else {
		diag.BandLowHz, diag.BandHighHz = lo, hi
	}
	if rounded {
		diag.Isolated = true
		return
	}
	var bp []float64
	var err error
	if lowOnly {
		bp, err = LowPass(nil, y, fsx, hi, 4)
	} else {
		bp, err = BandPass(nil, y, fsx, lo, hi, 4)
	}
	if err != nil || i0 >= len(bp) {
		return
	}
	env := Hilbert(nil, bp)[i0:]
	bp = bp[i0:]
	if nSpan >= len(a.x0) {
		// the decay is cut by the end of the record: the zero-phase filter
		// rings there for about two over its bandwidth (it sees the cut as
		// a step), so the envelope and the decrement stop before that
		settle := 2 / (hi - lo)
		if trim := int(settle * fsx); trim > 0 && len(env)-trim >= len(env)/2 {
			env, bp = env[:len(env)-trim], bp[:len(bp)-trim]
		}
	}
	fixZeta := func(z float64) (float64, float64) {
		fnMeas := fd / math.Sqrt(1-z*z)
		return CorrectZetaExpWindow(fnMeas, z, tau)
	}
	if z, us, err := EnvelopeDamping(env, fsx, fd, nbx); err == nil {
		fn, zc := fixZeta(z)
		m.Estimates = append(m.Estimates, pipeline.Estimate{Method: MethodEnvelope, FrequencyHz: fn, DampingRatio: zc,
			Note: "log-linear fit of the Hilbert envelope; frequency from the primary damped frequency"})
		if nbx == nb { // the span above the noise, not above the rounding floor
			diag.UsableS = us
			m.Cycles = us * fd
		}
	}
	if z, cyc, err := LogDecrementSignal(bp, fsx, fd, nbx, 0); err == nil {
		fn, zc := fixZeta(z)
		m.Estimates = append(m.Estimates, pipeline.Estimate{Method: MethodLogDec, FrequencyHz: fn, DampingRatio: zc,
			Note: fmt.Sprintf("over %d cycles; frequency from the primary damped frequency", cyc)})
	}
	early, late := EnvelopeSplit(env, fsx, fd, nbx)
	if !math.IsNaN(early) {
		_, early = fixZeta(early)
	}
	if !math.IsNaN(late) {
		_, late = fixZeta(late)
	}
	diag.ZetaEarly, diag.ZetaLate = early, late
	edge := EnvelopeEdge(fsx, fd)
	if edge < len(env) {
		e := env[edge:]
		nbs := nbx
		if tau > 0 {
			// judge the shape on the envelope with the window divided out
			// from the onset on: its noise is then the windowed noise at
			// the onset throughout
			nbs = nbx * math.Exp(-t0/tau)
			u := make([]float64, len(e))
			for i, v := range e {
				u[i] = v * math.Exp(float64(edge+i)/(fsx*tau))
			}
			e = u
		}
		diag.ExpRSS, diag.LinRSS = EnvelopeShape(e, fsx, nbs)
	}
	diag.Isolated = true
}

// halfPower adds the half-power estimate: on the FRF when the record has a
// force channel (accelerance form: accelerometers are the usual pick-up of
// an impact test), else on the spectrum of the free decay (receptance
// form, the shape of the transform of a free decay).
func (a *analysis) halfPower(m *pipeline.Mode, fd, hi float64, isolated bool) {
	tau := a.tau()
	sigRec := 2 * math.Pi * m.FrequencyHz * m.DampingRatio
	if tau > 0 {
		sigRec += 1 / tau
	}
	// record to where the mode is well under the noise
	maxN := len(a.x) - a.hit.onset
	if a.hit.stop < len(a.x) {
		maxN = a.hit.stop - a.hit.onset
	}
	n := maxN
	if sigRec > 0 && m.Amplitude > a.noise {
		n = min(maxN, int((math.Log(m.Amplitude/(0.1*a.noise))/sigRec+4/fd)*a.fs))
	}
	n = max(n, min(maxN, 64))
	var fhp, zhp float64
	var err error
	var note string
	hiDec := math.Max(hi, 1.2*fd)
	if a.hit.hasForce {
		start := a.hit.trigger
		seg := make([]float64, a.hit.onset-start+n)
		fseg := make([]float64, len(seg))
		// force window: the force channel is kept over the pulse only
		// (common practice in impact testing), so that its noise over the
		// long decay does not enter the FRF
		pulseEnd := a.hit.onset - start
		for i := range seg {
			seg[i] = a.x[start+i] - a.hit.offset
			if i <= pulseEnd {
				fseg[i] = a.force[start+i] - a.hit.forceBase
			}
		}
		d := decimFactor(a.fs, hiDec, 10, len(seg))
		r, fsx := decimateLow(seg, a.fs, hiDec, d)
		f, _ := decimateLow(fseg, a.fs, hiDec, d)
		freqs, hh, e := FRF(f, r, fsx, 2*ceilPow2(len(r)))
		if e != nil {
			return
		}
		mag := make([]float64, len(hh))
		for i, v := range hh {
			mag[i] = cmplx.Abs(v)
		}
		fhp, zhp, err = HalfPower(freqs, mag, fd, Accelerance)
		note = "FRF with the force channel, accelerance form"
	} else {
		seg := a.x0[:min(n, len(a.x0))]
		r, fsx := decimateLow(seg, a.fs, hiDec, decimFactor(a.fs, hiDec, 10, len(seg)))
		freqs, mag := Spectrum(r, fsx, 2*ceilPow2(len(r)))
		fhp, zhp, err = HalfPower(freqs, mag, fd, Receptance)
		note = "response spectrum of the free decay, receptance form"
	}
	if err != nil || !(zhp > 0) {
		return
	}
	fn, z := CorrectZetaExpWindow(fhp, zhp, tau)
	if !isolated {
		note = noteNotIsolated
	}
	m.Estimates = append(m.Estimates, pipeline.Estimate{Method: MethodHalfPower, FrequencyHz: fn, DampingRatio: z, Note: note})
}
