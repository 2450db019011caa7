package field

import (
	"math"
	"math/cmplx"
)

// biquad is one second-order section b/a with a0 = 1, run in transposed
// direct form II.
type biquad struct{ b0, b1, b2, a1, a2 float64 }

// sos is a cascade of sections.
type sos []biquad

// butterLowPass designs an order-N Butterworth low-pass with corner fc at
// sample rate fs: analog prototype poles wc exp(i pi (2m+N+1)/(2N)),
// corner pre-warped to wc = 2 fs tan(pi fc/fs), bilinear transform, all
// zeros at z = -1, each section scaled to unit gain at DC (the overall
// response is that of scipy.signal.butter(N, fc, fs=fs)).
func butterLowPass(order int, fc, fs float64) sos {
	k := 2 * fs
	wc := k * math.Tan(math.Pi*fc/fs)
	var out sos
	for m := 0; m < order; m++ {
		pa := complex(wc, 0) * cmplx.Exp(complex(0, math.Pi*float64(2*m+order+1)/float64(2*order)))
		if imag(pa) < -1e-12*wc {
			continue // the conjugate of a pole already taken
		}
		pz := (complex(k, 0) + pa) / (complex(k, 0) - pa)
		if math.Abs(imag(pa)) <= 1e-12*wc {
			p := real(pz)
			g := (1 - p) / 2
			out = append(out, biquad{b0: g, b1: g, a1: -p})
			continue
		}
		a1, a2 := -2*real(pz), real(pz)*real(pz)+imag(pz)*imag(pz)
		g := (1 + a1 + a2) / 4
		out = append(out, biquad{b0: g, b1: 2 * g, b2: g, a1: a1, a2: a2})
	}
	return out
}

// highPass1 designs the first-order high-pass s/(s + wc) of an AC
// coupling with corner fc, by the bilinear transform with pre-warping
// (scipy.signal.butter(1, fc, 'highpass', fs=fs)).
func highPass1(fc, fs float64) sos {
	k := 2 * fs
	wc := k * math.Tan(math.Pi*fc/fs)
	p := (k - wc) / (k + wc)
	g := (1 + p) / 2
	return sos{{b0: g, b1: -g, a1: -p}}
}

// response returns the complex frequency response at f hertz.
func (s sos) response(f, fs float64) complex128 {
	return s.at(cmplx.Exp(complex(0, 2*math.Pi*f/fs)))
}

// at returns the transfer function at z.
func (s sos) at(z complex128) complex128 {
	z1 := 1 / z
	z2 := z1 * z1
	h := complex(1, 0)
	for _, q := range s {
		num := complex(q.b0, 0) + complex(q.b1, 0)*z1 + complex(q.b2, 0)*z2
		den := 1 + complex(q.a1, 0)*z1 + complex(q.a2, 0)*z2
		h *= num / den
	}
	return h
}

// apply filters x in place. With steady true each section starts in the
// steady state of a constant input equal to x[0] (as if the signal had
// been there forever, the way a recorder that runs continuously sees
// it); otherwise from rest.
func (s sos) apply(x []float64, steady bool) {
	if len(x) == 0 {
		return
	}
	in0 := x[0]
	for _, q := range s {
		var s0, s1 float64
		if steady {
			dc := 0.0
			if d := 1 + q.a1 + q.a2; d != 0 {
				dc = (q.b0 + q.b1 + q.b2) / d
			}
			y := dc * in0
			s1 = q.b2*in0 - q.a2*y
			s0 = q.b1*in0 - q.a1*y + s1
			in0 = y
		}
		for i, v := range x {
			y := q.b0*v + s0
			s0 = q.b1*v - q.a1*y + s1
			s1 = q.b2*v - q.a2*y
			x[i] = y
		}
	}
}
