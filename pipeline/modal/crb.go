package modal

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// CRBZeta returns the Cramer-Rao lower bound on the standard deviation of
// an unbiased estimate of the damping ratio of one damped sinusoid
//
//	s(t) = amp exp(-sigma t) cos(omega_d t + phase),  t = i/fs, i = 0..n-1,
//
// with sigma = zeta omega_n and omega_d = omega_n sqrt(1 - zeta^2), in
// white Gaussian noise of standard deviation noiseSD. The Fisher
// information over theta = (A, sigma, omega_d, phi) is
// J = (1/noiseSD^2) sum_i g_i g_i^T with g_i the partial derivatives of
// s(t_i), and the bound on var(zeta) is grad(zeta)^T J^-1 grad(zeta), with
// zeta = sigma / sqrt(sigma^2 + omega_d^2) (Kay, Fundamentals of Statistical
// Signal Processing: Estimation Theory, ch. 3, the transformation of
// parameters; Yao & Pandit, IEEE Trans. Signal Processing, 1994-1995, for
// damped sinusoids).
//
// For a fully decayed record the bound tends to
// sd(zeta)/zeta = 2/sqrt(ENR), with ENR the decay energy over the noise
// variance (DESIGN.md section 6). CRBZeta returns NaN for invalid
// arguments and +Inf when the information matrix is singular (n < 4 or
// amp = 0).
func CRBZeta(fn, zeta, amp, phase, noiseSD, fs float64, n int) float64 {
	if !(fn > 0) || !(zeta > 0 && zeta < 1) || !(fs > 0) || !(noiseSD > 0) || n < 1 ||
		math.IsInf(fn, 0) || math.IsInf(fs, 0) || math.IsInf(noiseSD, 0) || math.IsNaN(amp) || math.IsNaN(phase) {
		return math.NaN()
	}
	wn := 2 * math.Pi * fn
	sigma := zeta * wn
	wd := wn * math.Sqrt(1-zeta*zeta)
	fim := mat.NewSymDense(4, nil)
	var g [4]float64
	var acc [4][4]float64
	dt := 1 / fs
	for i := 0; i < n; i++ {
		t := float64(i) * dt
		e := amp * math.Exp(-sigma*t)
		if e == 0 {
			break // underflow: the rest carries no information
		}
		sn, cs := math.Sincos(wd*t + phase)
		g[0] = e / amp * cs // d/dA
		g[1] = -t * e * cs  // d/dsigma
		g[2] = -t * e * sn  // d/domega_d
		g[3] = -e * sn      // d/dphi
		for r := 0; r < 4; r++ {
			for c := r; c < 4; c++ {
				acc[r][c] += g[r] * g[c]
			}
		}
	}
	v := noiseSD * noiseSD
	for r := 0; r < 4; r++ {
		for c := r; c < 4; c++ {
			fim.SetSym(r, c, acc[r][c]/v)
		}
	}
	var chol mat.Cholesky
	if !chol.Factorize(fim) {
		return math.Inf(1)
	}
	// grad(zeta) over (A, sigma, omega_d, phi).
	w3 := math.Pow(sigma*sigma+wd*wd, 1.5)
	grad := mat.NewVecDense(4, []float64{0, wd * wd / w3, -sigma * wd / w3, 0})
	var x mat.VecDense
	if err := chol.SolveVecTo(&x, grad); err != nil {
		return math.Inf(1)
	}
	q := mat.Dot(grad, &x)
	if !(q >= 0) {
		return math.Inf(1)
	}
	return math.Sqrt(q)
}
