package field

import (
	"math"
)

// Mode is one mode of the struck structure, seen at the response point.
type Mode struct {
	FrequencyHz  float64 // undamped natural frequency of the linear structure
	DampingRatio float64 // viscous damping ratio (the linear part), 0 <= zeta < 1
	// Amplitude is the nominal initial acceleration amplitude of this mode
	// at the response point, in response units, for the first hammer
	// pulse taken as an ideal impulse (the actual amplitude is lower when
	// the contact lasts a fair part of the period: the pulse's spectrum
	// falls off). Its sign is the sign of the mode shape product.
	Amplitude float64
	// CubicZeta adds cubic damping c3 v^3. Its equivalent viscous
	// damping ratio at modal displacement amplitude a is 3 c3 w a^2 / 8
	// (first-order averaging, e.g. Nayfeh & Mook, Nonlinear Oscillations,
	// from memory); CubicZeta is that extra ratio at the nominal initial
	// amplitude, so zeta(A) = DampingRatio + CubicZeta (A/|Amplitude|)^2.
	CubicZeta float64
	// FrictionPerCycle adds Coulomb friction mu sgn(v): the free decay's
	// amplitude falls by 4 mu / w^2 per cycle (Den Hartog, Mechanical
	// Vibrations, friction damping), here that fall as a fraction of the
	// nominal initial amplitude. Its equivalent damping ratio at amplitude
	// A is 2 FrictionPerCycle |Amplitude| / (pi^2 A).
	FrictionPerCycle float64
}

// EquivalentZeta returns the mode's equivalent viscous damping ratio at
// response amplitude a (same units as Amplitude): the linear ratio plus the
// cubic and friction parts described on Mode.
func (m Mode) EquivalentZeta(a float64) float64 {
	a0 := math.Abs(m.Amplitude)
	z := m.DampingRatio
	if a0 == 0 || a <= 0 {
		return z
	}
	z += m.CubicZeta * (a / a0) * (a / a0)
	if m.FrictionPerCycle > 0 {
		z += 2 * m.FrictionPerCycle * a0 / (math.Pi * math.Pi * a)
	}
	return z
}

// Hammer is the impact: half-sine contact pulses.
type Hammer struct {
	PeakN    float64 // peak force of the first strike, N
	ContactS float64 // contact time, s (see ContactTime)
	// SecondDelayS > 0 strikes a second time (a bounce) that long after
	// the first, SecondScale times as hard.
	SecondDelayS float64
	SecondScale  float64
}

// ContactTime returns the contact time pi sqrt(m/k) of a hammer of mass m
// (kg) on a tip of stiffness k (N/m) against a rigid structure: half a
// period of the mass on the tip spring (common practice for choosing tips).
func ContactTime(massKg, tipStiffness float64) float64 {
	return math.Pi * math.Sqrt(massKg/tipStiffness)
}

// Impulse returns the impulse of the first pulse, N s (2 peak contact/pi).
func (h Hammer) Impulse() float64 { return 2 * h.PeakN * h.ContactS / math.Pi }

// force returns the hammer force at time t after the first contact.
func (h Hammer) force(t float64) float64 {
	f := halfSine(t, h.ContactS, h.PeakN)
	if h.SecondDelayS > 0 {
		f += halfSine(t-h.SecondDelayS, h.ContactS, h.PeakN*h.SecondScale)
	}
	return f
}

func halfSine(t, width, peak float64) float64 {
	if t <= 0 || t >= width {
		return 0
	}
	return peak * math.Sin(math.Pi*t/width)
}

// Rattle is a loose sensor or cable knocking once during the decay: a
// short knock exciting a resonance of the sensor mount, seen by the
// response channel only.
type Rattle struct {
	TimeS        float64 // time of the knock after the first contact, s
	Amplitude    float64 // initial acceleration amplitude of the knock's ringing
	FrequencyHz  float64 // mount resonance
	DampingRatio float64
}

// oscillator is one modal coordinate with unit modal mass.
type oscillator struct {
	w, c, g  float64 // natural frequency (rad/s), 2 zeta w, force gain
	c3, mu   float64 // cubic damping, Coulomb friction (per unit mass)
	veps     float64 // velocity scale of the regularised sign
	force    func(t float64) float64
	q, v     float64
	endQ     float64 // state at the end of the first contact
	endV     float64
	endT     float64 // time of that state from the recording's start
	recorded bool
}

// accel returns the acceleration dv/dt for the state (q, v) at time t.
func (o *oscillator) accel(q, v, t float64) float64 {
	a := o.g*o.force(t) - o.c*v - o.w*o.w*q
	if o.c3 != 0 {
		a -= o.c3 * v * v * v
	}
	if o.mu != 0 {
		a -= o.mu * math.Tanh(v/o.veps)
	}
	return a
}

// step advances the oscillator from t by h with the classical
// fourth-order Runge-Kutta method.
func (o *oscillator) step(t, h float64) {
	q, v := o.q, o.v
	k1q, k1v := v, o.accel(q, v, t)
	k2q, k2v := v+h/2*k1v, o.accel(q+h/2*k1q, v+h/2*k1v, t+h/2)
	k3q, k3v := v+h/2*k2v, o.accel(q+h/2*k2q, v+h/2*k2v, t+h/2)
	k4q, k4v := v+h*k3v, o.accel(q+h*k3q, v+h*k3v, t+h)
	o.q = q + h/6*(k1q+2*k2q+2*k3q+k4q)
	o.v = v + h/6*(k1v+2*k2v+2*k3v+k4v)
}

// newModeOscillator sets a mode up so that an ideal impulse J gives the
// nominal acceleration amplitude |Amplitude|: v(0+) = g J, modal
// displacement amplitude g J / w, acceleration amplitude about g J w.
func newModeOscillator(m Mode, hammer Hammer) *oscillator {
	w := 2 * math.Pi * m.FrequencyHz
	j := hammer.Impulse()
	o := &oscillator{w: w, c: 2 * m.DampingRatio * w, force: hammer.force}
	if j > 0 {
		o.g = m.Amplitude / (j * w)
	}
	a0 := math.Abs(o.g) * j / w // nominal modal displacement amplitude
	if m.CubicZeta > 0 && a0 > 0 {
		o.c3 = 8 * m.CubicZeta / (3 * w * a0 * a0)
	}
	if m.FrictionPerCycle > 0 && a0 > 0 {
		o.mu = m.FrictionPerCycle * a0 * w * w / 4
		o.veps = 1e-3 * a0 * w
	}
	return o
}

// integrate runs the oscillators from t = 0 (the recording's start; the
// first contact at t0) over n steps of h and returns the acceleration sum
// at each step's start. Each oscillator's state at the end of the first
// contact is kept for the truth.
func integrate(osc []*oscillator, t0, contact, h float64, n int) []float64 {
	out := make([]float64, n)
	tEnd := t0 + contact
	for i := 0; i < n; i++ {
		t := float64(i) * h
		for _, o := range osc {
			if !o.recorded && t >= tEnd {
				o.endQ, o.endV, o.endT, o.recorded = o.q, o.v, t, true
			}
			out[i] += o.accel(o.q, o.v, t-t0)
			o.step(t-t0, h)
		}
	}
	return out
}
