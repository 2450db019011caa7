package modal

import (
	"math"
	"math/cmplx"
	"testing"
)

// freqResp evaluates the frequency response of the FIR h at f hertz.
func freqResp(h []float64, f, fs float64) complex128 {
	var s complex128
	for j, v := range h {
		s += complex(v, 0) * cmplx.Exp(complex(0, -2*math.Pi*f*float64(j)/fs))
	}
	return s
}

// The Kaiser design meets its specification: unit gain at zero frequency,
// pass band flat to 1e-3 up to fc - tw/2, stopband at least 65 dB down from
// fc + tw/2 (designed for 70 dB; Kaiser's length formula is accurate to a
// few dB, Oppenheim & Schafer section 7.5, from memory).
func TestKaiserLowPassSpec(t *testing.T) {
	const fs, fc, tw = 10000.0, 1000.0, 400.0
	h := kaiserLowPass(fs, fc, tw)
	if g := cmplx.Abs(freqResp(h, 0, fs)); math.Abs(g-1) > 1e-12 {
		t.Errorf("DC gain %g", g)
	}
	for f := 0.0; f <= fc-tw/2; f += 10 {
		if g := cmplx.Abs(freqResp(h, f, fs)); math.Abs(g-1) > 1e-3 {
			t.Errorf("pass band %g Hz: gain %g", f, g)
		}
	}
	for f := fc + tw/2; f <= fs/2; f += 10 {
		if g := cmplx.Abs(freqResp(h, f, fs)); g > math.Pow(10, -65.0/20) {
			t.Errorf("stop band %g Hz: gain %.3g (%.1f dB)", f, g, 20*math.Log10(g))
		}
	}
}

// A damped exponential through any FIR filter stays the same exponential
// (its z-transform: sum_j h_j z^(n+j) = H(z) z^n): the band signal keeps
// the pole whatever the damping, and toTrue undoes shift and gain. Checked
// on noiseless closed-form decays for a shifted band (light damping, a
// strong neighbour outside the band) and a low-pass band (heavy damping).
func TestBandSignalKeepsPoles(t *testing.T) {
	const fs = 20000.0
	cases := []struct {
		name  string
		modes []Component
		b     band
		kind  int
	}{
		{"shifted, 0.2 %, neighbour", []Component{compFromModal(400, 0.002, 1, 0.5), compFromModal(1500, 0.01, 3, 1)},
			band{lo: 380, hi: 420, sigma: 2 * math.Pi * 400 * 0.002}, bandShift},
		{"low-pass, 10 %", []Component{compFromModal(150, 0.10, 1, -0.4), compFromModal(3000, 0.01, 1, 0)},
			band{lo: 75, hi: 300, sigma: 2 * math.Pi * 150 * 0.1 / 10}, bandLow},
	}
	for _, c := range cases {
		x := dampedSum(c.modes, fs, 200000)
		bs := makeBandSignal(x, fs, c.b, pencilLen)
		if bs.kind != c.kind {
			t.Fatalf("%s: band kind %d, want %d", c.name, bs.kind, c.kind)
		}
		got, _, err := Subspace(bs.y, 1/bs.dt, 0)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		want := c.modes[0]
		found := false
		for _, g := range got {
			tr := bs.toTrue(g)
			if math.Abs(tr.Omega-want.Omega) > 0.01*want.Omega {
				continue
			}
			found = true
			if math.Abs(tr.Sigma-want.Sigma) > 1e-5*want.Sigma || math.Abs(tr.Omega-want.Omega) > 1e-8*want.Omega ||
				math.Abs(tr.Amp-want.Amp) > 1e-4 || math.Abs(tr.Phase-want.Phase) > 1e-4 {
				t.Errorf("%s: got %+v, want %+v", c.name, tr, want)
			}
		}
		if !found {
			t.Errorf("%s: mode not found in %+v", c.name, got)
		}
	}
}
