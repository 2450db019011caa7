package oscillator

import (
	"math"
	"math/rand/v2"
)

// Oscillator is a single-degree-of-freedom oscillator with the damping
// forces of the package comment. Zero damping coefficients leave that
// force out.
type Oscillator struct {
	Mass      float64 // m, > 0
	Stiffness float64 // k, > 0
	Viscous   float64 // c: force c x'
	Quadratic float64 // c2: force c2 x'|x'|
	Cubic     float64 // c3: force c3 x'^3
	Friction  float64 // F: Coulomb force F sign(x'); the mass sticks when |k x| <= F at zero speed
}

// OmegaN returns the undamped natural circular frequency sqrt(k/m).
func (o Oscillator) OmegaN() float64 { return math.Sqrt(o.Stiffness / o.Mass) }

// accel returns the acceleration for state (x, v).
func (o Oscillator) accel(x, v float64) float64 {
	f := o.Stiffness*x + o.Viscous*v + o.Quadratic*v*math.Abs(v) + o.Cubic*v*v*v
	if o.Friction > 0 && v != 0 {
		f += math.Copysign(o.Friction, v)
	}
	return -f / o.Mass
}

// Record describes a recording of the oscillator's displacement.
type Record struct {
	SampleRate float64 // samples per second
	Duration   float64 // seconds of record
	PreTrigger float64 // seconds at rest before the impulse
	Velocity   float64 // initial speed v0 given by the impulse
	NoiseSD    float64 // white Gaussian noise added to every sample
	Seed       uint64
	// Substeps is the number of Runge-Kutta steps per sample interval
	// (default 16).
	Substeps int
}

// Displacement integrates the oscillator from the impulse and returns the
// displacement at every sample, with noise added.
func (o Oscillator) Displacement(r Record) []float64 {
	n := int(math.Round(r.Duration * r.SampleRate))
	out := make([]float64, n)
	sub := r.Substeps
	if sub <= 0 {
		sub = 16
	}
	h := 1 / (r.SampleRate * float64(sub))
	i0 := int(math.Round(r.PreTrigger * r.SampleRate))
	x, v := 0.0, r.Velocity
	for i := i0; i < n; i++ {
		out[i] = x
		for s := 0; s < sub; s++ {
			x, v = o.step(x, v, h)
		}
	}
	if r.NoiseSD > 0 {
		g := rand.New(rand.NewPCG(r.Seed, 0x05c1))
		for i := range out {
			out[i] += r.NoiseSD * g.NormFloat64()
		}
	}
	return out
}

// step advances (x, v) by h with classical Runge-Kutta. Friction: when the
// speed changes sign within a step and the spring cannot overcome the
// friction force, the mass sticks (x kept, v = 0).
func (o Oscillator) step(x, v, h float64) (float64, float64) {
	if v == 0 && o.Friction > 0 && math.Abs(o.Stiffness*x) <= o.Friction {
		return x, 0 // stuck
	}
	if v == 0 {
		// leaving rest: friction opposes the spring's pull
		v = -math.Copysign(1e-300, x)
	}
	k1x, k1v := v, o.accel(x, v)
	k2x, k2v := v+h/2*k1v, o.accel(x+h/2*k1x, v+h/2*k1v)
	k3x, k3v := v+h/2*k2v, o.accel(x+h/2*k2x, v+h/2*k2v)
	k4x, k4v := v+h*k3v, o.accel(x+h*k3x, v+h*k3v)
	nx := x + h/6*(k1x+2*k2x+2*k3x+k4x)
	nv := v + h/6*(k1v+2*k2v+2*k3v+k4v)
	if o.Friction > 0 && (nv > 0) != (v > 0) && math.Abs(o.Stiffness*nx) <= o.Friction {
		return nx, 0
	}
	return nx, nv
}
