package check

import (
	"errors"
	"fmt"
	"math"
)

// Thresholds holds every limit of every rule. Start from
// DefaultThresholds and override single fields from the configuration
// file; the TOML and JSON keys are the snake_case tags.
//
// Beside each default the comment says where the value comes from:
// "common practice" for values that impact-testing practice uses widely
// (recalled from memory, no single citable source), a section of
// DESIGN.md where the value follows from a relation given there, or "our
// choice" where we picked a value with the reasoning given.
type Thresholds struct {
	// --- clipped ---

	// ClipFullScaleTolerance: a sample whose magnitude is within this
	// fraction of the channel's FullScale counts as "at full scale".
	// Fraction, default 0.005 (0.5 %; our choice: a converter reading within
	// half a percent of its limit has left its linear range).
	ClipFullScaleTolerance float64 `toml:"clip_full_scale_tolerance" json:"clip_full_scale_tolerance"`
	// ClipFullScaleSamples: number of samples at full scale that reject the
	// hit. Samples, default 1 (common practice: any overload spoils a hit).
	ClipFullScaleSamples int `toml:"clip_full_scale_samples" json:"clip_full_scale_samples"`
	// ClipFlatRun: a run of at least this many consecutive equal samples at
	// the record's maximum or minimum is a flat top (clipping), unless the
	// run is explained by the quantisation of a smooth peak. Samples,
	// default 3 (our choice).
	ClipFlatRun int `toml:"clip_flat_run" json:"clip_flat_run"`

	// --- double_strike ---

	// StrikeReturnFraction: the force counts as "back near zero" between
	// pulses when it falls below this fraction of the main pulse's peak.
	// Fraction, default 0.05 (common practice, 5-10 % of the peak).
	StrikeReturnFraction float64 `toml:"strike_return_fraction" json:"strike_return_fraction"`
	// StrikeRiseFraction: a second pulse is a rise of the force above this
	// fraction of the main peak after the force was back near zero (the
	// rise must also exceed 5 noise standard deviations of the force
	// channel). Fraction, default 0.10 (common practice, 10-20 %).
	StrikeRiseFraction float64 `toml:"strike_rise_fraction" json:"strike_rise_fraction"`

	// --- under_excited ---

	// ExcitationDropDB: a mode is under-excited when the force spectrum
	// (magnitude of the Fourier transform of the unwindowed force pulse) at
	// its frequency lies more than this many dB below the spectrum at 0 Hz.
	// dB, default 20 (DESIGN.md sec. 4; common practice puts the usable
	// band of an impact where the force spectrum is within 10-20 dB of its
	// low-frequency level).
	ExcitationDropDB float64 `toml:"excitation_drop_db" json:"excitation_drop_db"`

	// --- short_decay ---

	// MinCycles: fewest cycles of a mode above the noise (Mode.Cycles) that
	// a damping estimate may rest on. Cycles, default 5 (common practice
	// for decrement-type estimates, from memory).
	MinCycles float64 `toml:"min_cycles" json:"min_cycles"`
	// MaxDampingRelSD: the precision asked for the damping ratio, as a
	// relative standard deviation. A mode whose Cramer-Rao floor
	// 2/sqrt(ENR) (DESIGN.md sec. 6) exceeds it cannot give that precision
	// from this hit and is dropped. Fraction, default 0.10 (our choice).
	MaxDampingRelSD float64 `toml:"max_damping_rel_sd" json:"max_damping_rel_sd"`

	// --- mixed_modes, beating_modes ---

	// ExpectSingleMode: the hit was meant to excite one mode; other modes
	// carrying more than MaxOtherEnergyShare are flagged. The recording's
	// metadata key "expect_single_mode" overrides it. Default false.
	ExpectSingleMode bool `toml:"expect_single_mode" json:"expect_single_mode"`
	// TargetHz: frequency of the mode the hit was meant to excite; > 0
	// implies ExpectSingleMode and picks the intended mode as the one
	// nearest to it (otherwise the most energetic mode). The metadata key
	// "target_hz" overrides it. Hz, default 0 (none).
	TargetHz float64 `toml:"target_hz" json:"target_hz"`
	// MaxOtherEnergyShare: largest share of the response energy
	// (Mode.EnergyShare) another mode may carry when one mode was meant.
	// Fraction, default 0.20 (our choice).
	MaxOtherEnergyShare float64 `toml:"max_other_energy_share" json:"max_other_energy_share"`
	// BeatBandwidths: two neighbouring modes closer than this many
	// half-power bandwidths (2 zeta f_n, the larger of the two) beat. A
	// band-isolating filter must be about 7 half-power bandwidths wide
	// (DESIGN.md sec. 5), so a neighbour within about half of that falls
	// inside it. Count, default 4 (our choice from that relation).
	BeatBandwidths float64 `toml:"beat_bandwidths" json:"beat_bandwidths"`
	// MinBeatPeriods: two neighbouring modes whose separation times the
	// usable decay span, |f1-f2|*T, is below this also beat: the record
	// holds too few beat periods to tell them apart (the Fourier resolution
	// of a record of length T is about 1/T). Count, default 2 (our choice).
	MinBeatPeriods float64 `toml:"min_beat_periods" json:"min_beat_periods"`

	// --- friction_decay, damping_drift ---

	// FrictionRSSRatio: the envelope falls linearly (friction) when the
	// residual of a straight-line fit to it is below this fraction of the
	// residual of an exponential fit (ModeDiag.LinRSS < ratio*ExpRSS).
	// Fraction, default 0.5 (our choice).
	FrictionRSSRatio float64 `toml:"friction_rss_ratio" json:"friction_rss_ratio"`
	// FrictionMaxEndLevel: the straight-line test is made only when the
	// mode's fitted exponential falls over the usable span to this fraction
	// of its start or lower, exp(-zeta*2*pi*f_n*UsableS) <= level: over a
	// shorter fall a line and an exponential fit the envelope equally well
	// (e^-x ~ 1-x). Fraction, default 0.5 (our choice).
	FrictionMaxEndLevel float64 `toml:"friction_max_end_level" json:"friction_max_end_level"`
	// MaxDampingDrift: largest relative difference between the damping
	// ratios fitted on the early and the late half of the decay
	// (|early-late| / mean of the two). Fraction, default 0.50, a ratio of
	// 1.67 between the two (our choice: on clean viscous pipeline/synth
	// decays at 40 dB the two half-span envelope fits of the present
	// estimators differed by up to 47 %, from the band-pass transient at the
	// start and the record end, so a tighter default flags good hits).
	MaxDampingDrift float64 `toml:"max_damping_drift" json:"max_damping_drift"`

	// --- amplitude_damping ---

	// MaxAmplitudeDampingChange: largest relative change of a mode's damping
	// ratio over the amplitudes its decay spans (Mode.AmplitudeDamping; a
	// weighted line of the bins' damping ratios against the logarithm of
	// their amplitude, the change over the range divided by the mean) before
	// the mode is flagged; the change must also stand 3 standard errors
	// from zero. Fraction, default 0.30 (our choice: hit-to-hit scatter of
	// damping ratios is commonly 10-20 %, from memory, as for
	// MaxEstimatorSpread; on viscous decays in noise the change stays
	// within a few percent, see pipeline/check/amplitude_test.go).
	MaxAmplitudeDampingChange float64 `toml:"max_amplitude_damping_change" json:"max_amplitude_damping_change"`

	// --- estimates_disagree ---

	// MaxEstimatorSpread: largest relative deviation of a cross-check
	// estimate from the primary damping ratio. Fraction, default 0.25 (our
	// choice: the scatter of damping ratios between repeated hits is
	// commonly 10-20 %, from memory, so more than 25 % between estimators on
	// one hit is more than ordinary scatter).
	MaxEstimatorSpread float64 `toml:"max_estimator_spread" json:"max_estimator_spread"`
	// HalfPowerFloorShare: a half-power estimate is left out of the
	// comparison when its resolution floor 0.44*df/f_n (DESIGN.md sec. 5,
	// df = 1/T of the decay record) exceeds this share of the primary
	// damping ratio: near its floor the half-power bandwidth is widened by
	// the record length, not by damping. Fraction, default 0.5 (our choice).
	HalfPowerFloorShare float64 `toml:"halfpower_floor_share" json:"halfpower_floor_share"`

	// --- no_decay ---

	// MinModeNoiseRatio: a mode counts as a decaying mode only when its
	// initial amplitude exceeds this multiple of the noise RMS. Ratio,
	// default 3 (our choice, a three-sigma detection).
	MinModeNoiseRatio float64 `toml:"min_mode_noise_ratio" json:"min_mode_noise_ratio"`

	// --- pre_ringing, no_lead_in ---

	// MinLeadInSamples: fewest quiet samples before the trigger (after the
	// guard) needed to check that the structure was at rest; with fewer the
	// hit is flagged no_lead_in. Samples, default 16 (our choice: the RMS
	// of n Gaussian samples has a relative sd of about 1/sqrt(2n), 18 % at
	// n = 16).
	MinLeadInSamples int `toml:"min_lead_in_samples" json:"min_lead_in_samples"`
	// LeadInGuardS: samples this close before the trigger are left out of
	// the lead-in (trigger uncertainty, recorder anti-alias filter
	// pre-ringing). Seconds, default 0.002 (our choice).
	LeadInGuardS float64 `toml:"lead_in_guard_s" json:"lead_in_guard_s"`
	// PreRingNoiseRatio: the lead-in counts as ringing when its RMS exceeds
	// this multiple of the noise RMS (and PreRingPeakFraction of the peak).
	// Ratio, default 3 (our choice, about 10 dB above the noise).
	PreRingNoiseRatio float64 `toml:"pre_ring_noise_ratio" json:"pre_ring_noise_ratio"`
	// PreRingPeakFraction: ringing in the lead-in matters only above this
	// fraction of the response peak, either as RMS or as the amplitude of a
	// sinusoid at a mode frequency. Fraction, default 0.02 (our choice,
	// -34 dB re the peak).
	PreRingPeakFraction float64 `toml:"pre_ring_peak_fraction" json:"pre_ring_peak_fraction"`
	// StartLevelFraction: without a lead-in, a first sample above this
	// fraction of the peak (and above 5 noise RMS) means the record began
	// in the middle of a vibration: a structure at rest that is struck
	// starts from zero. Fraction, default 0.10 (our choice).
	StartLevelFraction float64 `toml:"start_level_fraction" json:"start_level_fraction"`

	// --- transient_in_decay ---

	// TransientMinRatio: a burst in the residual of the fitted decay is
	// reported when its RMS is at least this many times the residual's
	// ordinary RMS. Ratio, default 3 (our choice, about 10 dB: the
	// estimators already require 6 dB and ten robust spreads, which noise
	// alone does not reach).
	TransientMinRatio float64 `toml:"transient_min_ratio" json:"transient_min_ratio"`

	// --- mode_limit ---

	// ModeLimitMinLeftOut: the result says that the limit of reported
	// modes was reached when at least this many modes that stood above the
	// noise were left out. Count, default 1 (our choice: no real mode is
	// left out silently).
	ModeLimitMinLeftOut int `toml:"mode_limit_min_left_out" json:"mode_limit_min_left_out"`
}

// DefaultThresholds returns the default limits; see each field of
// Thresholds for its source.
func DefaultThresholds() Thresholds {
	return Thresholds{
		ClipFullScaleTolerance: 0.005,
		ClipFullScaleSamples:   1,
		ClipFlatRun:            3,

		StrikeReturnFraction: 0.05,
		StrikeRiseFraction:   0.10,

		ExcitationDropDB: 20,

		MinCycles:       5,
		MaxDampingRelSD: 0.10,

		ExpectSingleMode:    false,
		TargetHz:            0,
		MaxOtherEnergyShare: 0.20,
		BeatBandwidths:      4,
		MinBeatPeriods:      2,

		FrictionRSSRatio:    0.5,
		FrictionMaxEndLevel: 0.5,
		MaxDampingDrift:     0.50,

		MaxAmplitudeDampingChange: 0.30,

		MaxEstimatorSpread:  0.25,
		HalfPowerFloorShare: 0.5,

		MinModeNoiseRatio: 3,

		MinLeadInSamples:    16,
		LeadInGuardS:        0.002,
		PreRingNoiseRatio:   3,
		PreRingPeakFraction: 0.02,
		StartLevelFraction:  0.10,

		TransientMinRatio: 3,

		ModeLimitMinLeftOut: 1,
	}
}

// Validate reports thresholds that make no sense (negative counts,
// fractions outside 0..1, NaN), naming the configuration key.
func (t Thresholds) Validate() error {
	var errs []error
	frac := func(key string, v float64, allowOne bool) {
		if math.IsNaN(v) || v <= 0 || v > 1 || (!allowOne && v == 1) {
			errs = append(errs, fmt.Errorf("threshold %s = %g: want a fraction in (0, 1)", key, v))
		}
	}
	pos := func(key string, v float64) {
		if math.IsNaN(v) || math.IsInf(v, 0) || v <= 0 {
			errs = append(errs, fmt.Errorf("threshold %s = %g: want a positive number", key, v))
		}
	}
	nonneg := func(key string, v float64) {
		if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
			errs = append(errs, fmt.Errorf("threshold %s = %g: want zero or a positive number", key, v))
		}
	}
	count := func(key string, v, min int) {
		if v < min {
			errs = append(errs, fmt.Errorf("threshold %s = %d: want at least %d", key, v, min))
		}
	}
	frac("clip_full_scale_tolerance", t.ClipFullScaleTolerance, false)
	count("clip_full_scale_samples", t.ClipFullScaleSamples, 1)
	count("clip_flat_run", t.ClipFlatRun, 2)
	frac("strike_return_fraction", t.StrikeReturnFraction, false)
	frac("strike_rise_fraction", t.StrikeRiseFraction, false)
	if t.StrikeRiseFraction <= t.StrikeReturnFraction {
		errs = append(errs, fmt.Errorf("threshold strike_rise_fraction = %g must exceed strike_return_fraction = %g",
			t.StrikeRiseFraction, t.StrikeReturnFraction))
	}
	pos("excitation_drop_db", t.ExcitationDropDB)
	nonneg("min_cycles", t.MinCycles)
	pos("max_damping_rel_sd", t.MaxDampingRelSD)
	nonneg("target_hz", t.TargetHz)
	frac("max_other_energy_share", t.MaxOtherEnergyShare, true)
	nonneg("beat_bandwidths", t.BeatBandwidths)
	nonneg("min_beat_periods", t.MinBeatPeriods)
	frac("friction_rss_ratio", t.FrictionRSSRatio, true)
	frac("friction_max_end_level", t.FrictionMaxEndLevel, false)
	pos("max_damping_drift", t.MaxDampingDrift)
	pos("max_amplitude_damping_change", t.MaxAmplitudeDampingChange)
	pos("max_estimator_spread", t.MaxEstimatorSpread)
	pos("halfpower_floor_share", t.HalfPowerFloorShare)
	nonneg("min_mode_noise_ratio", t.MinModeNoiseRatio)
	count("min_lead_in_samples", t.MinLeadInSamples, 2)
	nonneg("lead_in_guard_s", t.LeadInGuardS)
	pos("pre_ring_noise_ratio", t.PreRingNoiseRatio)
	frac("pre_ring_peak_fraction", t.PreRingPeakFraction, false)
	frac("start_level_fraction", t.StartLevelFraction, false)
	pos("transient_min_ratio", t.TransientMinRatio)
	count("mode_limit_min_left_out", t.ModeLimitMinLeftOut, 1)
	return errors.Join(errs...)
}
