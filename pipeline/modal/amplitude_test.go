package modal

import (
	"math"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/synth/oscillator"
)

// The decays of these tests come from pipeline/synth/oscillator, a
// Runge-Kutta integration of the equation of motion that shares no code
// with the estimators. The check values are the equivalent viscous damping
// ratios of the textbook energy balance: a damper that dissipates W per
// cycle at amplitude X acts like a viscous damper c_eq with
// pi c_eq omega X^2 = W, zeta_eq = c_eq / (2 m omega) (equivalent viscous
// damping, Thomson, Theory of Vibration with Applications, section
// "Equivalent viscous damping", from memory; the same in Den Hartog,
// Mechanical Vibrations). Worked out for each damper:
//
//	cubic c3 x'^3:       W = (3 pi / 4) c3 omega^3 X^4  ->  zeta_eq = 3 c3 omega X^2 / (8 m)
//	quadratic c2 x'|x'|: W = (8 / 3) c2 omega^2 X^3     ->  zeta_eq = 4 c2 X / (3 pi m)
//	Coulomb F sign(x'):  W = 4 F X                      ->  zeta_eq = 2 F / (pi k X)
//
// (the integrals of sin^4 and |sin|^3 over a period are 3 pi / 4 and 8 / 3
// of 2 pi / omega's worth, standard integrals). For Coulomb friction the
// amplitude falls by 4F/k per cycle (same sources), which the oscillator's
// own test checks.

const ampFS = 2000.0 // Hz

// ampRecord analyses a displacement record of o struck with initial speed
// v0, white noise of sd noise.
func ampRecord(t *testing.T, o oscillator.Oscillator, v0, noise float64, seed uint64) *Decay {
	t.Helper()
	x := o.Displacement(oscillator.Record{SampleRate: ampFS, Duration: 4, PreTrigger: 0.1, Velocity: v0, NoiseSD: noise, Seed: seed})
	d, err := Analyze(x, ampFS, nil, Options{})
	if err != nil {
		t.Fatal(err)
	}
	return d
}

// oneMode requires a single mode near f and returns it with its diagnostics.
func oneMode(t *testing.T, d *Decay, f float64) (pipeline.Mode, ModeDiag) {
	t.Helper()
	if len(d.Modes) != 1 {
		for _, m := range d.Modes {
			t.Logf("mode %.3f Hz zeta %.4f share %.2f", m.FrequencyHz, m.DampingRatio, m.EnergyShare)
		}
		t.Fatalf("%d modes, want one (a non-exponential decay must not be split into close poles)", len(d.Modes))
	}
	m := d.Modes[0]
	if math.Abs(m.FrequencyHz-f) > 0.01*f {
		t.Fatalf("mode at %.3f Hz, want %.3f", m.FrequencyHz, f)
	}
	return m, d.Diag[0]
}

// checkCurve compares every bin with the equivalent viscous damping at the
// bin's amplitude, within tol relative.
func checkCurve(t *testing.T, bins []pipeline.AmplitudeBin, minBins int, tol float64, want func(a float64) float64) {
	t.Helper()
	if len(bins) < minBins {
		t.Fatalf("%d amplitude bins, want at least %d", len(bins), minBins)
	}
	for i, b := range bins {
		w := want(b.Amplitude)
		if e := (b.DampingRatio - w) / w; math.Abs(e) > tol {
			t.Errorf("bin %d at amplitude %.4g: zeta %.5f, equivalent viscous %.5f (%.1f %% off, tolerance %.0f %%)",
				i, b.Amplitude, b.DampingRatio, w, 100*e, 100*tol)
		}
		if i > 0 && !(b.Amplitude < bins[i-1].Amplitude) {
			t.Errorf("bin %d: amplitude %.4g not below the previous bin's %.4g", i, b.Amplitude, bins[i-1].Amplitude)
		}
	}
}

func TestAmplitudeCurveCubicDamping(t *testing.T) {
	wn := 2 * math.Pi * 25
	z0 := 0.002               // viscous part, so that the decay reaches the noise
	c3 := 0.04 * 8 / (3 * wn) // zeta_eq = 4 % at X = 1
	o := oscillator.Oscillator{Mass: 1, Stiffness: wn * wn, Viscous: 2 * z0 * wn, Cubic: c3}
	d := ampRecord(t, o, wn, 1e-3, 1) // X0 = 1, 60 dB
	m, _ := oneMode(t, d, 25)
	checkCurve(t, m.AmplitudeDamping, 5, 0.05, func(x float64) float64 { return z0 + 3*c3*wn*x*x/8 })
	if change, z := AmplitudeTrend(m.AmplitudeDamping); !(change > 1 && z > 3) {
		t.Errorf("trend: change %.2f at %.1f standard errors, want a large rise with amplitude", change, z)
	}
}

func TestAmplitudeCurveQuadraticDamping(t *testing.T) {
	wn := 2 * math.Pi * 40
	z0 := 0.002
	c2 := 0.02 * 3 * math.Pi / 4 // zeta_eq = 2 % at X = 1
	o := oscillator.Oscillator{Mass: 1, Stiffness: wn * wn, Viscous: 2 * z0 * wn, Quadratic: c2}
	d := ampRecord(t, o, wn, 1e-3, 2)
	m, _ := oneMode(t, d, 40)
	checkCurve(t, m.AmplitudeDamping, 5, 0.05, func(x float64) float64 { return z0 + 4*c2*x/(3*math.Pi) })
}

func TestFrictionIsOneMode(t *testing.T) {
	wn := 2 * math.Pi * 25
	k := wn * wn
	F := k / 120 // 4F/k = 1/30 of the first swing per cycle
	z0 := 0.0005
	o := oscillator.Oscillator{Mass: 1, Stiffness: k, Viscous: 2 * z0 * wn, Friction: F}
	d := ampRecord(t, o, wn, 1e-3, 3)
	m, dg := oneMode(t, d, 25)
	if m.MergedPoles < 2 {
		t.Logf("not merged (the fit found one pole): fine, but the test means the split case")
	}
	// a straight-line envelope: far better fitted by a line than an exponential
	if !(dg.LinRSS < 0.1*dg.ExpRSS) {
		t.Errorf("envelope shape: LinRSS %.3g, ExpRSS %.3g: want a straight line", dg.LinRSS, dg.ExpRSS)
	}
	// the last bin holds the end of the motion, where the mass sticks; the
	// energy balance holds while it slides
	bins := m.AmplitudeDamping
	if len(bins) < 4 {
		t.Fatalf("%d bins", len(bins))
	}
	checkCurve(t, bins[:len(bins)-1], 3, 0.06, func(x float64) float64 { return z0 + 2*F/(math.Pi*k*x) })
	if change, _ := AmplitudeTrend(bins); !(change < -1) {
		t.Errorf("trend: change %.2f, want damping falling steeply with amplitude", change)
	}
}

// A viscous decay in white noise: every bin's 95 % interval should hold the
// true damping ratio about 95 % of the time (what a 95 % interval means),
// and the trend should show no change.
func TestAmplitudeCurveViscousCoverage(t *testing.T) {
	wn := 2 * math.Pi * 25
	zeta := 0.01
	o := oscillator.Oscillator{Mass: 1, Stiffness: wn * wn, Viscous: 2 * zeta * wn}
	var in, all int
	for seed := uint64(1); seed <= 12; seed++ {
		d := ampRecord(t, o, wn, 3e-3, seed) // about 50 dB
		m, _ := oneMode(t, d, 25)
		if len(m.AmplitudeDamping) < 4 {
			t.Fatalf("seed %d: %d bins", seed, len(m.AmplitudeDamping))
		}
		for _, b := range m.AmplitudeDamping {
			all++
			if b.DampingRatioCI[0] <= zeta && zeta <= b.DampingRatioCI[1] {
				in++
			}
		}
		if change, z := AmplitudeTrend(m.AmplitudeDamping); math.Abs(change) > 0.1 || math.Abs(z) > 3.5 {
			t.Errorf("seed %d: trend change %.3f at %.1f standard errors on a viscous decay", seed, change, z)
		}
	}
	if cov := float64(in) / float64(all); cov < 0.85 {
		t.Errorf("bin intervals hold the true zeta in %.0f %% of %d bins, want about 95 %%", 100*cov, all)
	} else {
		t.Logf("coverage %.1f %% of %d bins", 100*float64(in)/float64(all), all)
	}
}

// Two close linear modes beat: their envelope rises again, so they are not
// merged into one.
func TestBeatingModesNotMerged(t *testing.T) {
	wn1, wn2 := 2*math.Pi*25, 2*math.Pi*26
	o1 := oscillator.Oscillator{Mass: 1, Stiffness: wn1 * wn1, Viscous: 2 * 0.004 * wn1}
	o2 := oscillator.Oscillator{Mass: 1, Stiffness: wn2 * wn2, Viscous: 2 * 0.004 * wn2}
	r := oscillator.Record{SampleRate: ampFS, Duration: 4, PreTrigger: 0.1, Velocity: wn1, NoiseSD: 1e-3, Seed: 4}
	x := o1.Displacement(r)
	r.Velocity, r.NoiseSD = 0.8*wn2, 0
	for i, v := range o2.Displacement(r) {
		x[i] += v
	}
	d, err := Analyze(x, ampFS, nil, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(d.Modes) != 2 {
		t.Fatalf("%d modes, want the two beating modes", len(d.Modes))
	}
	for _, m := range d.Modes {
		if m.MergedPoles != 0 {
			t.Errorf("mode at %.2f Hz merged from %d poles", m.FrequencyHz, m.MergedPoles)
		}
	}
}

func TestPeakForce(t *testing.T) {
	f := make([]float64, 400)
	for i := range f {
		f[i] = 0.5 // baseline
	}
	for i := 0; i <= 10; i++ {
		f[100+i] += 80 * math.Sin(math.Pi*float64(i)/10)
	}
	f[150] = 0.5 - 30 // a negative lobe is not the peak
	if got := PeakForce(f); math.Abs(got-80) > 1e-9 {
		t.Errorf("peak force %g, want 80", got)
	}
	if PeakForce(nil) != 0 {
		t.Error("no force channel: want 0")
	}
}
