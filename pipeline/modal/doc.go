// Package modal estimates natural frequency and damping ratio, with an
// uncertainty, for every mode of a free decay (an impact-hammer hit).
//
// The entry point is Analyze. It finds the impact (force channel rise, or
// the response rising out of the noise), the onset of the free decay and
// the noise level, and then runs several estimators:
//
//   - the primary, multi-mode estimate: a subspace (matrix pencil)
//     estimate of the poles, per frequency band on a shifted, low-passed and
//     decimated band signal (Subspace), refined by a nonlinear least-squares
//     fit of damped sinusoids to the full-rate decay (FitDecay), whose
//     covariance sigma^2 (J^T J)^-1 gives the standard error and the 95 %
//     interval of each damping ratio and frequency;
//   - cross-checks where a mode can be band-isolated: Hilbert envelope
//     (EnvelopeDamping) and logarithmic decrement (LogDecrementSignal);
//   - half-power bandwidth on the FRF (force channel) or on the response
//     spectrum (HalfPower).
//
// CRBZeta gives the Cramer-Rao bound on the standard deviation of the
// damping ratio of one damped sinusoid in white Gaussian noise, the limit
// against which the estimators are judged (sub-package accuracy runs the
// Monte Carlo table). The relations between damping measures (loss factor,
// Q, logarithmic decrement) and the exponential-window correction live here
// too.
//
// Everything here is pure computation on slices: no I/O and no global
// state, so the daemon and the one-shot command run the same code.
package modal
