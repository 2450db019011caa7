package field

import (
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/dsp/fourier"
)

// sensorNoise returns n samples at rate fs of stationary Gaussian noise
// with one-sided power spectral density density^2 (1 + corner/f): white
// noise of that density shaped in the frequency domain (one FFT of the
// next power of two, bins scaled by sqrt(1 + corner/f), the mean removed),
// the usual way to make 1/f ("pink") noise for a given spectrum. With
// corner 0 it is white.
func sensorNoise(r *rand.Rand, n int, fs, density, corner float64) []float64 {
	if n == 0 || density <= 0 {
		return make([]float64, n)
	}
	sd := density * math.Sqrt(fs/2) // white noise sd for one-sided density
	if corner <= 0 {
		out := make([]float64, n)
		for i := range out {
			out[i] = sd * r.NormFloat64()
		}
		return out
	}
	m := 1
	for m < n {
		m <<= 1
	}
	w := make([]float64, m)
	for i := range w {
		w[i] = sd * r.NormFloat64()
	}
	ft := fourier.NewFFT(m)
	c := ft.Coefficients(nil, w)
	c[0] = 0
	for k := 1; k < len(c); k++ {
		f := float64(k) * fs / float64(m)
		c[k] *= complex(math.Sqrt(1+corner/f), 0)
	}
	ft.Sequence(w, c)
	inv := 1 / float64(m)
	for i := range w {
		w[i] *= inv
	}
	return w[:n:n]
}
