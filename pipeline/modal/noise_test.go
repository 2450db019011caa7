package modal

import (
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

// The ADC step is found from the samples, also when a text file kept only
// seven significant digits of each (the smallest gap between two rounded
// values is then off by a few parts per million, which over a thousand
// steps is a whole step); float data has no step.
func TestADCStep(t *testing.T) {
	step := 500.0 / 32768 // 16 bits over +/- 500: the ADC step by its definition, range / 2^16
	r := rand.New(rand.NewPCG(3, 4))
	x := make([]float64, 20000)
	f := make([]float64, len(x))
	for i := range x {
		v := 15 * math.Exp(-float64(i)/3000) * math.Sin(float64(i)/3.1)
		q := step * math.Round(v/step)
		x[i], _ = strconv.ParseFloat(strconv.FormatFloat(q, 'g', 7, 64), 64)
		f[i] = v + 1e-3*r.NormFloat64()
	}
	if got := adcStep(x); math.Abs(got-step) > 1e-5*step {
		t.Errorf("step %.9g, want %.9g", got, step)
	}
	if got := adcStep(f); got != 0 {
		t.Errorf("float data: step %g, want 0", got)
	}
}

// A coloured noise (the simplest one, a first-order low-pass of white
// noise, whose power falls 20 dB per decade above its corner) gives a
// coloured spectrum: the noise at a low frequency is far above the
// white-equivalent level at a high one. White noise gives the robust
// level at every frequency.
func TestNoiseModelColour(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 6))
	const fs = 5000.0
	n := 8192
	white := make([]float64, n)
	red := make([]float64, n)
	var s float64
	for i := range white {
		w := r.NormFloat64()
		white[i] = w
		s = 0.99*s + w // corner fs*0.01/(2 pi) = 8 Hz
		red[i] = s
	}
	nw := newNoiseModel(white, fs, 1, 0, NoiseFromPreTrigger)
	if nw.Coloured() || math.Abs(nw.SDAt(50)-1) > 1e-9 {
		t.Errorf("white noise: coloured %v, sd at 50 Hz %.3f", nw.Coloured(), nw.SDAt(50))
	}
	_, sd := robustSD(red)
	nr := newNoiseModel(red, fs, sd, 0, NoiseFromPreTrigger)
	// Source: the first-order low-pass response |H|^2 = 1/(1+(f/fc)^2)
	// (textbook filter theory): from 20 Hz to 2 kHz with fc = 8 Hz the power
	// falls (1+250^2)/(1+2.5^2) = 8.6e3 times, the amplitude 93 times; the
	// test asks for 30 to leave room for the Welch estimate's scatter.
	if lo, hi := nr.SDAt(20), nr.SDAt(2000); !nr.Coloured() || lo < 30*hi {
		t.Errorf("red noise: coloured %v, sd at 20 Hz %.3g, at 2 kHz %.3g", nr.Coloured(), lo, hi)
	}
}

// Strong mains hum (a 50 Hz comb, each harmonic 3 times the noise's rms)
// in a noise segment of 3.2 s: the noise level between the lines is the
// noise's own, not raised by the power of the lines. Before, the spectrum
// was scaled to the segment's variance, hum included, and the noise beside
// the lines came out several times too high (the defect shown by
// testdata/field/hum-60-clean.csv: 14 times at its 95 Hz mode).
func TestNoiseModelBesideHum(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 8))
	const fs = 2560.0
	x := make([]float64, 8192)
	for i := range x {
		x[i] = r.NormFloat64()
		for h := 1.0; h <= 10; h++ {
			x[i] += 3 * math.Sqrt2 * math.Sin(2*math.Pi*50*h*float64(i)/fs+h)
		}
	}
	_, robust := robustSD(x)
	nm := newNoiseModel(x, fs, robust, 0, NoiseFromPreTrigger)
	// true white-equivalent level: 1 (unit white noise); the scatter of a
	// Welch estimate over about 15 segments is some 25 % (common practice:
	// chi-square with 2K degrees of freedom)
	for _, f := range []float64{75, 225, 375, 800} {
		if got := nm.SDAt(f); got < 0.7 || got > 1.4 {
			t.Errorf("noise at %g Hz between the hum lines: %.3g, want about 1 (segment rms with hum %.3g)", f, got, robust)
		}
	}
}
