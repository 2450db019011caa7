package modal

import (
	"math"
	"math/cmplx"
	"slices"

	"github.com/ringlog/ringlog/pipeline/robust"
	"gonum.org/v1/gonum/dsp/fourier"
)

// Band processing: the spectrum of the decay only locates the modes; each
// group of modes is then shifted to a low rate (band signal) where the
// matrix pencil runs on a few hundred samples, whatever the record length.
//
// The band signal is made with a linear-phase FIR low-pass applied
// anti-causally from the onset: output m uses the samples
// onset+m*D .. onset+m*D+L-1, so it never sees the impact before the
// onset. A damped exponential c z^n through any FIR filter h is
// c (sum_j h_j z^j) z^n for every output whose window lies inside the
// decay: the pole, and so the frequency and the damping, pass unchanged
// whatever the damping and the band width. There is no filter ringing to
// hide a fast decay (the problem of recursive band-pass filters), only a
// complex gain, which is divided out of the amplitudes. What a short band
// loses is information at the start of the decay (the first outputs are
// weighted averages over the filter length), so the filter is kept short
// against the decay time: its half length is at most a tenth of the
// decay time constant guessed from the spectrum (minTransition).

// specPeak is a local maximum of the decay spectrum.
type specPeak struct {
	f     float64 // Hz
	hpbw  float64 // half-power bandwidth, Hz (includes the resolution)
	power float64 // |X|^2 at the peak
}

// ceilPow2 returns the smallest power of two >= n (at least 1).
func ceilPow2(n int) int {
	p := 1
	for p < n {
		p <<= 1
	}
	return p
}

// decaySpectrum returns the power spectrum |X_k|^2 of y zero-padded to at
// least twice its length (no window on the start of the decay; when the
// decay is cut off by the end of y, the last fifth is tapered with a half
// cosine so that the cut does not make sidelobes that look like modes).
// binHz is the bin spacing.
func decaySpectrum(y []float64, fs float64, truncated bool) (p []float64, binHz float64) {
	n := len(y)
	nfft := max(1024, ceilPow2(2*n))
	buf := make([]float64, nfft)
	copy(buf, y)
	if truncated {
		nt := n / 5
		for i := 0; i < nt; i++ {
			// weight 1 at the start of the taper, 0 at the last sample
			w := 0.5 * (1 + math.Cos(math.Pi*float64(i+1)/float64(nt)))
			buf[n-nt+i] *= w
		}
	}
	c := fourier.NewFFT(nfft).Coefficients(nil, buf)
	p = make([]float64, len(c))
	for k, v := range c {
		p[k] = real(v)*real(v) + imag(v)*imag(v)
	}
	return p, fs / float64(nfft)
}

// spectralPeaks finds the peaks of the power spectrum p (bin spacing
// binHz) between fmin and fmax that stand clearly above the noise floor
// and above their own surroundings. The floor is the median power over the
// band divided by ln 2 (the mean of an exponentially distributed
// periodogram of white noise); a peak must exceed it by ln(bins)+7 (a false
// alarm probability of about 1e-3 per record under white noise) and must
// stand 6 dB above the lowest point between it and the next higher peak on
// each side (prominence, so that noise ripple on the skirt of a strong
// mode is not taken for a mode).
func spectralPeaks(p []float64, binHz, fmin, fmax float64) []specPeak {
	kmin := max(2, int(math.Ceil(fmin/binHz)))
	kmax := min(len(p)-3, int(math.Floor(fmax/binHz)))
	if kmax-kmin < 8 {
		return nil
	}
	band := slices.Clone(p[kmin : kmax+1])
	floor := robust.Select(band, len(band)/2) / math.Ln2
	thr := floor * (math.Log(float64(len(band))) + 7)
	var peaks []specPeak
	for k := kmin; k <= kmax; k++ {
		pk := p[k]
		if !(pk > thr) || !(pk > p[k-1]) || pk < p[k+1] {
			continue
		}
		// prominence: on each side the spectrum must fall below a quarter
		// of the peak before it rises above the peak
		if !fallsBelow(p, k, -1, pk) || !fallsBelow(p, k, +1, pk) {
			continue
		}
		var j int
		half := pk / 2
		kl := float64(k)
		for j = k - 1; j >= 1; j-- {
			if p[j] < half {
				kl = float64(j) + (half-p[j])/(p[j+1]-p[j])
				break
			}
		}
		kr := float64(k)
		for j = k + 1; j < len(p); j++ {
			if p[j] < half {
				kr = float64(j) - (half-p[j])/(p[j-1]-p[j])
				break
			}
		}
		// parabolic refinement of the peak on the log power
		f := float64(k)
		if a, b, c := p[k-1], pk, p[k+1]; a > 0 && c > 0 {
			la, lb, lc := math.Log(a), math.Log(b), math.Log(c)
			if d := la - 2*lb + lc; d < 0 {
				f += 0.5 * (la - lc) / d
			}
		}
		peaks = append(peaks, specPeak{f: f * binHz, hpbw: math.Max(kr-kl, 1) * binHz, power: pk})
	}
	return peaks
}

// fallsBelow walks from bin k in direction dir and reports whether p
// falls below pk/4 before it exceeds pk or the data end.
func fallsBelow(p []float64, k, dir int, pk float64) bool {
	for j := k + dir; j >= 0 && j < len(p); j += dir {
		if p[j] > pk {
			return false
		}
		if p[j] < pk/4 {
			return true
		}
	}
	return true
}

// band is a frequency interval holding one mode or a group of close modes.
type band struct {
	lo, hi float64 // passband, Hz
	sigma  float64 // largest decay rate guessed from the spectral peaks, 1/s
	power  float64 // spectral power of the strongest peak in the band
}

// planBands turns spectral peaks into bands. Each peak gets a passband of
// +/- 5 half-power bandwidths (10 in all, above the rule of DESIGN.md
// section 5 that a band be at least 7 times the modal half-power
// bandwidth), and at least +/- 4 resolution cells; overlapping passbands are
// merged so that close modes are fitted together. The strongest maxBands
// bands are kept.
func planBands(peaks []specPeak, resHz float64, maxBands int) []band {
	var bs []band
	for _, pk := range peaks {
		w := math.Max(5*pk.hpbw, 4*resHz)
		bs = append(bs, band{
			lo:    math.Max(pk.f-w, 0.5*pk.f),
			hi:    pk.f + w,
			sigma: math.Pi * pk.hpbw, // half-power bandwidth 2 sigma / (2 pi)
			power: pk.power,
		})
	}
	slices.SortFunc(bs, func(a, b band) int {
		switch {
		case a.lo < b.lo:
			return -1
		case a.lo > b.lo:
			return 1
		}
		return 0
	})
	var merged []band
	for _, b := range bs {
		if n := len(merged); n > 0 && b.lo <= merged[n-1].hi {
			m := &merged[n-1]
			m.hi = math.Max(m.hi, b.hi)
			m.sigma = math.Max(m.sigma, b.sigma)
			m.power = math.Max(m.power, b.power)
			continue
		}
		merged = append(merged, b)
	}
	slices.SortFunc(merged, func(a, b band) int {
		switch {
		case a.power > b.power:
			return -1
		case a.power < b.power:
			return 1
		}
		return 0
	})
	if len(merged) > maxBands {
		merged = merged[:maxBands]
	}
	return merged
}

// Band signal kinds.
const (
	bandFull  = iota // the decay itself at the full rate
	bandLow          // real low-pass and decimation
	bandShift        // shift to baseband, complex low-pass, decimation, back to a real signal at a quarter of the new rate
)

// bandSignal is a real signal at a reduced rate that carries the modes of
// one band with their poles unchanged (see the comment at the top).
type bandSignal struct {
	y       []float64
	dt      float64 // sample interval, s
	kind    int
	lo, hi  float64   // passband, Hz (true frequencies)
	shiftHz float64   // true damped frequency = band frequency + shiftHz
	mixHz   float64   // mixing frequency of a shifted band
	h       []float64 // FIR at the full rate (nil for bandFull)
	fs      float64   // full rate
	noise   float64   // noise sd of y per unit full-rate white noise sd
}

// minTransition returns the narrowest FIR transition band (Hz) whose
// filter half length stays under a tenth of the decay time constant 1/sigma:
// the Kaiser length is about 4.3 fs / transition samples, so the half
// length is 2.15/transition seconds.
func minTransition(sigma float64) float64 { return 21.5 * sigma }

// kaiserLowPass designs a linear-phase low-pass FIR with unit gain at zero
// frequency, -6 dB at fc, transition width tw (Hz) and about 70 dB of
// stopband attenuation (Kaiser window; Kaiser's formulas for beta and the
// length, as in Oppenheim & Schafer, Discrete-Time Signal Processing,
// section 7.5, from memory).
func kaiserLowPass(fs, fc, tw float64) []float64 {
	const atten = 70.0
	beta := 0.1102 * (atten - 8.7)
	n := int(math.Ceil((atten-8)/(2.285*2*math.Pi*tw/fs))) + 1
	if n%2 == 0 {
		n++
	}
	n = max(n, 3)
	h := make([]float64, n)
	m := float64(n-1) / 2
	i0b := besselI0(beta)
	wc := 2 * fc / fs
	var sum float64
	for j := range h {
		t := float64(j) - m
		s := wc
		if t != 0 {
			s = math.Sin(math.Pi*wc*t) / (math.Pi * t)
		}
		r := t / m
		h[j] = s * besselI0(beta*math.Sqrt(math.Max(0, 1-r*r))) / i0b
		sum += h[j]
	}
	for j := range h {
		h[j] /= sum
	}
	return h
}

// besselI0 is the modified Bessel function of the first kind, order 0, by
// its power series sum ((x/2)^k / k!)^2 (Abramowitz & Stegun 9.6.12).
func besselI0(x float64) float64 {
	sum, term := 1.0, 1.0
	q := x * x / 4
	for k := 1; k < 500; k++ {
		term *= q / float64(k*k)
		sum += term
		if term < 1e-17*sum {
			break
		}
	}
	return sum
}

// makeBandSignal builds the band signal of b from the decay x0 (x0[0] is
// the onset) sampled at fs, with at most nOut samples.
func makeBandSignal(x0 []float64, fs float64, b band, nOut int) *bandSignal {
	bs := &bandSignal{lo: b.lo, hi: b.hi, fs: fs, kind: bandFull, dt: 1 / fs, noise: 1}
	tw := math.Max((b.hi-b.lo)/2, minTransition(b.sigma))
	w := (b.hi - b.lo) / 2
	fc := (b.lo + b.hi) / 2
	var d int
	var fcut float64
	if b.lo-tw > 0 {
		bs.kind = bandShift
		d = int(fs / (2 * (2*w + tw)))
		fcut = w + tw/2
	} else {
		bs.kind = bandLow
		d = int(fs / (2*b.hi + tw))
		fcut = b.hi + tw/2
	}
	if d >= 2 {
		bs.h = kaiserLowPass(fs, fcut, tw)
		// the decay must cover the filter and a useful number of outputs
		if len(bs.h)+32*d > len(x0) {
			bs.h = nil
		}
	}
	if d < 2 || bs.h == nil {
		bs.kind = bandFull
		n := min(nOut, len(x0))
		bs.y = slices.Clone(x0[:n])
		return bs
	}
	L := len(bs.h)
	n := min(nOut, (len(x0)-L)/d+1)
	bs.y = make([]float64, n)
	bs.dt = float64(d) / fs
	var h2 float64
	for _, v := range bs.h {
		h2 += v * v
	}
	switch bs.kind {
	case bandLow:
		bs.noise = math.Sqrt(h2)
		for m := range bs.y {
			seg := x0[m*d : m*d+L]
			var s float64
			for j, v := range bs.h {
				s += v * seg[j]
			}
			bs.y[m] = s
		}
	case bandShift:
		bs.noise = math.Sqrt(h2 / 2)
		bs.mixHz = fc
		fsr := fs / float64(d)
		bs.shiftHz = fc - fsr/4
		// g_j = h_j exp(-i wc j/fs); v_m = exp(-i wc m d/fs) sum_j g_j x0[m d + j];
		// y_m = Re(v_m i^m).
		wc := 2 * math.Pi * fc / fs
		gr := make([]float64, L)
		gi := make([]float64, L)
		for j, v := range bs.h {
			s, c := math.Sincos(-wc * float64(j))
			gr[j], gi[j] = v*c, v*s
		}
		for m := range bs.y {
			seg := x0[m*d : m*d+L]
			var sr, si float64
			for j, v := range seg {
				sr += gr[j] * v
				si += gi[j] * v
			}
			// rotate by exp(-i wc m d) * i^m = exp(i (pi/2 - wc d) m)
			ph := math.Mod((math.Pi/2-wc*float64(d))*float64(m), 2*math.Pi)
			s, c := math.Sincos(ph)
			bs.y[m] = sr*c - si*s
		}
	}
	return bs
}

// gain returns the complex gain sum_j h_j exp((s - i w_mix) j/fs) that the
// band filter applies to the positive-frequency part of a true pole
// s = -sigma + i omega_d (1 for a full-rate band).
func (bs *bandSignal) gain(sigma, omegaD float64) complex128 {
	if bs.h == nil {
		return 1
	}
	wmix := 2 * math.Pi * bs.mixHz
	step := cmplx.Exp(complex(-sigma, omegaD-wmix) / complex(bs.fs, 0))
	var g, z complex128 = 0, 1
	for _, v := range bs.h {
		g += complex(v, 0) * z
		z *= step
	}
	return g
}

// toTrue maps a component found in the band signal to the full-rate decay:
// frequency shifted back, amplitude and phase corrected for the filter gain
// (a shifted band carries half the amplitude, the positive-frequency part).
func (bs *bandSignal) toTrue(c Component) Component {
	t := c
	t.Omega = c.Omega + 2*math.Pi*bs.shiftHz
	if bs.h == nil {
		return t
	}
	g := bs.gain(t.Sigma, t.Omega)
	if bs.kind == bandShift {
		g /= 2
	}
	if a := cmplx.Abs(g); a > 0 {
		t.Amp = c.Amp / a
		t.Phase = c.Phase - cmplx.Phase(g)
	}
	return t
}
