package modal

import (
	"errors"
	"fmt"
	"math"
	"os"
	"slices"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/robust"
)

// Analysis limits.
const (
	minRecordSamples = 64      // shortest record Analyze accepts
	minDecaySamples  = 32      // shortest free decay worth a fit
	spectrumMaxLen   = 1 << 15 // samples of the decay that locate the bands
	pencilLen        = 240     // band-signal samples the matrix pencil sees
	// filterSettle is how many samples after the force pulse's end (the
	// force back at rest) the free decay is taken to start. The recorder's
	// anti-alias filter answers the jump of the acceleration at the contact
	// with a transient of its own, larger than the force's ringing relative
	// to the modes; a fit that starts inside it has model error the
	// interval does not know of. Measured on the realistic corpus
	// (ringlog accuracy --realistic): with 0 samples the 410 Hz mode
	// scatters 1.3 to 1.6 times its Cramer-Rao bound and its 95 %
	// intervals cover 80 to 88 %; with 3, 1.16 to 1.22 times and 91 to
	// 93 %; more gains nothing.
	filterSettle     = 3
	maxZeta          = 0.25 // heavier "modes" are not structural modes of a hit
	detectSigmas     = 3.0  // decay rate and amplitude must be this many standard errors from zero
	maxFitComponents = 48   // components in the joint least-squares fit
)

// Estimator names, as in pipeline.Estimate.Method.
const (
	MethodNLS       = "nls"
	MethodSubspace  = "subspace"
	MethodEnvelope  = "envelope"
	MethodLogDec    = "logdec"
	MethodHalfPower = "halfpower"
)

// Analyze finds the free decay in the response x (sampled at fs hertz)
// and estimates frequency and damping of every mode that decays in it.
// force is the hammer channel, same length and rate, or nil.
//
// Steps:
//
//  1. trigger: the force rising above 5 % of its peak, else the response
//     rising out of the pre-trigger noise (first swing above half the peak
//     and above the noise's reach, back to where the response leaves the
//     noise); onset of the free
//     decay: the end of the force pulse, else two samples after the first
//     response peak after the trigger; a second force pulse (double hit)
//     ends the decay used;
//  2. noise: robust (median absolute deviation) standard deviation of the
//     pre-trigger samples and of the record tail, the smaller of the two,
//     refined by the trimmed root mean square of the regions that agree;
//  3. bands: peaks of the zero-padded spectrum of the decay (no window on
//     its start) locate the modes; close modes share a band;
//  4. per band: band signal (shift, FIR low-pass, decimate; see band.go)
//     and matrix pencil (Subspace) for the poles;
//  5. all poles together: nonlinear least squares (FitDecay) on the decay
//     at the full rate, where the noise is white, giving the primary
//     estimate and its covariance; a mode is reported when its decay rate
//     and amplitude are both at least 3 standard errors above zero and its
//     damping ratio is under 25 % (steady lines such as mains hum are
//     fitted, so that they do not bias the modes, but not reported);
//  6. cross-checks on band-isolated modes: Hilbert envelope, logarithmic
//     decrement; half-power bandwidth on the FRF (force channel) or on the
//     response spectrum for every mode (on a mode that is not isolated it
//     carries a note and stays out of Spread).
//
// With opt.WindowTauS > 0 (window exp(-t/tau), t from the first sample of
// x) every estimate is corrected for the exponential window (the pole
// moves from -sigma to -(sigma + 1/tau)); the least-squares fit runs on the
// record with the window divided out, where the noise is white again.
//
// Analyze returns an error only for unusable input (too short, all zero,
// NaN or infinite samples, mismatched force channel). A record with no
// decaying mode gives a Decay with no modes and a nil error.
func Analyze(x []float64, fs float64, force []float64, opt Options) (*Decay, error) {
	if err := checkRecord(x, fs, force); err != nil {
		return nil, err
	}
	opt = withDefaults(opt, fs)
	step := adcStep(x)
	if tau := opt.WindowTauS; tau > 0 {
		// Divide the window out first: the record is then a free decay in
		// stationary noise again, the noise level is the unwindowed one
		// and every estimator (and the point where a decay meets the
		// noise) works as on an unwindowed record; no correction of the
		// poles is left to make.
		xu := make([]float64, len(x))
		for i, v := range x {
			xu[i] = v * math.Exp(float64(i)/(fs*tau))
		}
		x = xu
		opt.WindowTauS = 0
	}
	h := locateHit(x, fs, force)
	if step > 0 {
		h.noise = math.Max(h.noise, step/math.Sqrt(12))
	}
	d := &Decay{Onset: h.onset, Trigger: h.trigger, NoiseRMS: h.noise, Peak: h.peak}
	if h.stop-h.onset < minDecaySamples {
		return d, nil
	}
	a := &analysis{x: x, fs: fs, force: force, opt: opt, hit: h, step: step}
	a.x0 = make([]float64, h.stop-h.onset)
	for i := range a.x0 {
		a.x0[i] = x[h.onset+i] - h.offset
	}
	a.noise = math.Max(h.noise, 1e-12*h.peak)
	a.run()
	a.amplitudeCurves()
	d.Modes, d.Diag = a.modes, a.diags
	if a.nm != nil {
		d.Noise = a.nm
	}
	d.Lines, d.Capped, d.Transients = a.lines, a.capped, a.transients
	return d, nil
}

// checkRecord rejects input no estimator can use.
func checkRecord(x []float64, fs float64, force []float64) error {
	if !(fs > 0) || math.IsInf(fs, 0) {
		return fmt.Errorf("modal: sample rate %g Hz is not a positive number", fs)
	}
	if len(x) < minRecordSamples {
		return fmt.Errorf("modal: response has %d samples, need at least %d", len(x), minRecordSamples)
	}
	if force != nil && len(force) != len(x) {
		return fmt.Errorf("modal: force channel has %d samples and the response %d: need equal lengths", len(force), len(x))
	}
	nonzero := false
	for i, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("modal: response sample %d is %g", i, v)
		}
		if v != x[0] {
			nonzero = true
		}
	}
	if !nonzero {
		return fmt.Errorf("modal: response is constant (%g) over all %d samples", x[0], len(x))
	}
	for i, v := range force {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("modal: force sample %d is %g", i, v)
		}
	}
	return nil
}

func withDefaults(o Options, fs float64) Options {
	if o.MaxModes <= 0 {
		o.MaxModes = 40
	}
	if !(o.FMinHz > 0) {
		o.FMinHz = 0 // 0 means 0: no hidden floor
	}
	if o.FMaxHz <= 0 || o.FMaxHz > 0.45*fs {
		o.FMaxHz = 0.45 * fs
	}
	if o.WindowTauS < 0 || math.IsInf(o.WindowTauS, 0) || math.IsNaN(o.WindowTauS) {
		o.WindowTauS = 0
	}
	return o
}

// hit is where the impact and the free decay are in the record.
type hit struct {
	trigger, onset, stop int // stop: end (exclusive) of the free decay
	offset               float64
	noise, peak          float64
	forceBase            float64
	hasForce             bool
	preEnd               int // the pre-trigger noise is x[:preEnd] (0: none usable)
}

// robustSD returns the median and 1.4826 times the median absolute
// deviation of v (the standard deviation for Gaussian samples), on at most
// 8192 evenly spaced samples.
func robustSD(v []float64) (med, sd float64) {
	if len(v) == 0 {
		return 0, 0
	}
	step := max(1, len(v)/8192)
	s := make([]float64, 0, len(v)/step+1)
	for i := 0; i < len(v); i += step {
		s = append(s, v[i])
	}
	med = robust.Select(s, len(s)/2)
	for i := range s {
		s[i] = math.Abs(s[i] - med)
	}
	return med, 1.4826 * robust.Select(s, len(s)/2)
}

// locateHit finds trigger, onset, end of the free decay, offset, noise
// and peak (see Analyze).
func locateHit(x []float64, fs float64, force []float64) hit {
	n := len(x)
	var h hit
	h.stop = n
	k0 := max(16, n/20)
	off0, _ := robustSD(x[:k0])
	peak, ipk := 0.0, 0
	for i, v := range x {
		if a := math.Abs(v - off0); a > peak {
			peak, ipk = a, i
		}
	}
	// force channel
	forceTrig, forceEnd := -1, -1
	if force != nil {
		fb, _ := robustSD(force[:k0])
		fp, ifp := 0.0, 0
		for i, v := range force {
			if a := math.Abs(v - fb); a > fp {
				fp, ifp = a, i
			}
		}
		// a pulse must stand out of the channel's own noise (robust sd over
		// the whole channel, which a short pulse hardly moves)
		if _, fsdAll := robustSD(force); fp > 20*fsdAll {
			// the hit starts where the main pulse leaves the force's rest:
			// back from its peak to the last sample within 1 % of the peak
			// or 3 noise sd of the force. Searching forward for the first
			// sample above a threshold instead would take a noise spike at
			// the record's start (a weak tap on a noisy hammer) for the hit.
			rest := math.Max(0.01*fp, 3*fsdAll)
			i := ifp
			for i > 0 && math.Abs(force[i-1]-fb) > rest {
				i--
			}
			forceTrig = i
			_, fsd := robustSD(force[:max(forceTrig-2, 0)])
			if forceTrig-2 < 16 {
				fsd = 0
			}
			endThr := math.Max(0.01*fp, 4*fsd)
			// the pulse ends where the force has come back to rest (within
			// 0.1 % of its peak, -60 dB, or 4 noise sd) and stays there:
			// within the threshold for twice the rise time
			// (at least half a millisecond, and 2 samples). The anti-alias
			// filter answers a contact shorter than a sample with ringing
			// lobes of both signs; a fit started between two of them
			// starts in the filter's transient, not in the free decay.
			need := max(2*(ifp-forceTrig)+1, int(math.Ceil(0.0005*fs)), 2)
			j, quiet := n, 0
			for k := ifp; k < n; k++ {
				if math.Abs(force[k]-fb) < endThr {
					quiet++
					if quiet >= need {
						j = k - need + 1
						break
					}
				} else {
					quiet = 0
				}
			}
			forceEnd = j
			h.forceBase = fb
			h.hasForce = true
			// a second pulse ends the free decay; a hammer only pushes, so
			// it has the main pulse's sign (the anti-alias filter's
			// negative lobes are ringing, not a strike)
			width := max(forceEnd-forceTrig, 1)
			sgn := math.Copysign(1, force[ifp]-fb)
			for k := forceEnd + width; k < n; k++ {
				if sgn*(force[k]-fb) > 0.1*fp {
					for k > forceEnd && math.Abs(force[k-1]-fb) > endThr {
						k--
					}
					h.stop = k
					break
				}
			}
		}
	}
	// noise: pre-trigger and tail
	nt := max(32, n/10)
	var tail []float64
	if n-nt > ipk {
		tail = x[n-nt:]
	}
	c := 0
	if forceTrig >= 0 {
		c = forceTrig
	} else {
		// The hit starts before the first swing above half the peak that
		// the noise cannot reach: a provisional noise level from the
		// samples before the peak (robust to the few that belong to the
		// hit) and from the tail sets a floor of 3 sd above the largest of
		// that many Gaussian samples, sqrt(2 ln n) sd.
		sd0 := math.Inf(1)
		if ipk >= 32 {
			_, sd0 = robustSD(x[:ipk])
		}
		if tail != nil {
			_, sdt := robustSD(tail)
			sd0 = math.Min(sd0, sdt)
		}
		thr := 0.5 * peak
		if !math.IsInf(sd0, 1) {
			thr = math.Max(thr, sd0*(math.Sqrt(2*math.Log(float64(max(ipk, 100))))+3))
		}
		for c < ipk && math.Abs(x[c]-off0) < thr {
			c++
		}
	}
	guard := max(2, c/50)
	pre := x[:max(0, c-guard)]
	offPre, sdPre := robustSD(pre)
	offTail, sdTail := robustSD(tail)
	h.offset = off0
	if len(pre) >= 32 {
		h.preEnd = len(pre)
	}
	switch {
	case len(pre) >= 256 || (len(pre) >= 32 && tail == nil):
		h.noise, h.offset = sdPre, offPre
	case len(pre) >= 32:
		h.noise, h.offset = math.Min(sdPre, sdTail), offPre
	case tail != nil:
		h.noise, h.offset = sdTail, offTail
	default:
		h.noise = 0
	}
	// refine: the median absolute deviation is robust but wastes two thirds
	// of the samples (its efficiency is 37 % under Gaussian noise); the
	// root mean square of the samples within 4 robust standard deviations,
	// pooled over the pre-trigger and a tail that agrees with it (a tail
	// that still rings does not), is nearly efficient
	if h.noise > 0 {
		var ss float64
		var cnt int
		add := func(v []float64, med float64) {
			for _, u := range v {
				if d := u - med; math.Abs(d) <= 4*h.noise {
					ss += d * d
					cnt++
				}
			}
		}
		if len(pre) >= 32 && math.Abs(sdPre-h.noise) <= 0.15*h.noise {
			add(pre, offPre)
		}
		if tail != nil && math.Abs(sdTail-h.noise) <= 0.15*h.noise {
			add(tail, offTail)
		}
		if cnt >= 32 {
			// Gaussian samples within +/- 4 sd have a mean square of
			// 0.99893 sd^2 (0.998866 / 0.999937, integrated with scipy.stats.norm)
			h.noise = math.Sqrt(ss / float64(cnt) / 0.99893)
		}
	}
	if forceTrig >= 0 {
		h.trigger = forceTrig
		h.onset = min(forceEnd+filterSettle, n)
	} else {
		npre := float64(max(len(pre), 100))
		thr := math.Max(h.noise*(math.Sqrt(2*math.Log(npre))+3), 0.5*peak)
		ct := 0
		for ct < n && math.Abs(x[ct]-h.offset) < thr {
			ct++
		}
		ct = min(ct, ipk)
		// trigger: back from there to where the response leaves the noise
		tr := ct
		for tr > 0 && math.Abs(x[tr-1]-h.offset) > 3*h.noise {
			tr--
		}
		h.trigger = tr
		// onset: two samples after the first response peak after the
		// trigger. The peak is found on the noisy samples themselves, so
		// the samples up to the one after it are selected for being large
		// or small; starting after them keeps the fit free of that
		// selection (starting at the peak biases the damping up, by about
		// 0.6 % at 10 % damping and 20 dB).
		i := ct
		for i+1 < n && math.Abs(x[i+1]-h.offset) >= math.Abs(x[i]-h.offset) {
			i++
		}
		h.onset = min(i+2, n)
	}
	h.peak = 0
	for _, v := range x[h.trigger:] {
		h.peak = math.Max(h.peak, math.Abs(v-h.offset))
	}
	if h.stop < h.onset {
		h.stop = h.onset
	}
	return h
}

// analysis carries the state of one Analyze call.
type analysis struct {
	x, force []float64
	fs       float64
	opt      Options
	hit      hit
	x0       []float64 // free decay, offset removed (as recorded: windowed)
	noise    float64   // full-rate noise sd (floored)
	spanN    int       // samples of x0 until the decay meets the noise
	step     float64   // ADC step of the record, 0 when none
	nm       *NoiseModel

	lines      []Line
	lineK      map[int]bool // fitted components that are lines
	capped     int
	transients []Transient

	modes []pipeline.Mode
	diags []ModeDiag
}

// candidate is a pole found by the pencil in a band.
type candidate struct {
	c    Component // at the full rate, t = 0 at the onset, as recorded
	band band
}

func (a *analysis) run() {
	a.spanN = decaySpan(a.x0, a.noise)
	a.nm = a.noiseModel()
	ns := min(a.spanN, spectrumMaxLen)
	truncated := a.spanN >= len(a.x0)-len(a.x0)/50 || ns < a.spanN
	p, binHz := decaySpectrum(a.x0[:ns], a.fs, truncated)
	peaks := spectralPeaks(p, binHz, a.opt.FMinHz, a.opt.FMaxHz)
	// A heavily damped mode is over within a few hundred samples: in the
	// spectrum of a long span its peak sinks into the noise of the whole
	// span. Shorter spans from the onset (a sixteenth, then a sixteenth of
	// that, down to 256 samples) find it; their broad peaks are added where
	// no peak of the longer span lies within two of their resolution cells.
	for short := ns / 16; short >= 256; short /= 16 {
		ps, bh := decaySpectrum(a.x0[:short], a.fs, true)
		for _, pk := range spectralPeaks(ps, bh, a.opt.FMinHz, a.opt.FMaxHz) {
			// only peaks broader than the short span resolves and than a
			// lightly damped mode is (over 2 %): the long span finds the rest
			if pk.hpbw < 2*a.fs/float64(short) || pk.hpbw < 0.04*pk.f {
				continue
			}
			known := false
			for _, q := range peaks {
				if math.Abs(q.f-pk.f) < 2*a.fs/float64(short) {
					known = true
					break
				}
			}
			if !known {
				// scaled to the long span's power so that band ranking
				// compares like with like
				pk.power *= float64(ns) / float64(short)
				peaks = append(peaks, pk)
			}
		}
	}
	bands := planBands(peaks, a.fs/float64(ns), 2*a.opt.MaxModes+4)
	cands := a.pencilCandidates(a.x0, bands, nil)
	if len(cands) == 0 {
		return
	}
	// at most maxFitComponents, the strongest by energy over the decay
	if len(cands) > maxFitComponents {
		energy := func(c Component) float64 { return c.Amp * c.Amp * expSum(c.Sigma/a.fs, len(a.x0)) }
		slices.SortFunc(cands, func(p, q candidate) int {
			ep, eq := energy(p.c), energy(q.c)
			switch {
			case ep > eq:
				return -1
			case ep < eq:
				return 1
			}
			return 0
		})
		for _, c := range cands[maxFitComponents:] {
			if c.c.Amp > 3*a.nm.SDAt(c.c.Omega/(2*math.Pi)) {
				a.capped++
			}
		}
		cands = cands[:maxFitComponents]
	}
	a.fitAndReport(cands)
}

// subspaceNoise is the white-equivalent noise level the pencil's model
// order rests on in band b: the noise at the band's frequency, or the
// overall level where the noise spectrum cannot resolve the band.
func (a *analysis) subspaceNoise(b band) float64 {
	if a.nm.psd == nil || b.hi < 2*a.nm.binHz {
		return a.noise
	}
	return math.Max(a.nm.SDAt((b.lo+b.hi)/2), a.nm.SDAt(b.lo))
}

// decaySpan returns the number of samples of x0 until its mean square,
// over blocks, last stands above the noise (plus a fifth, at most len(x0)).
func decaySpan(x0 []float64, noise float64) int {
	n := len(x0)
	b := max(32, n/4096)
	v := noise * noise
	thr := v * (1 + 5*math.Sqrt(2/float64(b)))
	last := 0
	for s := 0; s < n; s += b {
		e := min(s+b, n)
		var ms float64
		for _, u := range x0[s:e] {
			ms += u * u
		}
		ms /= float64(e - s)
		if ms > thr {
			last = e
		}
	}
	if last == 0 {
		last = min(n, 4*b)
	}
	return min(n, last+last/5+b)
}

// tau returns the exponential-window time constant, 0 for none.
func (a *analysis) tau() float64 { return a.opt.WindowTauS }

// fitAndReport refines all candidate poles together and fills the modes.
func (a *analysis) fitAndReport(cands []candidate) {
	tau := a.tau()
	// Start values in the unwindowed record: sigma_true = sigma - 1/tau and
	// amplitudes back to their unwindowed size at the onset.
	t0 := float64(a.hit.onset) / a.fs
	start := make([]Component, len(cands))
	for i, cd := range cands {
		c := cd.c
		if tau > 0 {
			c.Sigma -= 1 / tau
			c.Amp *= math.Exp(t0 / tau)
		}
		start[i] = c
	}
	// span of the fit: until every decaying component is 26 dB under the
	// noise (less than 0.2 % of the information on the decay rate is left
	// beyond), or the whole decay when one does not decay
	wscale := 1.0
	if tau > 0 {
		wscale = math.Exp(t0 / tau)
	}
	nFit := 0
	for _, c := range start {
		if !(c.Sigma > 0) {
			nFit = len(a.x0)
			break
		}
		noise := wscale * a.nm.SDAt(c.Omega/(2*math.Pi))
		if c.Amp > 0.05*noise {
			t := math.Log(c.Amp/(0.05*noise)) / c.Sigma
			nFit = max(nFit, int(math.Min(t*a.fs, float64(len(a.x0)))))
		}
	}
	nFit = min(len(a.x0), max(nFit, a.spanN, 64+8*len(start)))
	y := a.x0[:nFit]
	if tau > 0 {
		y = make([]float64, nFit)
		for i := range y {
			y[i] = a.x0[i] * math.Exp((float64(a.hit.onset+i))/(a.fs*tau))
		}
	}
	var fit *Fit
	for len(start) > 0 {
		var err error
		fit, err = FitDecayBaseline(y, a.fs, start, a.baseline())
		if err == nil {
			break
		}
		if !errors.Is(err, ErrFitFailed) {
			return
		}
		// drop the weakest component and try again
		iw := 0
		for i, c := range start {
			if c.Amp < start[iw].Amp {
				iw = i
			}
		}
		start = slices.Delete(start, iw, iw+1)
		cands = slices.Delete(cands, iw, iw+1)
	}
	if fit == nil {
		return
	}
	if extra := a.residualCandidates(fit, y); len(extra) > 0 && os.Getenv("ZZNORES") == "" {
		// modes the first search missed (on the skirt of a strong
		// neighbour, or under a floor raised by a dozen modes' skirts):
		// fitted again together with the others
		start := append(slices.Clone(fit.Components), make([]Component, 0, len(extra))...)
		for _, c := range extra {
			start = append(start, c.c)
		}
		fit, cands = a.refitWith(fit, y, cands, extra)
	}
	a.residualNoise(fit, y)
	a.report(fit, cands, y)
	a.findTransients(fit, y)
}

// residualModeUsable reports whether a component found in the residual is
// worth fitting: its decay energy at least 100 times the noise variance at
// its frequency (a damping ratio known to 20 % or better, Cramer-Rao
// 2/sqrt(ENR)), and at least 5 cycles (the default min_cycles) before its
// envelope falls to 10 times the noise in its band, as the cross-checks
// count them. What a misfit or coloured noise leaves in the residual is
// weaker or shorter than that, and such a mode would be dropped anyway.
func (a *analysis) residualModeUsable(c Component) bool {
	fd := c.Omega / (2 * math.Pi)
	amp := math.Abs(c.Amp)
	if !(c.Sigma > 0) || !(fd > 0) {
		return false
	}
	if sd := a.nm.SDAt(fd); sd > 0 && a.fs*amp*amp/(4*c.Sigma*sd*sd) < 100 {
		return false
	}
	bw := crossBandFactor * MinBandwidth(fd, c.Sigma/math.Hypot(c.Sigma, c.Omega))
	nb := a.nm.BandSD(math.Max(fd-bw/2, 0), fd+bw/2)
	return nb <= 0 || (amp > 10*nb && math.Log(amp/(10*nb))/c.Sigma*fd >= 5)
}

// refitWith fits y again with the components of fit and the extra
// candidates, and keeps the extra ones that are still usable modes with
// their fitted values (residualModeUsable): a candidate that the joint fit
// shrinks into the noise is dropped and the rest fitted once more. It
// returns fit and cands unchanged when nothing is gained.
func (a *analysis) refitWith(fit *Fit, y []float64, cands, extra []candidate) (*Fit, []candidate) {
	for range 2 {
		start := slices.Clone(fit.Components)
		for _, c := range extra {
			start = append(start, c.c)
		}
		fit2, err := FitDecayBaseline(y, a.fs, start, a.baseline())
		if err != nil {
			return fit, cands
		}
		var kept []candidate
		for i, c := range extra {
			if fc := fit2.Components[len(fit.Components)+i]; a.residualModeUsable(fc) {
				kept = append(kept, candidate{c: fc, band: c.band})
			}
		}
		if len(kept) == len(extra) {
			return fit2, append(cands, extra...)
		}
		if len(kept) == 0 {
			return fit, cands
		}
		extra = kept
	}
	return fit, cands
}

// splitDecay reports whether three or more components lie in a chain of
// frequencies less than 5 % apart: the least-squares fit has split a decay
// that is not exponential (friction, amplitude-dependent damping) into
// close poles. Its residual is then that misfit, spread over the whole
// spectrum, and searching it for modes would find only the misfit.
func splitDecay(cs []Component) bool {
	f := make([]float64, 0, len(cs))
	for _, c := range cs {
		if c.Omega > 0 {
			f = append(f, c.Omega)
		}
	}
	slices.Sort(f)
	run := 1
	for i := 1; i < len(f); i++ {
		if f[i]-f[i-1] < 0.05*f[i-1] {
			run++
			if run >= 3 {
				return true
			}
		} else {
			run = 1
		}
	}
	return false
}

// residualCandidates looks for modes in what the fit left: the spectrum
// of the residual, whose floor no longer holds the skirts of the fitted
// modes, searched with the same peak rule, and a matrix pencil in each new
// band. A peak within three half-power bandwidths (and two resolution
// cells), or within 5 % of its frequency, is that component's misfit
// (a decay that is not exponential, friction or amplitude-dependent
// damping, leaves sidebands there), not a mode: modes that close are the
// first search's to find, as a pair of peaks. A decay that is not linear
// (a rubbing joint) also rings at odd multiples of its frequency: a
// candidate within 1 % of a harmonic (2 to 15) of a fitted component at
// least 3 times stronger is that distortion, not a mode. And a candidate
// too weak or too short to estimate is left out (residualModeUsable).
// The number of components stays within maxFitComponents.
func (a *analysis) residualCandidates(fit *Fit, y []float64) []candidate {
	room := maxFitComponents - len(fit.Components)
	if room <= 0 || len(y) < 256 || splitDecay(fit.Components) {
		return nil
	}
	r := fit.ModelTo(make([]float64, len(y)), 0, nil, true)
	for i := range r {
		r[i] = y[i] - r[i]
	}
	ns := min(len(r), spectrumMaxLen)
	p, binHz := decaySpectrum(r[:ns], a.fs, true)
	res := a.fs / float64(ns)
	near := func(f float64) bool {
		for _, c := range fit.Components {
			hp := math.Abs(c.Sigma) / math.Pi // half-power bandwidth, Hz
			fc := c.Omega / (2 * math.Pi)
			if math.Abs(fc-f) < math.Max(3*hp+2*res, 0.05*fc) {
				return true
			}
		}
		return false
	}
	harmonic := func(t Component) bool {
		f := t.Omega / (2 * math.Pi)
		for _, c := range fit.Components {
			fc := c.Omega / (2 * math.Pi)
			if !(math.Abs(c.Amp) >= 3*math.Abs(t.Amp)) || !(fc > 0) {
				continue
			}
			if h := math.Round(f / fc); h >= 2 && h <= 15 && math.Abs(f-h*fc) < 0.01*f {
				return true
			}
		}
		return false
	}
	var peaks []specPeak
	for _, pk := range spectralPeaks(p, binHz, a.opt.FMinHz, a.opt.FMaxHz) {
		if !near(pk.f) {
			peaks = append(peaks, pk)
		}
	}
	if len(peaks) == 0 {
		return nil
	}
	out := a.pencilCandidates(r, planBands(peaks, res, room), func(t Component) bool {
		return !near(t.Omega/(2*math.Pi)) && t.Sigma > 0 && !harmonic(t) && a.residualModeUsable(t)
	})
	return out[:min(len(out), room)]
}

// pencilCandidates runs the matrix pencil on x in each band and returns
// the components it finds inside their band and the searched range, and
// that keep accepts (nil: all), in band order.
func (a *analysis) pencilCandidates(x []float64, bands []band, keep func(Component) bool) []candidate {
	var out []candidate
	for _, b := range bands {
		bs := makeBandSignal(x, a.fs, b, pencilLen)
		if len(bs.y) < pencilMinLen {
			continue
		}
		comps, _, err := Subspace(bs.y, 1/bs.dt, a.subspaceNoise(b)*bs.noise)
		if err != nil {
			continue
		}
		for _, c := range comps {
			t := bs.toTrue(c)
			fd := t.Omega / (2 * math.Pi)
			if fd < b.lo || fd > b.hi || fd < a.opt.FMinHz || fd > a.opt.FMaxHz || (keep != nil && !keep(t)) {
				continue
			}
			out = append(out, candidate{c: t, band: b})
		}
	}
	return out
}

// baseline is the slow part of the least-squares model: offset and a
// quadratic drift (a few percent of the peak of thermal drift or a
// settling offset would otherwise bias the damping of the modes), and the
// step response of an AC coupling when its corner is known.
func (a *analysis) baseline() Baseline {
	b := Baseline{Degree: 2}
	if a.opt.HighpassHz > 0 {
		b.Rates = []float64{2 * math.Pi * a.opt.HighpassHz}
	}
	return b
}

// mainsLine reports whether f lies on the mains frequency or one of its
// harmonics (within half a percent and the resolution 1/T of the fit
// span T seconds).
func (a *analysis) mainsLine(f, T float64) bool {
	var ms []float64
	switch {
	case a.opt.MainsHz > 0:
		ms = []float64{a.opt.MainsHz}
	case a.opt.MainsHz == 0:
		ms = []float64{50, 60}
	}
	for _, m := range ms {
		k := math.Round(f / m)
		if k >= 1 && math.Abs(f-k*m) < 0.005*f+1/T {
			return true
		}
	}
	return false
}

// report turns the fitted components into modes with their cross-checks.
func (a *analysis) report(fit *Fit, cands []candidate, y []float64) {
	type found struct {
		k            int
		fn, zeta     float64
		sdFn, sdZeta float64
		energy       float64
	}
	var fs []found
	q := fit.Quantile975()
	tFit := float64(fit.N) / a.fs
	a.lineK = map[int]bool{}
	for k, c := range fit.Components {
		fn, zeta, sdFn, sdZeta := fit.ModalSD(k)
		// the covariance assumes white noise at the residual's level; a
		// mode sees the noise at its own frequency (coloured noise: 1/f at
		// low frequencies), so its standard errors scale with that level
		// (never below the white-noise ones)
		r := math.Max(1, a.nm.SDAt(c.Omega/(2*math.Pi))/fit.ResidualSD)
		sdFn, sdZeta = r*sdFn, r*sdZeta
		ampOK := c.Amp > detectSigmas*r*fit.AmpSD(k)
		steady := !(c.Sigma > detectSigmas*r*fit.SigmaSD(k))
		// at a mains harmonic a component must decay clearly to be a mode
		mains := a.mainsLine(fn, tFit) && (!(c.Sigma > 5*r*fit.SigmaSD(k)) || c.Sigma*tFit < 0.1)
		if ampOK && (steady || mains) {
			// a line: hum, its harmonics or another steady tone; fitted so
			// that it biases no mode, and taken out of the cross-checks
			a.lineK[k] = true
			a.lines = append(a.lines, Line{FrequencyHz: c.Omega / (2 * math.Pi), Amplitude: c.Amp, Mains: a.mainsLine(fn, tFit)})
			continue
		}
		if steady || !ampOK {
			continue
		}
		if !(zeta < maxZeta) || fn < a.opt.FMinHz || fn > a.opt.FMaxHz {
			continue
		}
		if a.nm.psd != nil && fn < 2*a.nm.binHz && !(math.Abs(c.Amp) > 3*a.nm.SDAt(fn)) {
			// below the noise spectrum's resolution (a short
			// pre-trigger cannot show how 1/f noise rises there) the
			// noise level at fn is underestimated: a component that does
			// not start clearly above it is wander, not a mode
			continue
		}
		e := c.Amp * c.Amp / 2 * expSum(c.Sigma/a.fs, len(a.x0))
		fs = append(fs, found{k, fn, zeta, sdFn, sdZeta, e})
	}
	if len(fs) == 0 {
		return
	}
	if len(fs) > a.opt.MaxModes {
		a.capped += len(fs) - a.opt.MaxModes
		slices.SortFunc(fs, func(p, r found) int {
			switch {
			case p.energy > r.energy:
				return -1
			case p.energy < r.energy:
				return 1
			}
			return 0
		})
		fs = fs[:a.opt.MaxModes]
	}
	slices.SortFunc(fs, func(p, r found) int {
		switch {
		case p.fn < r.fn:
			return -1
		case p.fn > r.fn:
			return 1
		}
		return 0
	})
	var etot float64
	for _, f := range fs {
		etot += f.energy
	}
	for _, f := range fs {
		c := fit.Components[f.k]
		ln := math.Max(a.nm.SDAt(c.Omega/(2*math.Pi)), 1e-300)
		noiseVar := ln * ln
		m := pipeline.Mode{
			FrequencyHz:    f.fn,
			FrequencyCI95:  [2]float64{f.fn - q*f.sdFn, f.fn + q*f.sdFn},
			DampingRatio:   f.zeta,
			DampingRatioCI: [2]float64{f.zeta - q*f.sdZeta, f.zeta + q*f.sdZeta},
			DampingRatioSD: f.sdZeta,
			Amplitude:      c.Amp,
			EnergyShare:    f.energy / etot,
			DecaySNRdB:     20 * math.Log10(c.Amp/ln),
		}
		m.Estimates = append(m.Estimates, pipeline.Estimate{Method: MethodNLS, FrequencyHz: f.fn, DampingRatio: f.zeta,
			Note: fmt.Sprintf("least squares on %d samples, %d components", fit.N, len(fit.Components))})
		// the pencil's own estimate, when the fitted component is still the
		// pole it started from (the fit may move a spare start pole onto a
		// mode the pencil missed; its start value is then no estimate of it)
		if sub, ok := a.subspaceEstimate(cands[f.k]); ok && math.Abs(sub.FrequencyHz-f.fn) < 0.01*f.fn+q*f.sdFn {
			m.Estimates = append(m.Estimates, sub)
		}
		diag := ModeDiag{ENR: f.energy / noiseVar, NoiseSD: ln, ZetaEarly: math.NaN(), ZetaLate: math.NaN(),
			ExpRSS: math.NaN(), LinRSS: math.NaN()}
		a.crossChecks(&m, &diag, fit, f.k)
		// spread of the cross-checks from the primary
		for _, e := range m.Estimates[1:] {
			if e.Note == noteNotIsolated {
				continue
			}
			if dv := math.Abs(e.DampingRatio-f.zeta) / f.zeta; dv > m.Spread {
				m.Spread = dv
			}
		}
		a.modes = append(a.modes, m)
		a.diags = append(a.diags, diag)
	}
}

const noteNotIsolated = "a neighbouring mode lies in the band; not used for the spread"

// subspaceEstimate returns the pencil's own estimate of a mode, corrected
// for the exponential window.
func (a *analysis) subspaceEstimate(cd candidate) (pipeline.Estimate, bool) {
	c := cd.c
	wn, zeta := CorrectExpWindow(c.Sigma, c.Omega, a.tau())
	if !(wn > 0) || math.IsNaN(zeta) {
		return pipeline.Estimate{}, false
	}
	return pipeline.Estimate{Method: MethodSubspace, FrequencyHz: wn / (2 * math.Pi), DampingRatio: zeta,
		Note: fmt.Sprintf("matrix pencil in the band %.4g-%.4g Hz", cd.band.lo, cd.band.hi)}, true
}
