package modal

import (
	"math"
	"math/cmplx"
)

// The relations between the ways damping is quoted (DESIGN.md section 5,
// "Relations to keep in one place"). Frequencies are in hertz, damping
// ratios are fractions of critical damping (0.02 means 2 %).

// LossFactor returns the loss factor eta = 2 zeta of a viscously damped
// mode (the equivalence holds at resonance).
func LossFactor(zeta float64) float64 { return 2 * zeta }

// QFactor returns the quality factor Q = 1/(2 zeta). It is +Inf for
// zeta = 0.
func QFactor(zeta float64) float64 { return 1 / (2 * zeta) }

// LogDecFromZeta returns the logarithmic decrement per damped cycle,
// delta = 2 pi zeta / sqrt(1 - zeta^2). It is +Inf for zeta >= 1 (no
// oscillation, hence no cycle).
func LogDecFromZeta(zeta float64) float64 {
	if zeta >= 1 {
		return math.Inf(1)
	}
	return 2 * math.Pi * zeta / math.Sqrt(1-zeta*zeta)
}

// ZetaFromLogDec returns the damping ratio of a logarithmic decrement per
// damped cycle, zeta = delta / sqrt(4 pi^2 + delta^2). This is the exact
// inverse of LogDecFromZeta, not the light-damping delta/(2 pi).
func ZetaFromLogDec(delta float64) float64 {
	return delta / math.Sqrt(4*math.Pi*math.Pi+delta*delta)
}

// DampedFromNatural returns the damped natural frequency
// f_d = f_n sqrt(1 - zeta^2) (0 for zeta >= 1).
func DampedFromNatural(fn, zeta float64) float64 {
	if zeta >= 1 {
		return 0
	}
	return fn * math.Sqrt(1-zeta*zeta)
}

// PoleFromModal returns the upper continuous-time pole of a mode,
// s = -zeta wn + i wn sqrt(1 - zeta^2), wn = 2 pi fn, in rad/s.
// For zeta >= 1 the imaginary part is 0 (the faster-decaying real pole is
// not returned).
func PoleFromModal(fn, zeta float64) complex128 {
	wn := 2 * math.Pi * fn
	wd := 0.0
	if zeta < 1 {
		wd = wn * math.Sqrt(1-zeta*zeta)
	}
	return complex(-zeta*wn, wd)
}

// ModalFromPole returns the natural frequency in hertz and the damping ratio
// of a continuous-time pole s in rad/s: wn = |s|, zeta = -Re(s)/|s|.
// The sign of Im(s) does not matter. A zero pole gives (0, NaN).
func ModalFromPole(s complex128) (fn, zeta float64) {
	wn := cmplx.Abs(s)
	if wn == 0 {
		return 0, math.NaN()
	}
	return wn / (2 * math.Pi), -real(s) / wn
}
