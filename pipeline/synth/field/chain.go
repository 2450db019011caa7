package field

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Chain is a lumped spring-mass chain: n equal masses in a row, the first
// tied to the ground by a spring, each to the next by an equal spring,
// the last free.
type Chain struct {
	Masses    int     // n >= 1
	MassKg    float64 // each mass
	Stiffness float64 // each spring, N/m
	// Drive and Response are the struck and the measured mass, 0-based.
	Drive, Response int
}

// ChainModes returns the chain's modes in ascending frequency, struck with
// impulse j (N s), all with damping ratio zeta: the eigenvalues w^2 and
// eigenvectors of K phi = w^2 M phi (gonum's symmetric eigensolver on
// M^-1/2 K M^-1/2), mode shapes scaled to unit modal mass; a mode's
// nominal acceleration amplitude at the response mass after an impulse j
// at the drive mass is phi_drive phi_response j w.
func ChainModes(c Chain, j, zeta float64) ([]Mode, error) {
	n := c.Masses
	if n < 1 || n > 200 || !(c.MassKg > 0) || !(c.Stiffness > 0) || c.Drive < 0 || c.Drive >= n || c.Response < 0 || c.Response >= n {
		return nil, errors.New("field: a chain needs 1 to 200 masses, positive mass and stiffness, and drive and response points on it")
	}
	k := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		d := 2 * c.Stiffness
		if i == n-1 {
			d = c.Stiffness
		}
		k.SetSym(i, i, d/c.MassKg)
		if i+1 < n {
			k.SetSym(i, i+1, -c.Stiffness/c.MassKg)
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(k, true) {
		return nil, errors.New("field: the chain's eigenproblem did not converge")
	}
	vals := eig.Values(nil)
	var vecs mat.Dense
	eig.VectorsTo(&vecs)
	out := make([]Mode, 0, n)
	for i, w2 := range vals { // ascending
		w := math.Sqrt(math.Max(w2, 0))
		// unit modal mass: phi = v / sqrt(m) for orthonormal v
		pd := vecs.At(c.Drive, i) / math.Sqrt(c.MassKg)
		pr := vecs.At(c.Response, i) / math.Sqrt(c.MassKg)
		out = append(out, Mode{FrequencyHz: w / (2 * math.Pi), DampingRatio: zeta, Amplitude: pd * pr * j * w})
	}
	return out, nil
}
