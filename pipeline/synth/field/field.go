package field

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"strconv"

	"github.com/ringlog/ringlog/pipeline"
)

// Sensor is the accelerometer and its amplifier.
type Sensor struct {
	// NoiseDensity is the white part of the noise, as a one-sided
	// spectral density in response units per sqrt(Hz).
	NoiseDensity float64
	// PinkCornerHz is the 1/f corner: below it the 1/f part dominates
	// (density^2 (1 + corner/f)); 0 is white noise.
	PinkCornerHz float64
	// HighpassHz is the AC coupling's first-order high-pass corner; 0 is
	// DC coupling.
	HighpassHz float64
}

// Hum is mains pick-up in the cabling.
type Hum struct {
	FrequencyHz float64   // 50 or 60 (a few hundredths off is realistic)
	Amplitudes  []float64 // of the fundamental and each harmonic, response units
}

// Drift is a slow change of the amplifier's output: Offset at the start,
// settling exponentially with time constant TauS (default the record's
// length) so that it has moved by Total at the record's end.
type Drift struct {
	Offset, Total, TauS float64
}

// AntiAlias is the recorder's low-pass before the ADC.
type AntiAlias struct {
	Order    int     // Butterworth order; 0 gives the default 6, -1 none
	CornerHz float64 // 0 gives 0.4 times the record's sample rate
}

// ADC is the converter.
type ADC struct {
	Bits           int     // resolution; 0 leaves the samples unquantised
	FullScale      float64 // response range +/-, response units; 0 = never clips
	ForceFullScale float64 // force range +/-, N; 0 = 4 times the peak force
}

// Spec is one recording to make.
type Spec struct {
	SampleRate float64 // record rate, Hz
	Duration   float64 // s
	PreTrigger float64 // s of record before the first contact
	Oversample int     // integration and analog-filter rate over the record's; default 16 (RK4 errors at a mode of 0.3 times the record's rate: damping 0.004 %, frequency 2e-6, relative)
	Seed       uint64

	Modes  []Mode
	Hammer Hammer
	Rattle *Rattle // nil: none
	// PreviousHitS > 0: the same strike also came this long before the
	// first contact, so the structure still rings when the record starts
	// (its force pulse is on the force channel only if inside the record).
	PreviousHitS float64

	Sensor            Sensor
	Hum               Hum
	Drift             Drift
	AntiAlias         AntiAlias
	ADC               ADC
	ForceNoiseDensity float64 // white noise of the force channel, N/sqrt(Hz)
	NoForce           bool    // record the response only
	// WindowTauS > 0: the recorder multiplies the response by
	// exp(-t/tau), t from the record's first sample, and writes tau in the
	// metadata as window_tau_s.
	WindowTauS float64
	// Meta is copied into the recording's metadata.
	Meta map[string]string
}

// Truth is what the analysis should find for one mode.
type Truth struct {
	FrequencyHz  float64 // undamped natural frequency
	DampingRatio float64 // linear viscous damping ratio
	Nonlinear    bool    // cubic damping or friction: the damping depends on amplitude
	// OnsetS is where the first contact has ended (the free decay starts),
	// from the record's start.
	OnsetS float64
	// Amplitude and Phase at OnsetS of the recorded free decay
	// Amplitude exp(-sigma t) cos(wd t + Phase), t from OnsetS, after the
	// high-pass and anti-alias filters' gain and phase at the mode (the
	// linear part; the window excluded).
	Amplitude, Phase float64
}

// Record is a made recording and its truth.
type Record struct {
	Rec   *pipeline.Recording
	Modes []Truth // parallel to Spec.Modes
	Spec  Spec

	fso      float64 // oversampled rate
	aa, hp   sos
	quantVar float64 // quantisation noise variance, step^2/12
}

// Generate makes the recording described by s.
func Generate(s Spec) (*Record, error) {
	s = s.withDefaults()
	if err := s.validate(); err != nil {
		return nil, err
	}
	fs, r := s.SampleRate, s.Oversample
	fso := fs * float64(r)
	n := int(math.Round(s.Duration * fs))
	no := n * r
	h := 1 / fso
	rng := rand.New(rand.NewPCG(s.Seed, 0xf1e1d))

	// 1-2. structure, hammer, rattle
	hammer := s.Hammer.force
	if p := s.PreviousHitS; p > 0 {
		hammer = func(t float64) float64 { return s.Hammer.force(t) + s.Hammer.force(t+p) }
	}
	osc := make([]*oscillator, len(s.Modes))
	for i, m := range s.Modes {
		osc[i] = newModeOscillator(m, s.Hammer)
		osc[i].force = hammer
	}
	all := osc
	if rt := s.Rattle; rt != nil {
		knock := Hammer{PeakN: 1, ContactS: 2e-4}
		ro := newModeOscillator(Mode{FrequencyHz: rt.FrequencyHz, DampingRatio: rt.DampingRatio, Amplitude: rt.Amplitude}, knock)
		ro.force = func(t float64) float64 { return knock.force(t - rt.TimeS) }
		all = append(append([]*oscillator{}, osc...), ro)
	}
	lead := 0 // samples integrated before the record starts
	if s.PreviousHitS > s.PreTrigger {
		lead = int(math.Ceil((s.PreviousHitS - s.PreTrigger) * fso))
	}
	resp := integrate(all, s.PreTrigger+float64(lead)*h, s.Hammer.ContactS, h, no+lead)[lead:]
	for _, o := range all {
		o.endT -= float64(lead) * h
	}

	// 3. sensor noise and AC coupling
	noise := sensorNoise(rng, no, fso, s.Sensor.NoiseDensity, s.Sensor.PinkCornerHz)
	for i := range resp {
		resp[i] += noise[i]
	}
	rec := &Record{Spec: s, fso: fso}
	if s.Sensor.HighpassHz > 0 {
		rec.hp = highPass1(s.Sensor.HighpassHz, fso)
		rec.hp.apply(resp, true)
	}
	// 4. drift and hum
	humPhase := make([]float64, len(s.Hum.Amplitudes))
	for k := range humPhase {
		humPhase[k] = 2 * math.Pi * rng.Float64()
	}
	tau := s.Drift.TauS
	norm := 1 - math.Exp(-s.Duration/tau)
	for i := range resp {
		t := float64(i) * h
		if s.Drift.Offset != 0 || s.Drift.Total != 0 {
			resp[i] += s.Drift.Offset + s.Drift.Total*(1-math.Exp(-t/tau))/norm
		}
		for k, a := range s.Hum.Amplitudes {
			resp[i] += a * math.Sin(2*math.Pi*float64(k+1)*s.Hum.FrequencyHz*t+humPhase[k])
		}
	}
	// force channel
	var force []float64
	if !s.NoForce {
		force = make([]float64, no)
		fn := sensorNoise(rng, no, fso, s.ForceNoiseDensity, 0)
		for i := range force {
			force[i] = hammer(float64(i)*h-s.PreTrigger) + fn[i]
		}
	}
	// 5. anti-alias filter, decimation, ADC, window
	if s.AntiAlias.Order > 0 {
		rec.aa = butterLowPass(s.AntiAlias.Order, s.AntiAlias.CornerHz, fso)
		rec.aa.apply(resp, true)
		if force != nil {
			rec.aa.apply(force, true)
		}
	}
	y := decimate(resp, r)
	step := adc(y, s.ADC.Bits, s.ADC.FullScale)
	rec.quantVar = step * step / 12
	var fy []float64
	if force != nil {
		fy = decimate(force, r)
		ffs := s.ADC.ForceFullScale
		if ffs == 0 {
			ffs = 4 * math.Max(s.Hammer.PeakN, s.Hammer.PeakN*s.Hammer.SecondScale)
		}
		adc(fy, s.ADC.Bits, ffs)
	}
	meta := map[string]string{"source": "pipeline/synth/field seed " + strconv.FormatUint(s.Seed, 10)}
	for k, v := range s.Meta {
		meta[k] = v
	}
	if s.WindowTauS > 0 {
		for i := range y {
			y[i] *= math.Exp(-float64(i) / fs / s.WindowTauS)
		}
		meta["window_tau_s"] = strconv.FormatFloat(s.WindowTauS, 'g', -1, 64)
	}
	pr := &pipeline.Recording{Path: "field", Format: "csv", Meta: meta}
	if fy != nil {
		pr.Channels = append(pr.Channels, pipeline.Channel{Name: "force", Unit: "N", Role: pipeline.RoleForce, SampleRate: fs, Samples: fy})
	}
	pr.Channels = append(pr.Channels, pipeline.Channel{Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: fs, Samples: y, FullScale: s.ADC.FullScale})
	rec.Rec = pr

	// truth
	for i, m := range s.Modes {
		rec.Modes = append(rec.Modes, rec.truth(m, osc[i]))
	}
	return rec, nil
}

// truth returns the free decay of one mode from its integrated state at
// the end of the first contact. The decay of q is
// exp(-sigma t)(C1 cos wd t + C2 sin wd t); its acceleration has
// amplitude w^2 sqrt(C1^2 + C2^2) and phase -theta + arg(s^2),
// s = -sigma + i wd, theta = atan2(C2, C1); the filters then scale and
// shift it by their response at the damped frequency.
func (rec *Record) truth(m Mode, o *oscillator) Truth {
	w := o.w
	z := m.DampingRatio
	sigma := z * w
	wd := w * math.Sqrt(1-z*z)
	c1, c2 := o.endQ, (o.endV+sigma*o.endQ)/wd
	s := complex(-sigma, wd)
	amp := w * w * math.Hypot(c1, c2)
	ph := -math.Atan2(c2, c1) + cmplx.Phase(s*s)
	// a damped sinusoid e^(s t) through a filter comes out as H(s) e^(s t)
	// (plus the filter's own transient, which dies away)
	hf := rec.filterAt(s)
	amp *= cmplx.Abs(hf)
	ph += cmplx.Phase(hf)
	return Truth{
		FrequencyHz: m.FrequencyHz, DampingRatio: z, Nonlinear: m.CubicZeta > 0 || m.FrictionPerCycle > 0,
		OnsetS: o.endT, Amplitude: amp, Phase: math.Remainder(ph, 2*math.Pi),
	}
}

// filterAt is the product of the high-pass and anti-alias transfer
// functions at the complex frequency s (z = exp(s / fso)).
func (rec *Record) filterAt(s complex128) complex128 {
	z := cmplx.Exp(s / complex(rec.fso, 0))
	h := complex(1, 0)
	if rec.hp != nil {
		h *= rec.hp.at(z)
	}
	if rec.aa != nil {
		h *= rec.aa.at(z)
	}
	return h
}

// filterResponse is the product of the high-pass and anti-alias responses
// at f hertz (at the oversampled rate, where they run).
func (rec *Record) filterResponse(f float64) complex128 {
	h := complex(1, 0)
	if rec.hp != nil {
		h *= rec.hp.response(f, rec.fso)
	}
	if rec.aa != nil {
		h *= rec.aa.response(f, rec.fso)
	}
	return h
}

// NoisePSD returns the one-sided power spectral density of the recorded
// response noise at f hertz (0 < f < fs/2), before the window: the
// sensor noise through the high-pass and the anti-alias filter, folded
// by the decimation (every image f + k fs below the oversampled Nyquist
// frequency adds), plus the ADC's quantisation noise, step^2/12 spread
// evenly up to fs/2. Hum and drift are not noise (lines and a baseline).
func (rec *Record) NoisePSD(f float64) float64 {
	fs := rec.Spec.SampleRate
	n0 := rec.Spec.Sensor.NoiseDensity
	fc := rec.Spec.Sensor.PinkCornerHz
	var p float64
	for k := 0; k <= rec.Spec.Oversample; k++ {
		for _, fi := range []float64{float64(k)*fs + f, float64(k)*fs - f} {
			if fi <= 0 || fi >= rec.fso/2 || (k == 0 && fi != f) {
				continue
			}
			g := cmplx.Abs(rec.filterResponse(fi))
			p += n0 * n0 * (1 + fc/fi) * g * g
		}
	}
	return p + rec.quantVar/(fs/2)
}

// NoiseSDAt returns the standard deviation of white noise whose spectral
// density equals the recorded noise's at f: sqrt(PSD(f) fs/2). A lightly
// damped mode's Cramer-Rao bound in coloured noise is, to a good
// approximation, the white-noise bound at this level (the mode's
// information sits in a band of a few half-power bandwidths around f).
func (rec *Record) NoiseSDAt(f float64) float64 {
	return math.Sqrt(rec.NoisePSD(f) * rec.Spec.SampleRate / 2)
}

// Response returns the recorded response channel.
func (rec *Record) Response() *pipeline.Channel {
	return &rec.Rec.Channels[len(rec.Rec.Channels)-1]
}

// Force returns the recorded force channel, nil without one.
func (rec *Record) Force() *pipeline.Channel {
	if len(rec.Rec.Channels) < 2 {
		return nil
	}
	return &rec.Rec.Channels[0]
}

func decimate(x []float64, r int) []float64 {
	out := make([]float64, len(x)/r)
	for i := range out {
		out[i] = x[i*r]
	}
	return out
}

// adc clips x to +/-full (when > 0) and rounds to the step of a bits-bit
// converter spanning it (when bits > 0); it returns the step (0 when not
// quantised). Codes run from -2^(bits-1) to 2^(bits-1)-1, as in a
// two's-complement converter.
func adc(x []float64, bits int, full float64) float64 {
	step := 0.0
	if bits > 0 && full > 0 {
		step = 2 * full / math.Ldexp(1, bits)
	}
	for i, v := range x {
		if full > 0 {
			v = math.Max(-full, math.Min(full, v))
		}
		if step > 0 {
			c := math.Round(v / step)
			c = math.Max(-math.Ldexp(1, bits-1), math.Min(math.Ldexp(1, bits-1)-1, c))
			v = c * step
		}
		x[i] = v
	}
	return step
}

func (s Spec) withDefaults() Spec {
	if s.Oversample == 0 {
		s.Oversample = 16
	}
	if s.AntiAlias.Order == 0 {
		s.AntiAlias.Order = 6
	}
	if s.AntiAlias.CornerHz == 0 {
		s.AntiAlias.CornerHz = 0.4 * s.SampleRate
	}
	if s.Drift.TauS == 0 {
		s.Drift.TauS = s.Duration
	}
	if s.Hum.FrequencyHz == 0 {
		s.Hum.Amplitudes = nil
	}
	return s
}

func (s Spec) validate() error {
	bad := func(v float64) bool { return math.IsNaN(v) || math.IsInf(v, 0) }
	switch {
	case !(s.SampleRate > 0) || bad(s.SampleRate):
		return fmt.Errorf("field: sample rate %g Hz is not a positive number", s.SampleRate)
	case !(s.Duration > 0) || bad(s.Duration) || s.Duration*s.SampleRate > 1<<24:
		return fmt.Errorf("field: duration %g s at %g Hz: need a positive length of at most 2^24 samples", s.Duration, s.SampleRate)
	case s.PreTrigger < 0 || s.PreTrigger >= s.Duration:
		return fmt.Errorf("field: pre-trigger %g s must lie inside the %g s record", s.PreTrigger, s.Duration)
	case s.Oversample < 1 || s.Oversample > 64:
		return fmt.Errorf("field: oversampling %d: use 1 to 64 (0 = 16)", s.Oversample)
	case !(s.Hammer.ContactS > 0) || !(s.Hammer.PeakN > 0):
		return errors.New("field: the hammer needs a positive peak force and contact time")
	case s.ADC.Bits < 0 || s.ADC.Bits > 32 || (s.ADC.Bits > 0 && s.ADC.FullScale <= 0):
		return fmt.Errorf("field: ADC of %d bits needs a positive full scale", s.ADC.Bits)
	case s.AntiAlias.Order > 16 || !(s.AntiAlias.CornerHz > 0) || s.AntiAlias.CornerHz >= s.SampleRate*float64(s.Oversample)/2:
		return fmt.Errorf("field: anti-alias filter of order %d at %g Hz: need order <= 16 and a corner below half the oversampled rate", s.AntiAlias.Order, s.AntiAlias.CornerHz)
	case s.Sensor.NoiseDensity < 0 || s.Sensor.PinkCornerHz < 0 || s.Sensor.HighpassHz < 0 || s.WindowTauS < 0 || s.ForceNoiseDensity < 0:
		return errors.New("field: noise densities, corners and the window's tau must not be negative")
	case s.PreviousHitS < 0 || s.PreviousHitS > 60:
		return fmt.Errorf("field: previous hit %g s before: use 0 to 60 s", s.PreviousHitS)
	case s.Drift.TauS <= 0:
		return fmt.Errorf("field: drift time constant %g s must be positive", s.Drift.TauS)
	}
	fso := s.SampleRate * float64(s.Oversample)
	for i, m := range s.Modes {
		if !(m.FrequencyHz > 0) || m.FrequencyHz >= fso/8 || !(m.DampingRatio >= 0 && m.DampingRatio < 1) || bad(m.Amplitude) ||
			m.CubicZeta < 0 || m.FrictionPerCycle < 0 {
			return fmt.Errorf("field: mode %d (%g Hz, zeta %g): need 0 < f < fs*oversample/8 and 0 <= zeta < 1", i, m.FrequencyHz, m.DampingRatio)
		}
	}
	if rt := s.Rattle; rt != nil && (!(rt.FrequencyHz > 0) || rt.FrequencyHz >= fso/8 || !(rt.DampingRatio > 0 && rt.DampingRatio < 1)) {
		return fmt.Errorf("field: rattle at %g Hz, zeta %g", rt.FrequencyHz, rt.DampingRatio)
	}
	return nil
}
