package oscillator

import (
	"math"
	"testing"
)

// A viscous oscillator integrated by the Runge-Kutta steps follows the
// closed-form free decay x = v0/wd exp(-zeta wn t) sin(wd t) (any
// vibration text, e.g. Thomson, Theory of Vibration with Applications,
// sec. 2.7, from memory).
func TestViscousMatchesClosedForm(t *testing.T) {
	wn := 2 * math.Pi * 25
	zeta := 0.02
	o := Oscillator{Mass: 1, Stiffness: wn * wn, Viscous: 2 * zeta * wn}
	r := Record{SampleRate: 2000, Duration: 1, Velocity: 3}
	x := o.Displacement(r)
	wd := wn * math.Sqrt(1-zeta*zeta)
	for i, got := range x {
		tt := float64(i) / r.SampleRate
		want := r.Velocity / wd * math.Exp(-zeta*wn*tt) * math.Sin(wd*tt)
		if math.Abs(got-want) > 1e-9 {
			t.Fatalf("sample %d: x = %.12g, closed form %.12g", i, got, want)
		}
	}
}

// Coulomb friction: the amplitude falls by 4F/k every cycle and the mass
// stops once |k x| <= F at a turning point (Thomson, Theory of Vibration
// with Applications, "Coulomb damping", from memory; Den Hartog,
// Mechanical Vibrations, same result).
func TestFrictionLosesFourFOverKPerCycle(t *testing.T) {
	wn := 2 * math.Pi * 10
	k := wn * wn
	F := k / 200 // 4F/k = 0.02 per cycle
	o := Oscillator{Mass: 1, Stiffness: k, Friction: F}
	r := Record{SampleRate: 10000, Duration: 6, Velocity: wn * 0.5} // first swing about 0.5
	x := o.Displacement(r)
	// positive peaks
	var peaks []float64
	for i := 1; i+1 < len(x); i++ {
		if x[i] > x[i-1] && x[i] >= x[i+1] && x[i] > 0 {
			peaks = append(peaks, x[i])
		}
	}
	if len(peaks) < 10 {
		t.Fatalf("only %d positive peaks", len(peaks))
	}
	for j := 1; j < 10; j++ {
		if d := peaks[j-1] - peaks[j]; math.Abs(d-4*F/k) > 1e-4 {
			t.Errorf("cycle %d: amplitude fell by %.5f, want 4F/k = %.5f", j, d, 4*F/k)
		}
	}
	// at rest at the end, within F/k of zero
	if end := x[len(x)-1]; math.Abs(end) > F/k*1.001 {
		t.Errorf("final position %.4g outside the sticking band +/- F/k = %.4g", end, F/k)
	}
}
