package modal

import "github.com/ringlog/ringlog/pipeline"

// Options steer Analyze. The zero value is usable: every field has a
// documented default applied by Analyze.
type Options struct {
	// MaxModes caps the number of modes reported (default 8).
	MaxModes int
	// FMinHz, FMaxHz bound the frequency band searched (defaults 0.5 Hz and
	// 0.45 times the sample rate).
	FMinHz, FMaxHz float64
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
}

// ModeDiag carries the per-mode diagnostics the quality rules need.
type ModeDiag struct {
	// BandLowHz, BandHighHz: the band that isolated the mode for the
	// envelope and log-decrement estimates (0,0 when not isolated).
	BandLowHz, BandHighHz float64
	// UsableS is the decay span in seconds from the onset to the FIRST time
	// the mode's envelope falls below 10 times the noise in its band.
	UsableS float64
	// ENR is the decay energy of the mode over the noise variance, as in the
	// Cramer-Rao bound sd(zeta)/zeta >= 2/sqrt(ENR).
	ENR float64
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
