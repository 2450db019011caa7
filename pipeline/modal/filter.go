package modal

import (
	"fmt"
	"math"
	"math/cmplx"
	"sync"
)

// Zero-phase Butterworth filters for band-isolating one mode before the
// envelope and log-decrement estimates.
//
// The design follows the textbook route: analog Butterworth prototype
// poles p_m = -exp(i pi m / 2N), m = -N+1, -N+3, ..., N-1; a low-pass or
// band-pass frequency transformation at edge frequencies pre-warped with
// w = 2 fs tan(pi f / fs); the bilinear transform z = (2 fs + s)/(2 fs - s);
// conjugate poles grouped into second-order sections so that high orders
// and narrow bands at low normalised frequency stay numerically stable.
// The filter is run forward and then backward over the signal (zero phase,
// squared magnitude response), after extending both ends by an odd
// reflection of 3*(2*sections+1) samples (less one per first-order
// section) and starting each pass from the steady state of a step to the
// first sample. That is the default behaviour documented for
// scipy.signal.sosfiltfilt, and testdata/scipy holds reference outputs of
// scipy's butter(output='sos') + sosfiltfilt that the tests compare against.

// MaxFilterOrder is the highest Butterworth order BandPass and LowPass
// accept.
const MaxFilterOrder = 12

// MinBandwidth returns the narrowest band-pass width in hertz that can
// isolate a mode of natural frequency fn and damping ratio zeta without
// hiding its decay: 7 times the half-power bandwidth 2 zeta fn (the rule of
// DESIGN.md section 5; a band-pass filter rings at its own decay rate, and a
// narrower filter makes a heavily damped mode look lighter).
func MinBandwidth(fn, zeta float64) float64 { return 7 * 2 * zeta * fn }

// biquad is one second-order section, a0 = 1, run in transposed direct
// form II: y = b0 x + s0; s0 = b1 x - a1 y + s1; s1 = b2 x - a2 y.
type biquad struct{ b0, b1, b2, a1, a2 float64 }

// sosDesign is a designed filter: its sections, the per-section initial
// state for a unit step held since minus infinity, and the edge length.
type sosDesign struct {
	n   int
	sec [MaxFilterOrder]biquad
	zi  [MaxFilterOrder][2]float64
	pad int
}

// bilinearK is the bilinear-transform constant 2 fs for a normalised
// sample rate fs = 2 (frequencies in units of the Nyquist frequency, as
// scipy.signal does internally).
const bilinearK = 4.0

// prewarp returns the pre-warped analog frequency of f hertz at sample rate fs
// in the normalised units of bilinearK.
func prewarp(f, fs float64) float64 { return bilinearK * math.Tan(math.Pi*f/fs) }

// butterProto returns the m-th pole of the N-th order analog Butterworth
// prototype, m = 0..N-1.
func butterProto(order, m int) complex128 {
	k := float64(2*m - order + 1)
	return -cmplx.Exp(complex(0, math.Pi*k/float64(2*order)))
}

// bilinearPole maps an analog pole to the z plane.
func bilinearPole(s complex128) complex128 {
	return (complex(bilinearK, 0) + s) / (complex(bilinearK, 0) - s)
}

// designLowPass fills d with an order-N low-pass at fc hertz.
func designLowPass(d *sosDesign, fs, fc float64, order int) {
	wc := prewarp(fc, fs)
	gain := complex(math.Pow(wc, float64(order)), 0)
	d.n = 0
	for m := 0; m < order; m++ {
		pa := complex(wc, 0) * butterProto(order, m)
		gain /= complex(bilinearK, 0) - pa
		if 2*m-order+1 > 0 {
			continue // the conjugate of an earlier pole
		}
		pz := bilinearPole(pa)
		if 2*m-order+1 == 0 { // the real pole of an odd order
			d.sec[d.n] = biquad{b0: 1, b1: 1, a1: -real(pz)}
		} else {
			d.sec[d.n] = biquad{b0: 1, b1: 2, b2: 1, a1: -2 * real(pz), a2: real(pz)*real(pz) + imag(pz)*imag(pz)}
		}
		d.n++
	}
	d.scaleFirst(real(gain))
	d.finish()
}

// designBandPass fills d with an order-N band-pass (2N poles, N sections)
// between lo and hi hertz.
func designBandPass(d *sosDesign, fs, lo, hi float64, order int) {
	w1, w2 := prewarp(lo, fs), prewarp(hi, fs)
	wo2 := complex(w1*w2, 0)
	bw := w2 - w1
	// N zeros at s = 0 contribute (2 fs)^N to the digital gain.
	gain := complex(math.Pow(bw*bilinearK, float64(order)), 0)
	var reals [2 * MaxFilterOrder]float64
	nReal := 0
	d.n = 0
	for m := 0; m < order; m++ {
		plp := butterProto(order, m) * complex(bw/2, 0)
		r := cmplx.Sqrt(plp*plp - wo2)
		for _, pa := range [2]complex128{plp + r, plp - r} {
			gain /= complex(bilinearK, 0) - pa
			pz := bilinearPole(pa)
			switch {
			case imag(pz) > 0:
				d.sec[d.n] = biquad{b0: 1, b2: -1, a1: -2 * real(pz), a2: real(pz)*real(pz) + imag(pz)*imag(pz)}
				d.n++
			case imag(pz) == 0:
				reals[nReal] = real(pz)
				nReal++
			}
		}
	}
	// Real poles (only from the real prototype pole of an odd order over a
	// very wide band) come in pairs.
	for i := 0; i+1 < nReal; i += 2 {
		p, q := reals[i], reals[i+1]
		d.sec[d.n] = biquad{b0: 1, b2: -1, a1: -(p + q), a2: p * q}
		d.n++
	}
	d.scaleFirst(real(gain))
	d.finish()
}

func (d *sosDesign) scaleFirst(k float64) {
	d.sec[0].b0 *= k
	d.sec[0].b1 *= k
	d.sec[0].b2 *= k
}

// finish computes the step steady-state initial conditions of the cascade
// and the edge length.
func (d *sosDesign) finish() {
	scale := 1.0
	firstOrder := 0
	for i := 0; i < d.n; i++ {
		s := d.sec[i]
		// Steady state of the transposed direct form II for a unit step:
		// (1+a1) s0 - s1 = b1 - a1 b0 and a2 s0 + s1 = b2 - a2 b0.
		c0 := s.b1 - s.a1*s.b0
		c1 := s.b2 - s.a2*s.b0
		z0 := (c0 + c1) / (1 + s.a1 + s.a2)
		d.zi[i] = [2]float64{scale * z0, scale * (c1 - s.a2*z0)}
		scale *= (s.b0 + s.b1 + s.b2) / (1 + s.a1 + s.a2)
		if s.b2 == 0 && s.a2 == 0 {
			firstOrder++
		}
	}
	d.pad = 3 * (2*d.n + 1 - firstOrder)
}

// run filters buf in place through the cascade, starting every section
// from its steady state for a step of height buf[0].
func (d *sosDesign) run(buf []float64) {
	x0 := buf[0]
	for k := 0; k < d.n; k++ {
		s := d.sec[k]
		s0, s1 := d.zi[k][0]*x0, d.zi[k][1]*x0
		for i, v := range buf {
			y := s.b0*v + s0
			s0 = s.b1*v - s.a1*y + s1
			s1 = s.b2*v - s.a2*y
			buf[i] = y
		}
	}
}

var filterBufPool = sync.Pool{New: func() any { return new([]float64) }}

// filtfilt runs the designed filter forward and backward over x with odd
// extension of both ends and writes the result to dst.
func (d *sosDesign) filtfilt(dst, x []float64) []float64 {
	n, pad := len(x), d.pad
	bp := filterBufPool.Get().(*[]float64)
	defer filterBufPool.Put(bp)
	if cap(*bp) < n+2*pad {
		*bp = make([]float64, n+2*pad)
	}
	buf := (*bp)[:n+2*pad]
	for i := 0; i < pad; i++ {
		buf[i] = 2*x[0] - x[pad-i]
		buf[pad+n+i] = 2*x[n-1] - x[n-2-i]
	}
	copy(buf[pad:pad+n], x)
	d.run(buf)
	reverseFloats(buf)
	d.run(buf)
	reverseFloats(buf)
	dst = growFloats(dst, n)
	copy(dst, buf[pad:pad+n])
	return dst
}

func reverseFloats(x []float64) {
	for i, j := 0, len(x)-1; i < j; i, j = i+1, j-1 {
		x[i], x[j] = x[j], x[i]
	}
}

// growFloats returns dst with length n, reusing its storage when it is large
// enough.
func growFloats(dst []float64, n int) []float64 {
	if cap(dst) >= n {
		return dst[:n]
	}
	return make([]float64, n)
}

func checkFilterArgs(name string, n int, fs float64, order int) error {
	if !(fs > 0) || math.IsInf(fs, 0) {
		return fmt.Errorf("modal: %s: sample rate %g Hz is not a positive number", name, fs)
	}
	if order < 1 || order > MaxFilterOrder {
		return fmt.Errorf("modal: %s: order %d outside 1..%d", name, order, MaxFilterOrder)
	}
	if n < 2 {
		return fmt.Errorf("modal: %s: signal of %d samples is too short", name, n)
	}
	return nil
}

// BandPass writes to dst the zero-phase Butterworth band-pass of x between
// lo and hi hertz and returns it. order is the order N of the low-pass
// prototype: the filter has 2N poles in N second-order sections, and the
// forward-backward run squares its magnitude response (the gain at the
// edges lo and hi is 1/2, -6 dB) with zero phase shift. The output matches
// scipy.signal.sosfiltfilt(scipy.signal.butter(N, [lo, hi], 'bandpass',
// fs=fs, output='sos'), x) with its default odd padding of 3*(2N+1)
// samples at each end; x must be longer than that.
//
// dst may be nil, shorter than x (a new slice is made) or x itself.
func BandPass(dst, x []float64, fs, lo, hi float64, order int) ([]float64, error) {
	if err := checkFilterArgs("band-pass", len(x), fs, order); err != nil {
		return dst, err
	}
	if !(lo > 0 && lo < hi && hi < fs/2) {
		return dst, fmt.Errorf("modal: band-pass %g-%g Hz: need 0 < low < high < %g Hz (half the sample rate)", lo, hi, fs/2)
	}
	var d sosDesign
	designBandPass(&d, fs, lo, hi, order)
	if len(x) <= d.pad {
		return dst, fmt.Errorf("modal: band-pass %g-%g Hz order %d: signal of %d samples must be longer than the %d-sample edge padding", lo, hi, order, len(x), d.pad)
	}
	return d.filtfilt(dst, x), nil
}

// LowPass writes to dst the zero-phase Butterworth low-pass of x with cut-off
// fc hertz (gain 1/2 at fc after the forward-backward run) and returns it.
// It matches scipy.signal.sosfiltfilt(scipy.signal.butter(order, fc,
// fs=fs, output='sos'), x). x must be longer than the edge padding of
// 3*(2*sections+1) samples, less 3 for an odd order.
//
// dst may be nil, shorter than x (a new slice is made) or x itself.
func LowPass(dst, x []float64, fs, fc float64, order int) ([]float64, error) {
	if err := checkFilterArgs("low-pass", len(x), fs, order); err != nil {
		return dst, err
	}
	if !(fc > 0 && fc < fs/2) {
		return dst, fmt.Errorf("modal: low-pass %g Hz: need 0 < cut-off < %g Hz (half the sample rate)", fc, fs/2)
	}
	var d sosDesign
	designLowPass(&d, fs, fc, order)
	if len(x) <= d.pad {
		return dst, fmt.Errorf("modal: low-pass %g Hz order %d: signal of %d samples must be longer than the %d-sample edge padding", fc, order, len(x), d.pad)
	}
	return d.filtfilt(dst, x), nil
}
