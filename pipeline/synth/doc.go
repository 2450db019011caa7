// Package synth makes synthetic impact hits from known modes, for tests,
// benchmarks, the accuracy table and the demo.
//
// The generator is deliberately the plainest possible: each mode is the
// textbook free response of a viscously damped single-degree-of-freedom
// oscillator, A exp(-zeta wn t) sin(wd t + phi), wd = wn sqrt(1-zeta^2),
// evaluated sample by sample with math.Exp and math.Sin, plus white Gaussian
// noise. It shares no code with the estimators, so tests that use it check
// the estimators against the closed-form solution, not against themselves.
package synth
