package modal

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"
	"slices"

	"gonum.org/v1/gonum/mat"
)

// Component is one exponentially decaying oscillation of a free decay,
//
//	Amp exp(-Sigma t) cos(Omega t + Phase),
//
// with t in seconds from the first sample of the decay.
type Component struct {
	Sigma float64 // decay rate, 1/s; positive when the oscillation decays
	Omega float64 // damped angular frequency, rad/s
	Amp   float64 // amplitude at t = 0
	Phase float64 // phase at t = 0, radians
}

// Modal returns the undamped natural frequency (Hz) and the damping ratio
// of the component's pole s = -Sigma + i Omega: omega_n = |s|,
// zeta = Sigma/|s|.
func (c Component) Modal() (fn, zeta float64) {
	wn := math.Hypot(c.Sigma, c.Omega)
	if wn == 0 {
		return 0, math.NaN()
	}
	return wn / (2 * math.Pi), c.Sigma / wn
}

// ErrNoSignal says that a record holds nothing above the noise.
var ErrNoSignal = errors.New("no signal above the noise")

// Pencil limits.
const (
	pencilMaxOrder = 40 // largest model order (2 per oscillating component)
	pencilMinLen   = 12 // fewest samples the pencil accepts
)

// Subspace estimates the damped oscillations in the real sequence y,
// sampled at fs, by the matrix pencil method (Hua & Sarkar, IEEE Trans.
// ASSP 38(5), 1990) on the real samples:
//
//  1. Hankel matrix Y[i][j] = y[i+j] with pencil parameter L = N/3 (Hua &
//     Sarkar recommend N/3 to N/2), Y = U S V^T by gonum's SVD;
//  2. model order M from the singular values: the number above the largest
//     singular value a Hankel matrix of white noise of standard deviation
//     noiseSD would have, about noiseSD (sqrt(rows) + sqrt(cols)) (with a
//     25 % margin); with noiseSD = 0 the largest gap s_{k-1}/s_k. M is
//     rounded up to even (a real oscillation is a conjugate pair);
//  3. the signal subspace V_M (first M right singular vectors) is shift
//     invariant: V_M without its first row = V_M without its last row
//     times Phi, and the eigenvalues of Phi (gonum's Eigen) are the poles
//     z = exp(s/fs);
//  4. the pencil is repeated at orders M+2 and M+4: a pole counts only
//     when it reappears there within tolerances in frequency and decay
//     rate (pole stability across orders); noise poles wander;
//  5. amplitudes and phases by linear least squares on the damped-cosine
//     and damped-sine basis of the poles (the real form of the Vandermonde
//     system); components whose energy over the record is below 25 times
//     the noise variance (a 5 sigma detection) or below 1e-4 of the
//     largest amplitude are dropped.
//
// The real form (working on the real samples, poles in conjugate pairs)
// keeps every matrix real, so gonum's real SVD and eigen decomposition
// apply directly; band signals are made real for this (see band.go).
//
// Subspace returns the components with Omega > 0 (one per conjugate pair;
// real poles, offsets and drifts, are left out), strongest first, and the
// singular values. It returns ErrNoSignal when no singular value rises
// above the noise.
func Subspace(y []float64, fs, noiseSD float64) ([]Component, []float64, error) {
	n := len(y)
	if n < pencilMinLen {
		return nil, nil, fmt.Errorf("modal: subspace: %d samples, need at least %d", n, pencilMinLen)
	}
	if !(fs > 0) || math.IsInf(fs, 0) || !(noiseSD >= 0) {
		return nil, nil, fmt.Errorf("modal: subspace: invalid sample rate %g or noise %g", fs, noiseSD)
	}
	cols := n/3 + 1 // L+1
	rows := n - cols + 1
	hk := mat.NewDense(rows, cols, nil)
	for i := 0; i < rows; i++ {
		copy(hk.RawRowView(i), y[i:i+cols])
	}
	var svd mat.SVD
	if !svd.Factorize(hk, mat.SVDThinV) {
		return nil, nil, errors.New("modal: subspace: SVD did not converge")
	}
	sv := svd.Values(nil)
	var v mat.Dense
	svd.VTo(&v)

	maxM := min(pencilMaxOrder, cols-6, rows-6)
	if maxM < 2 {
		return nil, sv, fmt.Errorf("modal: subspace: %d samples are too few for a model", n)
	}
	m := pencilOrder(sv, noiseSD, rows, cols, maxM-4)
	if m == 0 {
		return nil, sv, ErrNoSignal
	}
	base := pencilPoles(&v, cols, m)
	alt1 := pencilPoles(&v, cols, min(m+2, maxM))
	alt2 := pencilPoles(&v, cols, min(m+4, maxM))
	dt := 1 / fs
	// poles: oscillating ones that are stable across orders; the real
	// poles (z on the real axis: offsets, drifts, alternating noise at the
	// Nyquist frequency) join the amplitude fit as one real column each but
	// are not returned
	var poles, reals []complex128
	for _, z := range base {
		if !(cmplx.Abs(z) > 0) {
			continue
		}
		s := cmplx.Log(z) / complex(dt, 0)
		if math.Abs(imag(z)) <= 1e-9*cmplx.Abs(z) {
			reals = append(reals, complex(real(z), 0))
			continue
		}
		if imag(s) < 0 {
			continue // conjugate half
		}
		// a pole growing by more than e^3 over the record is a noise pole
		if -real(s)*float64(n)*dt < -3 {
			continue
		}
		if stablePole(s, alt1, dt, fs) && stablePole(s, alt2, dt, fs) {
			poles = append(poles, s)
		}
	}
	comps := pencilAmplitudes(y, dt, poles, reals)
	// significance
	amax := 0.0
	for _, c := range comps {
		amax = math.Max(amax, c.Amp)
	}
	var out []Component
	for _, c := range comps {
		if !(c.Amp > 1e-4*amax) {
			continue
		}
		if noiseSD > 0 {
			e := c.Amp * c.Amp / 2 * expSum(c.Sigma*dt, n)
			if e < 25*noiseSD*noiseSD {
				continue
			}
		}
		out = append(out, c)
	}
	slices.SortFunc(out, func(a, b Component) int {
		switch {
		case a.Amp > b.Amp:
			return -1
		case a.Amp < b.Amp:
			return 1
		}
		return 0
	})
	return out, sv, nil
}

// expSum returns sum_{i<n} exp(-2 a i), the energy of a unit envelope
// decaying by a per sample.
func expSum(a float64, n int) float64 {
	r := math.Exp(-2 * a)
	if math.Abs(1-r) < 1e-12 {
		return float64(n)
	}
	return (1 - math.Pow(r, float64(n))) / (1 - r)
}

// pencilOrder picks the model order from the singular values (see
// Subspace), at most maxM.
func pencilOrder(sv []float64, noiseSD float64, rows, cols, maxM int) int {
	if len(sv) == 0 || !(sv[0] > 0) {
		return 0
	}
	var m int
	if noiseSD > 0 {
		thr := 1.25 * noiseSD * (math.Sqrt(float64(rows)) + math.Sqrt(float64(cols)))
		thr = math.Max(thr, 1e-10*sv[0])
		for m < len(sv) && sv[m] > thr {
			m++
		}
	} else {
		best := 0.0
		for k := 1; k <= maxM && k < len(sv); k++ {
			r := sv[k-1] / math.Max(sv[k], 1e-300*sv[0])
			if r > best {
				best, m = r, k
			}
		}
	}
	if m == 0 {
		return 0
	}
	if m%2 == 1 {
		m++
	}
	return min(m, max(maxM, 2))
}

// pencilPoles returns the eigenvalues z of the shift-invariance pencil of
// the first m right singular vectors.
func pencilPoles(v *mat.Dense, cols, m int) []complex128 {
	vm := v.Slice(0, cols, 0, m)
	v1 := vm.(*mat.Dense).Slice(0, cols-1, 0, m)
	v2 := vm.(*mat.Dense).Slice(1, cols, 0, m)
	var phi mat.Dense
	if err := phi.Solve(v1, v2); err != nil {
		return nil
	}
	var eig mat.Eigen
	if !eig.Factorize(&phi, mat.EigenNone) {
		return nil
	}
	return eig.Values(nil)
}

// stablePole reports whether pole s (continuous, rad/s) reappears among
// the discrete poles zs: frequency within 1 % of the Nyquist band plus the
// decay rate, and decay rate within 50 % plus 0.5 % of the band.
func stablePole(s complex128, zs []complex128, dt, fs float64) bool {
	nyq := math.Pi * fs
	for _, z := range zs {
		if cmplx.Abs(z) == 0 {
			continue
		}
		q := cmplx.Log(z) / complex(dt, 0)
		dw := math.Abs(imag(q) - imag(s))
		ds := math.Abs(real(q) - real(s))
		sig := math.Max(math.Abs(real(s)), math.Abs(real(q)))
		if dw <= 0.01*nyq+sig && ds <= 0.5*sig+0.005*nyq {
			return true
		}
	}
	return false
}

// pencilAmplitudes solves the linear least-squares problem
// y_i = sum_k e^{-sigma_k t_i} (a_k cos(omega_k t_i) + b_k sin(omega_k t_i))
// + sum_r c_r z_r^i for the given oscillating poles (continuous, rad/s)
// and real discrete poles z_r, and returns the oscillating components (Amp,
// Phase at t = 0).
func pencilAmplitudes(y []float64, dt float64, poles, reals []complex128) []Component {
	k := len(poles)
	if k == 0 {
		return nil
	}
	n := len(y)
	nc := 2*k + len(reals)
	a := mat.NewDense(n, nc, nil)
	for c, s := range poles {
		step := cmplx.Exp(s * complex(dt, 0))
		z := complex(1, 0)
		for i := 0; i < n; i++ {
			a.Set(i, 2*c, real(z))
			a.Set(i, 2*c+1, imag(z))
			z *= step
		}
	}
	for c, zr := range reals {
		z := 1.0
		for i := 0; i < n; i++ {
			a.Set(i, 2*k+c, z)
			z *= real(zr)
		}
	}
	var x mat.Dense
	if err := x.Solve(a, mat.NewDense(n, 1, slices.Clone(y))); err != nil {
		return nil
	}
	out := make([]Component, k)
	for c, s := range poles {
		// a Re(z^i) + b Im(z^i) = Re((a - i b) z^i)
		ca, cb := x.At(2*c, 0), x.At(2*c+1, 0)
		out[c] = Component{Sigma: -real(s), Omega: imag(s), Amp: math.Hypot(ca, cb), Phase: math.Atan2(-cb, ca)}
	}
	return out
}
