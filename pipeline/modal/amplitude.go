package modal

import (
	"fmt"
	"math"
	"slices"

	"github.com/ringlog/ringlog/pipeline"
)

// Amplitude-dependent damping.
//
// A joint that rubs or a material that is not linear damps a mode by an
// amount that depends on how far it swings. Its decay is then not one
// exponential, and the damping ratio of a hit depends on how hard it was
// struck. Two things follow here:
//
//   - per mode, the damping ratio against the amplitude along the decay
//     (Mode.AmplitudeDamping): the mode's complex envelope is taken by
//     shifting the mode to zero frequency and low-passing with a
//     linear-phase FIR applied from the onset on (as the band signals of
//     band.go: no filter ringing, a damped exponential passes with its pole
//     unchanged), the envelope is cut into bands of amplitude 3 dB wide
//     (widened to at least two cycles each) and a weighted straight line
//     through the logarithm of the envelope in each band gives the
//     equivalent viscous damping ratio there, with a 95 % interval;
//   - a decay that the least-squares fit split into several close poles
//     (a straight-line friction envelope has the broad spectrum of a
//     triangle; a cubic damper's envelope falls fast and then slowly) is
//     one mode when its envelope never rises again and its phase runs
//     straight: the poles are merged into one mode (Mode.MergedPoles) whose
//     damping ratio is the equivalent viscous damping over the decay. Two
//     close linear modes beat: their envelope rises again after a null and
//     their phase jumps; they stay two modes.

// Amplitude-curve constants.
const (
	ampBinRatio        = 1.4142135623730951 // amplitude ratio across one bin (3 dB)
	ampBinMinCycles    = 2.0                // fewest cycles in one bin
	ampBinMinSamples   = 6                  // fewest envelope samples in one bin
	ampStopNoise       = 10.0               // the curve stops where the envelope first falls below this many noise sd (DESIGN.md sec. 5)
	ampFilterSigmas    = 4.3                // FIR transition width in Hz per 1/s of decay rate: half length 0.5/sigma (Kaiser length ~4.3 fs/tw)
	ampMinFilterSigmas = 1.0                // narrowest transition allowed near other modes: half length 2.15/sigma
	mergeMaxRise       = 1.25               // a merged group's envelope never rises above this multiple of its running minimum (beyond 3 noise sd)
	mergeMaxPhaseRMS   = 0.05               // rad: weighted rms of the group's phase about a straight line
	mergeMinCycles     = 4.0                // fewest cycles above the noise for a merge
	z975               = 1.959963984540054  // 0.975 quantile of the standard normal distribution
)

// modeEnvelope is the complex envelope of one mode from the onset.
type modeEnvelope struct {
	t     []float64 // s from the onset, at the centre of each output's filter window
	amp   []float64 // envelope amplitude (window divided out, noise bias removed)
	phase []float64 // unwrapped phase relative to f0, rad
	noise []float64 // sd of the envelope noise at each output (window divided out)
	f0    float64   // frequency the mode was shifted from, Hz
	corr  float64   // outputs per independent noise sample, >= 1
	used  int       // outputs until the envelope first falls below ampStopNoise noise sd
}

// demodulate shifts x0 (sampled at fs, x0[0] at the onset, which lies t0
// seconds after the record start) down by f0 and low-passes it with a
// Kaiser FIR of -6 dB point pass+tw/2 and transition tw, decimated to about
// 2.5 times the stop-band edge. noiseSD is the full-rate white noise sd;
// tau > 0 is the exponential window divided out of the envelope. It returns
// false when the decay is too short for the filter.
func demodulate(x0 []float64, fs, f0, pass, tw, noiseSD, t0, tau float64) (*modeEnvelope, bool) {
	if !(fs > 0) || !(f0 > 0) || !(tw > 0) || pass < 0 {
		return nil, false
	}
	h := kaiserLowPass(fs, pass+tw/2, tw)
	L := len(h)
	d := max(1, int(fs/(2.5*(pass+tw))))
	if L+8*d > len(x0) {
		return nil, false
	}
	n := (len(x0)-L)/d + 1
	var h2 float64
	for _, v := range h {
		h2 += v * v
	}
	w := 2 * math.Pi * f0 / fs
	gr := make([]float64, L)
	gi := make([]float64, L)
	for j, v := range h {
		s, c := math.Sincos(-w * float64(j))
		gr[j], gi[j] = v*c, v*s
	}
	e := &modeEnvelope{f0: f0, t: make([]float64, n), amp: make([]float64, n), phase: make([]float64, n),
		noise: make([]float64, n)}
	envNoise := noiseSD * math.Sqrt(2*h2)
	fsx := fs / float64(d)
	e.corr = math.Max(1, fsx/(fs*h2))
	half := float64(L-1) / 2
	prev := 0.0
	e.used = n
	for m := 0; m < n; m++ {
		seg := x0[m*d : m*d+L]
		var sr, si float64
		for j, v := range seg {
			sr += gr[j] * v
			si += gi[j] * v
		}
		// rotate by exp(-i w m d): the phase relative to f0 at the window start
		ph := math.Mod(-w*float64(m*d), 2*math.Pi)
		s, c := math.Sincos(ph)
		re, im := sr*c-si*s, sr*s+si*c
		a := 2 * math.Hypot(re, im)
		tc := (float64(m*d) + half) / fs
		e.t[m] = tc
		gain := 1.0
		if tau > 0 {
			gain = math.Exp((t0 + tc) / tau)
		}
		if e.used == n && a < ampStopNoise*envNoise {
			e.used = m
		}
		// E[a^2] = A^2 + 2 envNoise^2 (the analytic signal of the noise
		// carries twice its variance)
		a = math.Sqrt(math.Max(a*a-2*envNoise*envNoise, a*a/4))
		e.amp[m] = a * gain
		e.noise[m] = envNoise * gain
		p := math.Atan2(im, re)
		if m > 0 {
			for p-prev > math.Pi {
				p -= 2 * math.Pi
			}
			for p-prev < -math.Pi {
				p += 2 * math.Pi
			}
		}
		e.phase[m], prev = p, p
	}
	return e, true
}

// lineFit is a weighted straight line y = a + b (t - tm).
type lineFit struct {
	a, b, tm float64
	seB      float64 // standard error of b, widened for correlated samples and misfit
	rms      float64 // weighted rms of the residuals
}

// fitLine fits y against t over [i0, i1) with weights w (1/variance),
// treating every corr consecutive samples as one independent sample. The
// weights carry the known noise, so the standard error comes from them; a
// misfit larger than the noise (chi-square per degree of freedom above 1)
// widens it by the square root of that ratio (the Birge ratio).
func fitLine(t, y, w []float64, i0, i1 int, corr float64) (lineFit, bool) {
	var f lineFit
	n := i1 - i0
	if n < 3 {
		return f, false
	}
	var sw, st, sy float64
	for i := i0; i < i1; i++ {
		sw += w[i]
		st += w[i] * t[i]
		sy += w[i] * y[i]
	}
	if !(sw > 0) {
		return f, false
	}
	f.tm = st / sw
	ym := sy / sw
	var stt, sty float64
	for i := i0; i < i1; i++ {
		dt := t[i] - f.tm
		stt += w[i] * dt * dt
		sty += w[i] * dt * (y[i] - ym)
	}
	if !(stt > 0) {
		return f, false
	}
	f.b = sty / stt
	f.a = ym
	var chi, rw float64
	for i := i0; i < i1; i++ {
		r := y[i] - f.a - f.b*(t[i]-f.tm)
		chi += w[i] * r * r
		rw += w[i] * r * r
	}
	f.rms = math.Sqrt(rw / sw)
	scale := math.Max(1, chi/float64(n-2))
	f.seB = math.Sqrt(corr * scale / stt)
	return f, true
}

// zetaOfSlope converts a log-envelope slope b (1/s) at damped frequency fd
// to a damping ratio, zeta = sigma / sqrt(wd^2 + sigma^2) with sigma = -b,
// and its standard error from seB.
func zetaOfSlope(b, seB, fd float64) (zeta, se float64) {
	wd := 2 * math.Pi * fd
	s := -b
	r := math.Hypot(wd, s)
	zeta = s / r
	se = seB * wd * wd / (r * r * r) // d zeta / d sigma
	return zeta, se
}

// logAmpWeights returns ln(amp) and the weights (amp/noise)^2 of the
// log envelope (its variance is about (noise/amp)^2).
func (e *modeEnvelope) logAmpWeights() (y, w []float64) {
	y = make([]float64, len(e.amp))
	w = make([]float64, len(e.amp))
	for i, a := range e.amp {
		y[i] = math.Log(math.Max(a, 1e-300))
		if e.noise[i] > 0 {
			w[i] = (a / e.noise[i]) * (a / e.noise[i])
		} else {
			w[i] = 1
		}
	}
	return y, w
}

// curve bins an envelope: see the comment at the top of the file.
// fd is the damped frequency of the mode in hertz.
func (e *modeEnvelope) curve(fd float64) []pipeline.AmplitudeBin {
	n := e.used
	if n < 2*ampBinMinSamples {
		return nil
	}
	y, w := e.logAmpWeights()
	// first-crossing indices of the levels a0 r^-j
	a0 := e.amp[0]
	var cuts []int
	cuts = append(cuts, 0)
	level := a0 / ampBinRatio
	for i := 0; i < n; i++ {
		for i < n && e.amp[i] < level {
			cuts = append(cuts, i)
			level /= ampBinRatio
		}
	}
	cuts = append(cuts, n)
	cuts = slices.Compact(cuts)
	// merge short bins into the next one
	var edges []int
	edges = append(edges, 0)
	for _, c := range cuts[1:] {
		last := edges[len(edges)-1]
		if c-last >= ampBinMinSamples && (e.t[c-1]-e.t[last])*fd >= ampBinMinCycles {
			edges = append(edges, c)
		}
	}
	if edges[len(edges)-1] != n {
		if len(edges) > 1 {
			edges[len(edges)-1] = n // the short rest joins the last bin
		} else {
			edges = append(edges, n)
		}
	}
	if len(edges) < 3 { // fewer than two bins
		return nil
	}
	var out []pipeline.AmplitudeBin
	for k := 0; k+1 < len(edges); k++ {
		i0, i1 := edges[k], edges[k+1]
		f, ok := fitLine(e.t, y, w, i0, i1, e.corr)
		if !ok {
			return nil
		}
		z, se := zetaOfSlope(f.b, f.seB, fd)
		out = append(out, pipeline.AmplitudeBin{
			Amplitude:      math.Exp(f.a),
			AmplitudeRange: [2]float64{e.amp[i0], e.amp[i1-1]},
			DampingRatio:   z,
			DampingRatioCI: [2]float64{z - z975*se, z + z975*se},
			Cycles:         (e.t[i1-1] - e.t[i0]) * fd,
		})
	}
	return out
}

// AmplitudeTrend fits the damping ratio of the bins against the logarithm
// of their amplitude, zeta = a + b ln(A), weighted by the bins' intervals,
// and returns the relative change of the damping ratio over the amplitude
// range the bins span, b ln(Amax/Amin) / mean zeta (positive: the damping
// grows with the amplitude), and that change over its standard error. Both
// are NaN with fewer than three usable bins.
func AmplitudeTrend(bins []pipeline.AmplitudeBin) (change, z float64) {
	t := AmplitudeTrendFit(bins)
	return t.Change, t.Z
}

// TrendFit is the weighted line of AmplitudeTrend with its ends.
type TrendFit struct {
	Change, Z  float64 // as AmplitudeTrend
	AMax, AMin float64 // largest and smallest bin amplitude
	// ZetaAtMax and ZetaAtMin are the line's damping ratios there.
	ZetaAtMax, ZetaAtMin float64
}

// AmplitudeTrendFit is AmplitudeTrend with the fitted line's damping
// ratios at the largest and smallest amplitude (NaN fields when it cannot
// be fitted).
func AmplitudeTrendFit(bins []pipeline.AmplitudeBin) TrendFit {
	nan := math.NaN()
	out := TrendFit{nan, nan, nan, nan, nan, nan}
	var x, y, w []float64
	amin, amax := math.Inf(1), math.Inf(-1)
	for _, b := range bins {
		se := (b.DampingRatioCI[1] - b.DampingRatioCI[0]) / (2 * z975)
		if !(b.Amplitude > 0) || !(se > 0) || math.IsNaN(b.DampingRatio) || math.IsInf(se, 0) {
			continue
		}
		x = append(x, math.Log(b.Amplitude))
		y = append(y, b.DampingRatio)
		w = append(w, 1/(se*se))
		amin, amax = math.Min(amin, b.Amplitude), math.Max(amax, b.Amplitude)
	}
	if len(x) < 3 {
		return out
	}
	f, ok := fitLine(x, y, w, 0, len(x), 1)
	if !ok {
		return out
	}
	var sw, sy float64
	for i := range y {
		sw += w[i]
		sy += w[i] * y[i]
	}
	mean := sy / sw
	if !(mean > 0) {
		return out
	}
	span := math.Log(amax / amin)
	out.Change, out.Z = f.b*span/mean, f.b/f.seB
	out.AMax, out.AMin = amax, amin
	out.ZetaAtMax = f.a + f.b*(math.Log(amax)-f.tm)
	out.ZetaAtMin = f.a + f.b*(math.Log(amin)-f.tm)
	return out
}

// PeakForce returns the peak of the force pulse above the channel's
// baseline (the median of its first twentieth, as the hit locator takes
// it), 0 for no force channel.
func PeakForce(force []float64) float64 {
	if len(force) == 0 {
		return 0
	}
	k0 := min(len(force), max(16, len(force)/20))
	base, _ := robustSD(force[:k0])
	p := 0.0
	for _, v := range force {
		if d := v - base; d > p && !math.IsInf(d, 0) {
			p = d
		}
	}
	return p
}

// amplitudeCurves merges groups of close poles that are one mode with a
// non-exponential decay and fills the amplitude curve of every mode that
// can be isolated. It runs after report.
func (a *analysis) amplitudeCurves() {
	if len(a.modes) == 0 {
		return
	}
	x0 := a.x0[:min(len(a.x0), max(a.spanN, 64))]
	a.mergeGroups(x0)
	for i := range a.modes {
		m := &a.modes[i]
		if m.AmplitudeDamping == nil {
			m.AmplitudeDamping = []pipeline.AmplitudeBin{}
		}
		if m.MergedPoles > 0 {
			continue
		}
		fd, sig := a.recorded(*m)
		pass := 0.0
		tw, ok := a.filterWidth(i, i, fd, pass, sig, len(x0))
		if !ok {
			continue
		}
		noise := a.noiseNear(fd, pass)
		// only the span where this mode stands above the noise, and the
		// filter's length
		xm := x0
		if sig > 0 && m.Amplitude > 0 && noise > 0 {
			envNoise := noise * math.Sqrt(2*tw/a.fs)
			if r := m.Amplitude / (ampStopNoise * envNoise); r > 1 {
				n := int(1.25*math.Log(r)/sig*a.fs) + int(2*ampFilterSigmas*a.fs/tw) + 64
				xm = x0[:min(len(x0), n)]
			}
		}
		e, ok := demodulate(xm, a.fs, fd, pass, tw, noise, float64(a.hit.onset)/a.fs, a.tau())
		if !ok {
			continue
		}
		if c := e.curve(fd); c != nil {
			m.AmplitudeDamping = c
		}
	}
}

// noiseNear returns the white-equivalent noise sd over f-pass..f+pass
// from the noise model (the largest of its ends and centre), the overall
// level without one.
func (a *analysis) noiseNear(f, pass float64) float64 {
	if a.nm == nil {
		return a.noise
	}
	n := math.Max(a.nm.SDAt(f), math.Max(a.nm.SDAt(math.Max(f-pass, 0)), a.nm.SDAt(f+pass)))
	if !(n > 0) {
		return a.noise
	}
	return n
}

// recorded returns a mode's damped frequency (Hz) and its decay rate as
// recorded (1/s; with the exponential window's 1/tau added).
func (a *analysis) recorded(m pipeline.Mode) (fd, sigma float64) {
	wn := 2 * math.Pi * m.FrequencyHz
	z := math.Max(m.DampingRatio, 0)
	sigma = z * wn
	fd = wn * math.Sqrt(math.Max(1-z*z, 0)) / (2 * math.Pi)
	if tau := a.tau(); tau > 0 {
		sigma += 1 / tau
	}
	return fd, sigma
}

// transition returns the FIR transition width for a decay rate sigma: the
// filter's half length at most half a decay time constant, and the filter
// at most a quarter of the n samples of the decay.
func (a *analysis) transition(sigma float64, n int) float64 {
	tw := ampFilterSigmas * sigma
	return math.Max(tw, 4*4.3*a.fs/float64(max(n, 1)))
}

// room returns how far from fd the stop band of a filter around fd may
// reach: to the modes other than lo..hi (less three half-power bandwidths
// of theirs), and short of 0 Hz, where the negative-frequency image and
// slow drift lie.
func (a *analysis) room(lo, hi int, fd float64) float64 {
	r := fd
	for j, o := range a.modes {
		if j >= lo && j <= hi {
			continue
		}
		hp := 2 * math.Max(o.DampingRatio, 0) * o.FrequencyHz
		r = math.Min(r, math.Abs(o.FrequencyHz-fd)-1.5*hp)
	}
	return r
}

// filterWidth returns the FIR transition width for modes lo..hi around fd
// with pass band half-width pass and fastest decay rate sigma: the width
// that keeps the filter's half length at half a decay time constant
// (transition), narrowed to stay clear of the other modes and of 0 Hz, but
// not below ampMinFilterSigmas*sigma. ok is false when no width fits.
func (a *analysis) filterWidth(lo, hi int, fd, pass, sigma float64, n int) (tw float64, ok bool) {
	tw = a.transition(sigma, n)
	room := 0.8 * (a.room(lo, hi, fd) - pass)
	if tw > room {
		tw = room
	}
	return tw, tw > 0 && tw >= ampMinFilterSigmas*sigma && tw >= 4*4.3*a.fs/float64(max(n, 1))
}

// mergeGroups finds runs of neighbouring modes that are not band-isolated
// and closer than four half-power bandwidths (where the beating rule's
// default begins), and merges each run, or the longest part of it around
// its strongest mode, whose common envelope is that of one mode.
func (a *analysis) mergeGroups(x0 []float64) {
	for i := 0; i < len(a.modes); {
		j := i
		for j+1 < len(a.modes) && !a.diags[j].Isolated && !a.diags[j+1].Isolated {
			p, q := a.modes[j], a.modes[j+1]
			hp := 2 * math.Max(p.DampingRatio*p.FrequencyHz, q.DampingRatio*q.FrequencyHz)
			if q.FrequencyHz-p.FrequencyHz >= 4*hp {
				break
			}
			j++
		}
		lo, hi := i, j
		merged := false
		for hi > lo {
			if a.mergeGroup(x0, lo, hi) {
				merged = true
				break
			}
			// drop the weaker end and try again
			if a.modes[lo].EnergyShare < a.modes[hi].EnergyShare {
				lo++
			} else {
				hi--
			}
		}
		if merged {
			// modes i..lo-1 stay; the group is now one mode at lo
			i = lo + 1
			continue
		}
		i = j + 1
	}
}

// mergeGroup tests modes lo..hi for one mode and merges them when they are.
func (a *analysis) mergeGroup(x0 []float64, lo, hi int) bool {
	group := a.modes[lo : hi+1]
	var share float64
	dom := lo
	for k := lo; k <= hi; k++ {
		share += a.modes[k].EnergyShare
		if a.modes[k].EnergyShare > a.modes[dom].EnergyShare {
			dom = k
		}
	}
	f0, _ := a.recorded(a.modes[dom])
	pass, sigMax := 0.0, 0.0
	var enr float64
	for k := lo; k <= hi; k++ {
		enr += a.diags[k].ENR
		if a.modes[k].EnergyShare < 0.02*share {
			continue
		}
		fd, sig := a.recorded(a.modes[k])
		pass = math.Max(pass, math.Abs(fd-f0))
		sigMax = math.Max(sigMax, sig)
	}
	tw, ok := a.filterWidth(lo, hi, f0, pass, sigMax, len(x0))
	if !ok {
		return false
	}
	t0 := float64(a.hit.onset) / a.fs
	e, ok := demodulate(x0, a.fs, f0, pass, tw, a.noiseNear(f0, pass), t0, a.tau())
	if !ok || e.used < 2*ampBinMinSamples || (e.t[e.used-1]-e.t[0])*f0 < mergeMinCycles {
		return false
	}
	n := e.used
	// the envelope never rises again
	runMin := e.amp[0]
	for i := 1; i < n; i++ {
		if (e.amp[i]-3*e.noise[i])/runMin > mergeMaxRise {
			return false
		}
		runMin = math.Min(runMin, e.amp[i])
	}
	y, w := e.logAmpWeights()
	ph, ok := fitLine(e.t, e.phase, w, 0, n, e.corr)
	if !ok || ph.rms > mergeMaxPhaseRMS {
		return false
	}
	all, ok := fitLine(e.t, y, w, 0, n, e.corr)
	if !ok {
		return false
	}
	fd := f0 + ph.b/(2*math.Pi)
	// the window is divided out of the envelope already
	zRec, seZ := zetaOfSlope(all.b, all.seB, fd)
	sig := -all.b
	wd := 2 * math.Pi * fd
	fn := math.Hypot(wd, sig) / (2 * math.Pi)
	seF := ph.seB / (2 * math.Pi)
	m := pipeline.Mode{
		FrequencyHz:    fn,
		FrequencyCI95:  [2]float64{fn - z975*seF, fn + z975*seF},
		DampingRatio:   zRec,
		DampingRatioCI: [2]float64{zRec - z975*seZ, zRec + z975*seZ},
		DampingRatioSD: seZ,
		Amplitude:      e.amp[0],
		EnergyShare:    share,
		Cycles:         (e.t[n-1]) * fd,
		DecaySNRdB:     20 * math.Log10(e.amp[0]/math.Max(a.noise, 1e-300)),
		MergedPoles:    len(group),
		Label:          a.modes[dom].Label,
	}
	m.Estimates = []pipeline.Estimate{{Method: MethodEnvelope, FrequencyHz: fn, DampingRatio: zRec,
		Note: fmt.Sprintf("one mode whose decay is not exponential: %d close poles of the least-squares fit merged; "+
			"equivalent viscous damping of the envelope over %.0f cycles", len(group), m.Cycles)}}
	m.AmplitudeDamping = e.curve(fd)
	if m.AmplitudeDamping == nil {
		m.AmplitudeDamping = []pipeline.AmplitudeBin{}
	} else {
		// the interval of a non-exponential decay's single damping ratio
		// covers the damping ratios the mode showed over its amplitudes,
		// in the bins that determine theirs to within +/- 25 %
		for _, b := range m.AmplitudeDamping {
			if b.DampingRatio > 0 && b.DampingRatioCI[1]-b.DampingRatioCI[0] < 0.5*b.DampingRatio {
				m.DampingRatioCI[0] = math.Min(m.DampingRatioCI[0], b.DampingRatio)
				m.DampingRatioCI[1] = math.Max(m.DampingRatioCI[1], b.DampingRatio)
			}
		}
	}
	dg := ModeDiag{BandLowHz: f0 - pass - tw/2, BandHighHz: f0 + pass + tw/2, UsableS: e.t[n-1], ENR: enr,
		ZetaEarly: math.NaN(), ZetaLate: math.NaN(), Isolated: true}
	env := e.amp
	fsx := 1 / (e.t[1] - e.t[0])
	dg.ExpRSS, dg.LinRSS = EnvelopeShape(env, fsx, e.noise[0])
	a.modes = slices.Replace(a.modes, lo, hi+1, m)
	a.diags = slices.Replace(a.diags, lo, hi+1, dg)
	// The least-squares model is a sum of exponentials: it cannot follow a
	// non-exponential decay (a friction decay stops dead), so its residual
	// holds the difference over the merged mode's span, and a burst found
	// there is that difference, not a knock.
	from := t0
	to := t0 + 1.1*e.t[n-1] + 2/f0
	kept := a.transients[:0]
	for _, tr := range a.transients {
		if tr.TimeS+tr.DurationS < from || tr.TimeS > to {
			kept = append(kept, tr)
		}
	}
	a.transients = kept
	return true
}
