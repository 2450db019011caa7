// Package field makes impact-hit recordings the way a test bay records
// them, to test the analysis against something it does not share: a
// structure integrated in time, struck by a hammer, measured by a sensor
// with its own noise, filtered, digitised and windowed by a recorder.
//
// Nothing here uses the closed-form damped sinusoids the estimators
// assume. The chain, at an oversampled rate (Spec.Oversample times the
// record's rate, default 16):
//
//  1. structure: each mode is a unit-mass modal oscillator
//     a + 2 zeta w v + w^2 q + c3 v^3 + mu sgn(v) = g F(t), v = dq/dt, a = dv/dt,
//     integrated with the classical fourth-order Runge-Kutta method; the
//     response is the sum of the accelerations a over the modes, computed from
//     the state (not differentiated). c3 (cubic damping) and mu (Coulomb
//     friction, with sgn regularised as tanh(v/v_eps)) make the damping
//     depend on amplitude; Mode documents their equivalent damping ratio.
//     Mode builders for a simply supported plate (closed-form eigenvalues)
//     and a spring-mass chain (eigen-decomposition with gonum/mat) give
//     realistic sets of modes.
//  2. hammer: half-sine contact pulses (contact time pi sqrt(m/k) of
//     hammer mass and tip stiffness), an optional second strike;
//     a loose sensor's rattle is a separate oscillator kicked mid-decay.
//  3. sensor: Gaussian noise of one-sided spectral density
//     N0^2 (1 + fc/f) (white plus 1/f below the corner fc), shaped in the
//     frequency domain with gonum/dsp/fourier; AC coupling as a
//     first-order high-pass.
//  4. amplifier and cabling: slow thermal drift (an exponential settling,
//     not a polynomial) and mains hum at 50 or 60 Hz with harmonics.
//  5. recorder: anti-alias Butterworth low-pass applied at the
//     oversampled rate (standing in for the analog filter), decimation,
//     an ADC that clips at full scale and rounds to its step, and an
//     optional exponential window exp(-t/tau) from the first sample, with
//     tau written in the metadata (window_tau_s).
//
// The filters are checked against scipy.signal (testdata/field/make_refs.py,
// run once with Debian's python3-scipy). Everything is deterministic for a
// given Spec.Seed.
//
// Corpus lists the committed files of testdata/field (one clean and one
// spoiled hit per effect, with the verdict each must get); Record.NoiseSDAt
// gives the recorded noise's spectral level at a frequency as the standard
// deviation of white noise with the same density, for Cramer-Rao bounds
// under coloured noise.
package field
