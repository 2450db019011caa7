package modal

import (
	"errors"
	"fmt"
	"math"
	"sync"

	"gonum.org/v1/gonum/dsp/fourier"
)

// ErrFewCycles is wrapped by the envelope and log-decrement estimators when
// the decay stays above the noise for too few cycles to fit.
var ErrFewCycles = errors.New("too few cycles above the noise")

// spectrumWork is reusable FFT state for one power-of-two length. The
// gonum transforms keep scratch inside, so a workspace serves one goroutine
// at a time. Workspaces are kept per length in a small free list (not a
// sync.Pool, which every garbage collection empties: the daemon would
// rebuild its FFT plans and buffers after each one).
type spectrumWork struct {
	n    int
	rfft *fourier.FFT
	re   []float64    // n
	half []complex128 // n/2+1
}

// spectrumKeep is how many idle workspaces are kept per length (one per
// worker of a 2-4 core machine, and the Hilbert and FRF of one hit).
const spectrumKeep = 4

var spectrumFree = struct {
	sync.Mutex
	m map[int][]*spectrumWork
}{m: map[int][]*spectrumWork{}}

func getSpectrumWork(n int) *spectrumWork {
	spectrumFree.Lock()
	if l := spectrumFree.m[n]; len(l) > 0 {
		w := l[len(l)-1]
		spectrumFree.m[n] = l[:len(l)-1]
		spectrumFree.Unlock()
		return w
	}
	spectrumFree.Unlock()
	return &spectrumWork{n: n, rfft: fourier.NewFFT(n), re: make([]float64, n), half: make([]complex128, n/2+1)}
}

func putSpectrumWork(w *spectrumWork) {
	// the largest transforms (a long record's) are not kept, and of the
	// large ones only one per length: their memory would stay with the
	// daemon between long files (at most a few MB in all)
	keep := spectrumKeep
	switch {
	case w.n > 1<<17:
		return
	case w.n > 1<<14:
		keep = 1
	}
	spectrumFree.Lock()
	if l := spectrumFree.m[w.n]; len(l) < keep {
		spectrumFree.m[w.n] = append(l, w)
	}
	spectrumFree.Unlock()
}

// transform loads x, zero-padded to w.n, and leaves its one-sided DFT in
// w.half (unnormalised, X_k = sum x_j exp(-2 pi i jk/n)).
func (w *spectrumWork) transform(x []float64) {
	copy(w.re, x)
	clear(w.re[len(x):])
	w.rfft.Coefficients(w.half, w.re)
}

// Hilbert writes to dst the magnitude of the analytic signal of x (its
// Hilbert envelope) and returns it. The analytic signal is made the FFT way:
// transform x zero-padded to the next power of two N, keep the DC and
// Nyquist bins, double the positive frequencies, zero the negative ones and
// transform back. That is scipy.signal.hilbert(x, N)[:len(x)]; when len(x)
// is a power of two it is scipy's default scipy.signal.hilbert(x) exactly.
// (The computation takes the equivalent cheaper route: the real part of
// that analytic signal is x itself and the imaginary part, the Hilbert
// transform, is the real inverse transform of -i sign(f) X(f).)
// The zero padding lets the transform wrap into silence rather than into
// the start of the record.
//
// The ends of the record distort the envelope. The first and last cycle
// or so are plainly wrong, and EnvelopeDamping skips them. Less plainly, a
// record that starts abruptly (a decay cut at its onset) leaves an error of
// about A/(2 pi wd t) at time t after the start, A the initial amplitude:
// it does not decay with the mode, so after 50 cycles the envelope is
// unreliable below about -60 dB of A. With a noise floor at 60 dB or more
// below the peak, take the envelope of the band-passed record including
// some samples before the onset and slice it afterwards,
// Hilbert(nil, band)[onset:], rather than Hilbert(nil, band[onset:]); the
// band-pass smooths the onset.
//
// dst may be nil, shorter than x (a new slice is made) or x itself.
func Hilbert(dst []float64, x []float64) []float64 {
	n := len(x)
	dst = growFloats(dst, n)
	if n == 0 {
		return dst
	}
	nfft := ceilPow2(n)
	w := getSpectrumWork(nfft)
	defer putSpectrumWork(w)
	w.transform(x)
	// -i sign(f) X(f): zero at DC and at Nyquist.
	w.half[0] = 0
	if nfft > 1 {
		w.half[nfft/2] = 0
	}
	for k := 1; k < nfft/2; k++ {
		c := w.half[k]
		w.half[k] = complex(imag(c), -real(c))
	}
	w.rfft.Sequence(w.re, w.half)
	inv := 1 / float64(nfft)
	for i, v := range x {
		dst[i] = math.Hypot(v, w.re[i]*inv)
	}
	return dst
}

// EnvelopeEdge returns the number of samples (one damped period, at least
// one) that the envelope fits skip at the start of a band-isolated decay
// sampled at fs with damped frequency fd, where the filter and Hilbert
// transform edge effects live.
func EnvelopeEdge(fs, fd float64) int {
	return max(1, int(math.Round(fs/fd)))
}

// envelopeSpan finds the samples [start, stop) that the envelope fits use:
// from one period after the onset to the FIRST sample below 10 times the
// noise (or to one period before the end of the record when the envelope
// never gets there). It also returns the usable time in seconds.
func envelopeSpan(env []float64, fs, fd, noise float64) (start, stop int, usableS float64, err error) {
	if !(fs > 0) || math.IsInf(fs, 0) {
		return 0, 0, 0, fmt.Errorf("modal: envelope: sample rate %g Hz is not a positive number", fs)
	}
	if !(fd > 0 && fd < fs/2) {
		return 0, 0, 0, fmt.Errorf("modal: envelope: frequency %g Hz outside (0, %g) Hz", fd, fs/2)
	}
	if !(noise >= 0) || math.IsInf(noise, 0) {
		return 0, 0, 0, fmt.Errorf("modal: envelope: noise level %g is not a non-negative number", noise)
	}
	edge := EnvelopeEdge(fs, fd)
	start = edge
	stop = -1
	thr := 10 * noise
	for i := start; i < len(env); i++ {
		if !(env[i] >= thr && env[i] > 0) { // also stops at NaN
			stop = i
			break
		}
	}
	if stop < 0 {
		stop = len(env) - edge
		usableS = float64(len(env)) / fs
	} else {
		usableS = float64(stop) / fs
	}
	if cycles := float64(stop-start) / fs * fd; cycles < 2 {
		return start, max(stop, start), usableS, fmt.Errorf("modal: envelope: %.1f cycles usable between the onset edge and the noise (need 2): %w", max(cycles, 0), ErrFewCycles)
	}
	return start, stop, usableS, nil
}

// logLineSlope returns the least-squares slope per sample of ln(env[i])
// against i over env[start:stop]. On a uniform grid the normal equations
// of a straight line reduce to slope = sum(d_i y_i) / sum(d_i^2) with d_i
// the index less its mean (sum d_i = 0, so the mean of y drops out).
func logLineSlope(env []float64, start, stop int) float64 {
	ic := float64(start+stop-1) / 2
	var sxy, sxx float64
	for i, v := range env[start:stop] {
		d := float64(start+i) - ic
		sxy += d * math.Log(v)
		sxx += d * d
	}
	return sxy / sxx
}

// zetaFromSigma converts a decay rate sigma (1/s) at damped frequency fd
// (Hz) to a damping ratio with the exact relation
// zeta = sigma / sqrt(wd^2 + sigma^2), since wn^2 = wd^2 + sigma^2.
func zetaFromSigma(sigma, fd float64) float64 {
	wd := 2 * math.Pi * fd
	return sigma / math.Hypot(wd, sigma)
}

// EnvelopeDamping fits a straight line to the logarithm of the envelope env
// (sampled at fs, starting at the onset of the decay, e.g. the Hilbert
// envelope of a band-isolated mode) and returns the damping ratio.
//
// fd is the DAMPED natural frequency in hertz, the frequency at which the
// band-isolated signal oscillates; from the decay rate sigma = -slope the
// damping ratio is zeta = sigma / sqrt((2 pi fd)^2 + sigma^2), exact for a
// viscously damped mode. (Passing the undamped f_n instead makes zeta low
// by about zeta^2/2 relative: 0.5 % of the value at zeta = 10 %.)
//
// The fit skips the first EnvelopeEdge(fs, fd) samples (one period, the
// filter and transform edge) and stops at the FIRST sample where env falls
// below 10 times noise, the noise standard deviation in the band (design
// rule of DESIGN.md section 5); if it never does, it stops one period before
// the end of the record. usableS is the time from the onset to that stop
// (to the end of the record when the envelope never reaches the noise). It
// returns an error wrapping ErrFewCycles when fewer than 2 cycles are
// usable, and an error when the envelope does not decay.
//
// The band-pass that isolated the mode rings at its own rate at the onset;
// with a band exactly MinBandwidth wide (order 2) that transient reads zeta
// about 1 to 2 % low on pipeline/synth decays at 60 dB SNR, less with a
// wider band or a lower noise floor (see TestMinBandwidthRule).
func EnvelopeDamping(env []float64, fs, fd, noise float64) (zeta float64, usableS float64, err error) {
	start, stop, usableS, err := envelopeSpan(env, fs, fd, noise)
	if err != nil {
		return math.NaN(), usableS, err
	}
	sigma := -logLineSlope(env, start, stop) * fs
	if !(sigma > 0) {
		return math.NaN(), usableS, fmt.Errorf("modal: envelope: the envelope does not decay (decay rate %.3g 1/s)", sigma)
	}
	return zetaFromSigma(sigma, fd), usableS, nil
}

// EnvelopeSplit fits the log envelope separately on the first and on the
// second half of the span EnvelopeDamping uses and returns the two damping
// ratios. A viscously damped mode gives two equal values; damping that
// grows or shrinks with amplitude (friction, joints) makes them differ. A
// half that does not decay gives a value <= 0. Both are NaN when the span
// is shorter than 4 cycles (2 per half) or the arguments are invalid.
func EnvelopeSplit(env []float64, fs, fd, noise float64) (early, late float64) {
	start, stop, _, err := envelopeSpan(env, fs, fd, noise)
	if err != nil || float64(stop-start)/fs*fd < 4 {
		return math.NaN(), math.NaN()
	}
	mid := (start + stop) / 2
	early = zetaFromSigma(-logLineSlope(env, start, mid)*fs, fd)
	late = zetaFromSigma(-logLineSlope(env, mid, stop)*fs, fd)
	return early, late
}

// EnvelopeShape compares the best exponential and the best straight line
// through the envelope on a linear scale over its usable span, from
// env[0] to the first sample below 10 times noise, and returns their
// residual sums of squares. A viscously damped mode decays exponentially
// (expRSS much smaller than linRSS); Coulomb friction makes the envelope
// fall linearly (linRSS much smaller). The exponential A exp(-sigma t) is
// fitted in linear scale by a golden-section search over sigma with the
// amplitude A solved in closed form for each sigma.
//
// Pass the envelope from the onset with the edge removed, e.g.
// env[EnvelopeEdge(fs, fd):]. Both are NaN when fewer than 4 samples are
// usable or the arguments are invalid.
func EnvelopeShape(env []float64, fs, noise float64) (expRSS, linRSS float64) {
	if !(fs > 0) || !(noise >= 0) {
		return math.NaN(), math.NaN()
	}
	thr := 10 * noise
	n := len(env)
	for i, v := range env {
		if !(v >= thr && v > 0) {
			n = i
			break
		}
	}
	if n < 4 {
		return math.NaN(), math.NaN()
	}
	y := env[:n]

	// Straight line, closed form on the uniform grid.
	ic := float64(n-1) / 2
	var sy float64
	for _, v := range y {
		sy += v
	}
	my := sy / float64(n)
	var sxy, sxx, syy float64
	for i, v := range y {
		d := float64(i) - ic
		sxy += d * (v - my)
		sxx += d * d
		syy += (v - my) * (v - my)
	}
	linRSS = math.Max(0, syy-sxy*sxy/sxx)

	// Exponential: for a given decay per sample r = exp(-sigma/fs) the best
	// amplitude is sum(y g)/sum(g g) with g_i = r^i, leaving
	// RSS = sum(y y) - sum(y g)^2 / sum(g g).
	var yy float64
	for _, v := range y {
		yy += v * v
	}
	rss := func(sigma float64) float64 {
		r := math.Exp(-sigma / fs)
		g, yg, gg := 1.0, 0.0, 0.0
		for _, v := range y {
			yg += v * g
			gg += g * g
			g *= r
		}
		return math.Max(0, yy-yg*yg/gg)
	}
	// Bracket: from no decay to well beyond the log-fit decay rate (and
	// beyond 20 time constants over the span, for an envelope that is not
	// exponential at all).
	s0 := 0.0
	if y[n-1] > 0 {
		s0 = -logLineSlope(y, 0, n) * fs
	}
	T := float64(n) / fs
	lo, hi := 0.0, math.Max(4*s0, 20/T)
	const invPhi = 0.6180339887498949 // (sqrt(5)-1)/2
	a := hi - invPhi*(hi-lo)
	b := lo + invPhi*(hi-lo)
	fa, fb := rss(a), rss(b)
	for it := 0; it < 80 && hi-lo > 1e-10*(1+hi); it++ {
		if fa < fb {
			hi, b, fb = b, a, fa
			a = hi - invPhi*(hi-lo)
			fa = rss(a)
		} else {
			lo, a, fa = a, b, fb
			b = lo + invPhi*(hi-lo)
			fb = rss(b)
		}
	}
	expRSS = math.Min(fa, fb)
	return expRSS, linRSS
}
