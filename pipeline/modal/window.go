package modal

import "math"

// Correction for an exponential window w(t) = exp(-t/tau) that a recorder
// applied to the record (DESIGN.md section 5): the window adds 1/tau to the
// decay rate of every pole and leaves the damped frequency unchanged.

// CorrectExpWindow removes the window from a measured decay rate sigmaMeas
// (1/s) at damped angular frequency omegaD (rad/s) and returns the true
// undamped angular frequency (rad/s) and damping ratio:
// sigma_true = sigma_meas - 1/tau, omega_n = sqrt(omega_d^2 + sigma_true^2),
// zeta = sigma_true/omega_n. A tau <= 0 or +Inf means no window. A
// negative zeta means the window constant overstates the measured decay.
func CorrectExpWindow(sigmaMeas, omegaD, tau float64) (omegaN, zeta float64) {
	sigma := sigmaMeas
	if tau > 0 && !math.IsInf(tau, 1) {
		sigma -= 1 / tau
	}
	omegaN = math.Hypot(omegaD, sigma)
	return omegaN, sigma / omegaN
}

// CorrectZetaExpWindow is CorrectExpWindow for a mode given as measured
// natural frequency fnMeas (Hz, the undamped frequency of the windowed pole,
// |s|/2 pi) and damping ratio zetaMeas; it returns the true natural
// frequency in hertz and damping ratio.
func CorrectZetaExpWindow(fnMeas, zetaMeas, tau float64) (fn, zeta float64) {
	s := PoleFromModal(fnMeas, zetaMeas)
	wn, zeta := CorrectExpWindow(-real(s), imag(s), tau)
	return wn / (2 * math.Pi), zeta
}

// TauFromEndFraction returns the time constant of an exponential window that
// falls to the fraction p (0 < p < 1) of its start over a record of T
// seconds: tau = T / ln(1/p).
func TauFromEndFraction(T, p float64) float64 { return T / math.Log(1/p) }
