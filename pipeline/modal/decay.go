package modal

import "github.com/ringlog/ringlog/pipeline"

// Options steer Analyze. The zero value is usable: every field has a
// documented default applied by Analyze.
type Options struct {
	// MaxModes caps the number of modes reported (default 64). When more
	// modes stand above the noise, the weakest are left out and
	// Decay.Capped says how many.
	MaxModes int
	// FMinHz, FMaxHz bound the frequency band searched (defaults 0 Hz and
	// 0.45 times the sample rate). 0 means 0: there is no hidden floor.
	FMinHz, FMaxHz float64
	// MainsHz is the mains frequency whose lines (the fundamental and its
	// harmonics) are never modes: 50 or 60; 0 checks both, a negative
	// value none.
	MainsHz float64
	// HighpassHz is the corner frequency of a first-order high-pass (the
	// AC coupling of the sensor or amplifier) that the response went
	// through; 0 for none. Its step response is part of the fitted model.
	HighpassHz float64
	// WindowTauS is the time constant of an exponential window the recorder
	// applied, w(t) = exp(-t/tau); 0 means no window. The estimates are
	// corrected for it.
	WindowTauS float64
}

// Decay is what the estimators found in one response channel.
type Decay struct {
	// Onset is the index of the first sample of the free decay that the
	// estimators used (just after the impact).
	Onset int
	// Trigger is the index where the impact starts (force rise, or the
	// response rising out of the noise).
	Trigger int
	// NoiseRMS is the standard deviation of the noise, estimated from the
	// pre-trigger samples and the record tail.
	NoiseRMS float64
	// Peak is the largest absolute response after the trigger.
	Peak float64
	// Modes in ascending frequency, each with its primary estimate, 95 %
	// interval and the cross-check estimates.
	Modes []pipeline.Mode
	// Diag is parallel to Modes.
	Diag []ModeDiag
	// Noise is the noise model (spectrum) the modes were judged against;
	// nil when the record held no decay.
	Noise *NoiseModel
	// Lines are steady lines (mains hum and its harmonics, any other tone
	// that does not decay) fitted with the modes and not reported as modes.
	Lines []Line
	// Capped is the number of modes that stood above the noise but were
	// left out because Options.MaxModes (or the fit's component limit) was
	// reached; 0 when none was.
	Capped int
	// Transients are bursts in the residual of the fitted model inside the
	// decay (a sensor rattle, a cable knock, something else ringing in).
	Transients []Transient
}

// Line is a steady line found in the response.
type Line struct {
	FrequencyHz float64
	Amplitude   float64
	Mains       bool // at the mains frequency or one of its harmonics
}

// Transient is a burst in the residual of the fitted model.
type Transient struct {
	TimeS     float64 // start, seconds from the record start
	DurationS float64
	// Ratio is the burst's RMS over the residual's ordinary RMS.
	Ratio float64
}

// ModeDiag carries the per-mode diagnostics the quality rules need.
type ModeDiag struct {
	// BandLowHz, BandHighHz: the band that isolated the mode for the
	// envelope and log-decrement estimates (0,0 when not isolated).
	BandLowHz, BandHighHz float64
	// UsableS is the decay span in seconds from the onset to the FIRST time
	// the mode's envelope falls below 10 times the noise in its band.
	UsableS float64
	// ENR is the decay energy of the mode over the noise variance at the
	// mode's frequency (NoiseModel.SDAt), as in the Cramer-Rao bound
	// sd(zeta)/zeta >= 2/sqrt(ENR).
	ENR float64
	// NoiseSD is the white-equivalent noise standard deviation at the
	// mode's frequency (NoiseModel.SDAt).
	NoiseSD float64
	// ZetaEarly and ZetaLate are the envelope damping ratios fitted on the
	// first and the second half of the usable span (NaN when the span is too
	// short to split).
	ZetaEarly, ZetaLate float64
	// ExpRSS and LinRSS are the residual sums of squares of an exponential
	// and of a straight-line fit to the (linear-scale) envelope over the
	// usable span; LinRSS much smaller than ExpRSS means friction.
	ExpRSS, LinRSS float64
	// Isolated is false when the mode could not be band-isolated (a close
	// neighbour), so envelope and log decrement were not computed.
	Isolated bool
}
