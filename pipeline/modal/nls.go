package modal

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// Fit is the result of FitDecay: the refined components and the
// covariance of the parameters.
//
// The model is
//
//	y(t) = b(t) + sum_k exp(-sigma_k t) (a_k cos(omega_k t) + b_k sin(omega_k t)),
//
// with parameters ordered (a_k, b_k, sigma_k, omega_k) for each component
// and the baseline b(t) last: an offset c, then (with FitDecayBaseline)
// the coefficients of the Legendre polynomials P_1..P_d of the record's
// time mapped onto [-1, 1] (slow drift) and the amplitudes of exponentials
// exp(-r t) of known rates (the step response of an AC coupling).
type Fit struct {
	Components []Component
	Offset     float64
	// Baseline holds the linear baseline coefficients after the offset:
	// Drift[0..d-1] for P_1..P_d, then one amplitude per Baseline.Rates.
	Drift []float64
	// Basis is the baseline the fit used.
	Basis Baseline
	dt    float64
	// Cov is the covariance s^2 (J^T J)^-1 of the parameters at the
	// solution, with s^2 = RSS/(N-P) the residual variance.
	Cov *mat.SymDense
	// ResidualSD is s, the standard deviation of the residual.
	ResidualSD float64
	// N is the number of samples fitted, DOF = N - P.
	N, DOF int
	// Iterations is the number of accepted Levenberg-Marquardt steps.
	Iterations int
}

// ErrFitFailed says that the least-squares fit did not give a usable
// solution (a singular normal matrix: two components on one pole, or a
// component with no amplitude).
var ErrFitFailed = errors.New("least-squares fit failed")

// FitDecay refines the components start by a nonlinear least-squares fit
// of the damped-sinusoid model (see Fit) to the real samples y taken at fs
// (y[0] at t = 0), by Levenberg-Marquardt (Marquardt, J. SIAM 11, 1963)
// with the analytic Jacobian; the normal equations are solved with gonum's
// Cholesky factorisation.
//
// The fit runs first on the start of the record (about one time constant
// of the fastest decaying component, at least 2000 samples) and then on
// spans 16 times longer each stage, so that a frequency that is only
// roughly known does not let the phase slip over a long decay.
//
// Under white Gaussian noise this is the maximum-likelihood estimate; the
// covariance s^2 (J^T J)^-1 (Fit.Cov) is its asymptotic covariance. y
// should hold white noise around the model: pass the decay at its full
// rate (the noise of a filtered, decimated band signal is coloured).
func FitDecay(y []float64, fs float64, start []Component) (*Fit, error) {
	return FitDecayBaseline(y, fs, start, Baseline{})
}

// Baseline says which slow terms the least-squares model carries besides
// the offset: a drift polynomial of degree Degree (0..3) in the record's
// time, and exponentials exp(-r t) of the given known rates r (1/s), such
// as the step response 2 pi f_c of a first-order high-pass (the AC
// coupling of a sensor or amplifier with corner f_c). Every term is linear
// in its coefficient; the decay poles are not changed by either.
type Baseline struct {
	Degree int
	Rates  []float64
}

func (b Baseline) size() int { return 1 + b.Degree + len(b.Rates) }

// FitDecayBaseline is FitDecay with the baseline terms of bl in the model.
func FitDecayBaseline(y []float64, fs float64, start []Component, bl Baseline) (*Fit, error) {
	bl.Degree = max(0, min(bl.Degree, 3))
	if len(bl.Rates) > 4 {
		return nil, fmt.Errorf("modal: fit: %d baseline exponentials, at most 4", len(bl.Rates))
	}
	k := len(start)
	p := 4*k + bl.size()
	n := len(y)
	if k == 0 {
		return nil, fmt.Errorf("modal: fit: no start components")
	}
	if n < p+4 {
		return nil, fmt.Errorf("modal: fit: %d samples for %d parameters", n, p)
	}
	if !(fs > 0) || math.IsInf(fs, 0) {
		return nil, fmt.Errorf("modal: fit: invalid sample rate %g", fs)
	}
	theta := make([]float64, p)
	for i, c := range start {
		theta[4*i] = c.Amp * math.Cos(c.Phase)
		theta[4*i+1] = -c.Amp * math.Sin(c.Phase)
		theta[4*i+2] = c.Sigma
		theta[4*i+3] = c.Omega
	}
	w := &nlsWork{y: y, dt: 1 / fs, k: k, p: p, bl: bl, jtj: mat.NewSymDense(p, nil), jtr: make([]float64, p)}
	span := n
	for _, c := range start {
		if c.Sigma > 0 {
			span = min(span, max(2000, int(1/(c.Sigma*w.dt))))
		}
	}
	iters := 0
	var rss float64
	for {
		m := min(n, span)
		tol := 1e-3 // final stage: step under 3 % of a standard error
		if m < n {
			tol = 1e-1
		}
		it, r, err := w.levenbergMarquardt(theta, m, tol)
		iters += it
		rss = r
		if err != nil {
			return nil, err
		}
		if m == n {
			break
		}
		span *= 16
	}
	// covariance at the solution (w.jtj is J^T J at theta)
	dof := n - p
	s2 := rss / float64(dof)
	var chol mat.Cholesky
	if !chol.Factorize(w.jtj) {
		return nil, fmt.Errorf("modal: fit: singular normal matrix: %w", ErrFitFailed)
	}
	cov := mat.NewSymDense(p, nil)
	if err := chol.InverseTo(cov); err != nil {
		return nil, fmt.Errorf("modal: fit: %v: %w", err, ErrFitFailed)
	}
	cov.ScaleSym(s2, cov)
	f := &Fit{Offset: theta[4*k], Drift: slices.Clone(theta[4*k+1:]), Basis: bl, dt: 1 / fs, Cov: cov, ResidualSD: math.Sqrt(s2), N: n, DOF: dof, Iterations: iters}
	for i := 0; i < k; i++ {
		a, b := theta[4*i], theta[4*i+1]
		om := theta[4*i+3]
		if om < 0 { // cos(-wt) = cos(wt), sin(-wt) = -sin(wt)
			om, b = -om, -b
		}
		f.Components = append(f.Components, Component{Sigma: theta[4*i+2], Omega: om, Amp: math.Hypot(a, b), Phase: math.Atan2(-b, a)})
	}
	return f, nil
}

// ModalSD returns the natural frequency (Hz) and damping ratio of
// component k and their standard errors by the delta method from Cov:
// with omega_n = sqrt(sigma^2 + omega^2) and zeta = sigma/omega_n,
// d zeta/d sigma = omega^2/omega_n^3, d zeta/d omega = -sigma omega/omega_n^3,
// d omega_n/d sigma = sigma/omega_n, d omega_n/d omega = omega/omega_n.
func (f *Fit) ModalSD(k int) (fn, zeta, sdFn, sdZeta float64) {
	c := f.Components[k]
	s, w := c.Sigma, c.Omega
	wn := math.Hypot(s, w)
	fn, zeta = wn/(2*math.Pi), s/wn
	i, j := 4*k+2, 4*k+3
	vss, vww, vsw := f.Cov.At(i, i), f.Cov.At(j, j), f.Cov.At(i, j)
	wn3 := wn * wn * wn
	gz := [2]float64{w * w / wn3, -s * w / wn3}
	gw := [2]float64{s / wn, w / wn}
	vz := gz[0]*gz[0]*vss + 2*gz[0]*gz[1]*vsw + gz[1]*gz[1]*vww
	vw := gw[0]*gw[0]*vss + 2*gw[0]*gw[1]*vsw + gw[1]*gw[1]*vww
	return fn, zeta, math.Sqrt(math.Max(vw, 0)) / (2 * math.Pi), math.Sqrt(math.Max(vz, 0))
}

// SigmaSD returns the standard error of the decay rate of component k.
func (f *Fit) SigmaSD(k int) float64 { return math.Sqrt(math.Max(f.Cov.At(4*k+2, 4*k+2), 0)) }

// AmpSD returns the standard error of the amplitude of component k.
func (f *Fit) AmpSD(k int) float64 {
	a, b := f.Cov.At(4*k, 4*k), f.Cov.At(4*k+1, 4*k+1)
	ab := f.Cov.At(4*k, 4*k+1)
	c := f.Components[k]
	ca, cb := math.Cos(c.Phase), -math.Sin(c.Phase) // dA/da, dA/db
	return math.Sqrt(math.Max(ca*ca*a+2*ca*cb*ab+cb*cb*b, 0))
}

// Quantile975 returns the 97.5 % quantile of Student's t with the fit's
// degrees of freedom, the half-width factor of a 95 % interval.
func (f *Fit) Quantile975() float64 {
	if f.DOF > 1000 {
		return 1.959963984540054
	}
	return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(max(f.DOF, 1))}.Quantile(0.975)
}

// nlsWork holds the buffers of one fit.
type nlsWork struct {
	y      []float64
	dt     float64
	k, p   int
	bl     Baseline
	jtj    *mat.SymDense
	jtr    []float64
	ends   []int     // per component: samples beyond which it is negligible
	gt, rb []float64 // block of Jacobian rows (parameter-major) and residuals
	sb, tb []float64 // block products
	order  []int     // components by decreasing end
}

// activeEnds orders the components by how long they stay above 1e-9 of
// the largest amplitude, so that each sample touches only the columns of
// the components still alive (a short, heavily damped mode costs only its
// own span).
func (w *nlsWork) activeEnds(theta []float64, m int) {
	w.ends = w.ends[:0]
	w.order = w.order[:0]
	amax := 0.0
	for i := 0; i < w.k; i++ {
		amax = math.Max(amax, math.Hypot(theta[4*i], theta[4*i+1]))
	}
	for i := 0; i < w.k; i++ {
		a := math.Hypot(theta[4*i], theta[4*i+1])
		sg := theta[4*i+2]
		e := m
		if sg > 0 && a > 0 && amax > 0 {
			tEnd := math.Log(a/(1e-9*amax)) / sg
			if tEnd < float64(m)*w.dt {
				e = max(1, int(tEnd/w.dt)+1)
			}
		}
		w.ends = append(w.ends, e)
		w.order = append(w.order, i)
	}
	slices.SortFunc(w.order, func(a, b int) int { return w.ends[b] - w.ends[a] })
}

// normal computes the residual sum of squares over the first m samples at
// theta and fills J^T J and J^T r.
func (w *nlsWork) normal(theta []float64, m int) float64 {
	w.activeEnds(theta, m)
	p := w.p
	jtj := w.jtj.RawSymmetric().Data
	stride := w.jtj.RawSymmetric().Stride
	for i := 0; i < p; i++ {
		w.jtr[i] = 0
		row := jtj[i*stride : i*stride+p]
		for j := range row {
			row[j] = 0
		}
	}
	// per-component recurrences z_k^i = exp((-sigma + i omega) t_i)
	type rot struct{ zr, zi, sr, si float64 }
	rots := make([]rot, w.k)
	for i := range rots {
		sg, om := theta[4*i+2], theta[4*i+3]
		e := math.Exp(-sg * w.dt)
		s, c := math.Sincos(om * w.dt)
		rots[i] = rot{1, 0, e * c, e * s}
	}
	// The rows of J are gathered in blocks, parameter-major (gt[c][s] is
	// column cols[c] at sample s of the block), and added to J^T J and
	// J^T r by gonum's BLAS (Syrk, Gemv) when the block is full or the
	// set of live components changes.
	const blk = 256
	cols := make([]int, 0, p)
	pos := make([]int, p)
	if cap(w.gt) < p*blk {
		w.gt = make([]float64, p*blk)
		w.rb = make([]float64, blk)
		w.sb = make([]float64, p*p)
		w.tb = make([]float64, p)
	}
	nb := 0
	flush := func() {
		if nb == 0 {
			return
		}
		c := len(cols)
		g := blas64.General{Rows: c, Cols: nb, Stride: blk, Data: w.gt[:(c-1)*blk+nb]}
		sm := blas64.Symmetric{Uplo: blas.Upper, N: c, Stride: c, Data: w.sb[:c*c]}
		blas64.Syrk(blas.NoTrans, 1, g, 0, sm)
		tv := blas64.Vector{N: c, Inc: 1, Data: w.tb[:c]}
		blas64.Gemv(blas.NoTrans, 1, g, blas64.Vector{N: nb, Inc: 1, Data: w.rb[:nb]}, 0, tv)
		for a, ca := range cols {
			w.jtr[ca] += w.tb[a]
			row := jtj[ca*stride:]
			srow := w.sb[a*c:]
			for b := a; b < c; b++ {
				row[cols[b]] += srow[b]
			}
		}
		nb = 0
	}
	var rss float64
	nAct := w.k
	colsFor := -1
	nb0 := 4 * w.k
	var bv [8]float64 // baseline basis values at the sample
	bexp := make([]float64, len(w.bl.Rates))
	bstep := make([]float64, len(w.bl.Rates))
	for j, r := range w.bl.Rates {
		bexp[j], bstep[j] = 1, math.Exp(-r*w.dt)
	}
	uScale := 2 / float64(max(len(w.y)-1, 1))
	for n := 0; n < m; n++ {
		for nAct > 0 && w.ends[w.order[nAct-1]] <= n {
			nAct--
		}
		t := float64(n) * w.dt
		nbv := w.bl.basis(bv[:], float64(n)*uScale-1, bexp)
		model := 0.0
		for j := 0; j < nbv; j++ {
			model += theta[nb0+j] * bv[j]
		}
		if n&511 == 0 && n > 0 { // refresh the recurrences against round-off
			for i := range rots {
				sg, om := theta[4*i+2], theta[4*i+3]
				e := math.Exp(-sg * t)
				s, c := math.Sincos(om * t)
				rots[i].zr, rots[i].zi = e*c, e*s
			}
		}
		if nAct != colsFor {
			flush()
			cols = cols[:0]
			for q := 0; q < nAct; q++ {
				i := w.order[q]
				cols = append(cols, 4*i, 4*i+1, 4*i+2, 4*i+3)
			}
			slices.Sort(cols)
			for c := 4 * w.k; c < p; c++ {
				cols = append(cols, c)
			}
			for c, ca := range cols {
				pos[ca] = c
			}
			colsFor = nAct
		}
		for j := 0; j < nbv; j++ {
			w.gt[pos[nb0+j]*blk+nb] = bv[j]
		}
		for q := 0; q < nAct; q++ {
			i := w.order[q]
			r := &rots[i]
			ec, es := r.zr, r.zi // e^{-sigma t} cos, e^{-sigma t} sin
			a, b := theta[4*i], theta[4*i+1]
			v := a*ec + b*es
			model += v
			w.gt[pos[4*i]*blk+nb] = ec
			w.gt[pos[4*i+1]*blk+nb] = es
			w.gt[pos[4*i+2]*blk+nb] = -t * v
			w.gt[pos[4*i+3]*blk+nb] = t * (-a*es + b*ec)
		}
		res := w.y[n] - model
		rss += res * res
		w.rb[nb] = res
		nb++
		if nb == blk {
			flush()
		}
		for i := range rots {
			r := &rots[i]
			r.zr, r.zi = r.zr*r.sr-r.zi*r.si, r.zr*r.si+r.zi*r.sr
		}
		for j := range bexp {
			bexp[j] *= bstep[j]
		}
	}
	flush()
	return rss
}

// basis writes the baseline's basis values at normalised time u (-1 at
// the first sample of the record, 1 at the last) into dst and returns how
// many: 1, the Legendre polynomials P_1..P_Degree, then the exponentials
// (current values in ex).
func (b Baseline) basis(dst []float64, u float64, ex []float64) int {
	dst[0] = 1
	n := 1
	if b.Degree >= 1 {
		dst[n] = u
		n++
	}
	if b.Degree >= 2 {
		dst[n] = (3*u*u - 1) / 2
		n++
	}
	if b.Degree >= 3 {
		dst[n] = (5*u*u*u - 3*u) / 2
		n++
	}
	n += copy(dst[n:], ex)
	return n
}

// BaselineAt returns the fitted baseline (offset, drift and exponential
// terms) at sample i of the fitted record (the record's time base: i = 0
// at its first sample); before its start and beyond its end the value at
// the nearest end.
func (f *Fit) BaselineAt(i int) float64 {
	// held at its end values outside the fitted span: a polynomial does
	// not extrapolate
	i = max(0, min(i, f.N-1))
	var bv [8]float64
	var exa [4]float64
	ex := exa[:len(f.Basis.Rates)]
	dt := f.dt
	for j, r := range f.Basis.Rates {
		ex[j] = math.Exp(-r * float64(i) * dt)
	}
	u := 2*float64(i)/float64(max(f.N-1, 1)) - 1
	nb := f.Basis.basis(bv[:], u, ex)
	v := f.Offset * bv[0]
	for j := 1; j < nb; j++ {
		v += f.Drift[j-1] * bv[j]
	}
	return v
}

// levenbergMarquardt iterates on the first m samples until the step is
// small against the parameters' own uncertainty.
func (w *nlsWork) levenbergMarquardt(theta []float64, m int, tol float64) (int, float64, error) {
	p := w.p
	rss := w.normal(theta, m)
	lambda := 1e-3
	trial := make([]float64, p)
	a := mat.NewSymDense(p, nil)
	var chol mat.Cholesky
	delta := mat.NewVecDense(p, nil)
	jtjSaved := mat.NewSymDense(p, nil)
	jtrSaved := make([]float64, p)
	accepted := 0
	for it := 0; it < 100; it++ {
		jtjSaved.CopySym(w.jtj)
		copy(jtrSaved, w.jtr)
		for {
			a.CopySym(jtjSaved)
			for i := 0; i < p; i++ {
				d := jtjSaved.At(i, i)
				if d <= 0 {
					d = 1e-300
				}
				a.SetSym(i, i, d*(1+lambda))
			}
			if !chol.Factorize(a) {
				lambda *= 10
				if lambda > 1e12 {
					return accepted, rss, fmt.Errorf("modal: fit: normal matrix not positive definite: %w", ErrFitFailed)
				}
				continue
			}
			if err := chol.SolveVecTo(delta, mat.NewVecDense(p, jtrSaved)); err != nil {
				return accepted, rss, fmt.Errorf("modal: fit: %v: %w", err, ErrFitFailed)
			}
			for i := range trial {
				trial[i] = theta[i] + delta.AtVec(i)
			}
			newRSS := w.normal(trial, m)
			if newRSS <= rss && !math.IsNaN(newRSS) {
				// predicted decrease in units of the residual variance
				var dec float64
				for i := 0; i < p; i++ {
					dec += delta.AtVec(i) * jtrSaved[i]
				}
				copy(theta, trial)
				old := rss
				rss = newRSS
				accepted++
				lambda = math.Max(lambda/10, 1e-9)
				s2 := rss / float64(max(m-p, 1))
				if dec < tol*s2 || old-rss < 1e-12*old {
					return accepted, rss, nil
				}
				break
			}
			lambda *= 10
			if lambda > 1e12 {
				// no further decrease possible: converged to round-off
				rss = w.normal(theta, m)
				return accepted, rss, nil
			}
		}
	}
	return accepted, rss, nil
}

// ModelTo adds to dst[j] the fitted model at sample i0+j of the fitted
// record's time base (i0 may be negative: samples before its start): the
// components k for which comp(k) is true (all when comp is nil) and, with
// baseline, the baseline terms. It returns dst.
func (f *Fit) ModelTo(dst []float64, i0 int, comp func(k int) bool, baseline bool) []float64 {
	for k, c := range f.Components {
		if comp != nil && !comp(k) {
			continue
		}
		t0 := float64(i0) * f.dt
		e0 := math.Exp(-c.Sigma * t0)
		s0, c0 := math.Sincos(c.Omega*t0 + c.Phase)
		zr, zi := c.Amp*e0*c0, c.Amp*e0*s0
		e := math.Exp(-c.Sigma * f.dt)
		ss, cs := math.Sincos(c.Omega * f.dt)
		sr, si := e*cs, e*ss
		for j := range dst {
			if j&1023 == 0 && j > 0 { // refresh against round-off
				t := float64(i0+j) * f.dt
				ej := c.Amp * math.Exp(-c.Sigma*t)
				sj, cj := math.Sincos(c.Omega*t + c.Phase)
				zr, zi = ej*cj, ej*sj
			}
			dst[j] += zr
			zr, zi = zr*sr-zi*si, zr*si+zi*sr
		}
	}
	if baseline {
		for j := range dst {
			dst[j] += f.BaselineAt(i0 + j)
		}
	}
	return dst
}
