package modal

import (
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// dampedSum evaluates sum_k A_k exp(-sigma_k t) cos(omega_k t + phi_k),
// the closed-form free decay of viscously damped modes, at n samples.
func dampedSum(comps []Component, fs float64, n int) []float64 {
	y := make([]float64, n)
	for _, c := range comps {
		for i := range y {
			t := float64(i) / fs
			y[i] += c.Amp * math.Exp(-c.Sigma*t) * math.Cos(c.Omega*t+c.Phase)
		}
	}
	return y
}

func compFromModal(fn, zeta, amp, phase float64) Component {
	wn := 2 * math.Pi * fn
	return Component{Sigma: zeta * wn, Omega: wn * math.Sqrt(1-zeta*zeta), Amp: amp, Phase: phase}
}

// Without noise the matrix pencil recovers the poles of a sum of damped
// sines exactly (Hua & Sarkar 1990: the pencil's eigenvalues are the
// signal poles when the data are exactly a sum of M exponentials), up to
// round-off; the order comes from the singular-value gap.
func TestSubspaceNoiselessExact(t *testing.T) {
	truth := []Component{
		compFromModal(120, 0.01, 1.0, 0.3),
		compFromModal(310, 0.04, 0.5, -1.2),
		compFromModal(45, 0.002, 0.2, 2.0),
	}
	y := dampedSum(truth, 2000, 240)
	got, _, err := Subspace(y, 2000, 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(truth) {
		t.Fatalf("%d components, want %d: %+v", len(got), len(truth), got)
	}
	for _, want := range truth {
		i := slices.IndexFunc(got, func(c Component) bool { return math.Abs(c.Omega-want.Omega) < 1 })
		if i < 0 {
			t.Fatalf("component at %g rad/s not found in %+v", want.Omega, got)
		}
		c := got[i]
		if math.Abs(c.Sigma-want.Sigma) > 1e-6*want.Sigma || math.Abs(c.Omega-want.Omega) > 1e-9*want.Omega ||
			math.Abs(c.Amp-want.Amp) > 1e-6*want.Amp || math.Abs(c.Phase-want.Phase) > 1e-6 {
			t.Errorf("got %+v, want %+v", c, want)
		}
	}
}

// In white noise alone no singular value of the Hankel matrix rises above
// the noise level sd (sqrt(rows) + sqrt(cols)) with the 25 % margin, the
// bound on the largest singular value of a Gaussian random matrix (for
// i.i.d. entries the largest singular value concentrates at
// sd (sqrt(rows) + sqrt(cols)); Davidson & Szarek, Handbook of the
// Geometry of Banach Spaces, 2001, from memory).
func TestSubspaceNoiseOnly(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	for trial := 0; trial < 20; trial++ {
		y := make([]float64, 240)
		for i := range y {
			y[i] = 0.3 * r.NormFloat64()
		}
		got, _, err := Subspace(y, 1000, 0.3)
		if !errors.Is(err, ErrNoSignal) && len(got) > 0 {
			t.Errorf("trial %d: noise gave components %+v (err %v)", trial, got, err)
		}
	}
}

// A decay at 40 dB peak SNR: the pencil's damping lands within 4 Cramer-
// Rao standard deviations of the truth (the pencil reaches 1.0-1.2 times
// the bound on simulated decays, DESIGN.md section 5).
func TestSubspaceNoisyNearCRB(t *testing.T) {
	const fs, fn, zeta, noise = 1000.0, 50.0, 0.02, 0.01
	truth := compFromModal(fn, zeta, 1, 0.7)
	y := dampedSum([]Component{truth}, fs, 240)
	r := rand.New(rand.NewPCG(11, 12))
	for i := range y {
		y[i] += noise * r.NormFloat64()
	}
	got, _, err := Subspace(y, fs, noise)
	if err != nil || len(got) != 1 {
		t.Fatalf("components %+v, err %v", got, err)
	}
	_, z := got[0].Modal()
	bound := CRBZeta(fn, zeta, 1, 0.7, noise, fs, 240)
	if math.Abs(z-zeta) > 4*bound {
		t.Errorf("zeta %.6f, truth %.6f, more than 4 x CRB %.3g away", z, zeta, bound)
	}
}

func TestSubspaceBadInput(t *testing.T) {
	if _, _, err := Subspace(make([]float64, 5), 100, 0); err == nil {
		t.Error("5 samples: no error")
	}
	if _, _, err := Subspace(make([]float64, 100), 0, 0); err == nil {
		t.Error("zero rate: no error")
	}
	if _, _, err := Subspace(make([]float64, 100), 100, 0); !errors.Is(err, ErrNoSignal) {
		t.Errorf("all zero: %v, want ErrNoSignal", err)
	}
}
