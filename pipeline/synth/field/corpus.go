package field

import (
	"bytes"
	"fmt"

	"github.com/ringlog/ringlog/pipeline/check"
	"github.com/ringlog/ringlog/pipeline/read"
)

// Case is one file of the committed corpus (testdata/field): a recording
// with one effect of real instruments or structures, and the verdict the
// analysis must give it.
type Case struct {
	Name   string // file name without extension, e.g. "pink-noise-clean"
	Effect string // the effect, in a few words
	Item   int    // item of issue 8 that asks for the behaviour
	// Clean: the hit must come out accepted with no reason at all and
	// every mode within its interval of the truth. Otherwise Want is the
	// reason code the spoiled hit must raise.
	Clean bool
	Want  string
	About string // how the file was made and what the effect does to it
	Spec  Spec
	// FMinZero analyses with the lower band edge set to 0 Hz explicitly
	// (fmin_hz = 0).
	FMinZero bool
	// Strict: a spoiled hit must raise Want and nothing else (the effect
	// spoils one thing; anything more is a false alarm).
	Strict bool
	// NoSplit: the first mode must not come out as several close poles
	// (friction and amplitude-dependent damping are one mode).
	NoSplit bool
	// HighpassHz is the AC-coupling corner the analysis is told about
	// (highpass_hz); 0 when the case does not configure one.
	HighpassHz float64
}

// File returns the case's file name.
func (c Case) File() string { return c.Name + ".csv" }

// Encode returns the CSV file of a generated recording: comma-delimited,
// 7 significant digits, a "# sample_rate:" line and the metadata, as
// read.WriteCSV writes it.
func Encode(rec *Record) ([]byte, error) {
	var b bytes.Buffer
	if err := read.WriteCSV(&b, rec.Rec, read.WriteOptions{Digits: 7}); err != nil {
		return nil, err
	}
	return b.Bytes(), nil
}

// Base parameters of the corpus (see testdata/field/README.md).
const (
	baseRate     = 2560.0 // Hz: a 1 kHz analysis band, as recorders pair them
	baseDuration = 1.2    // s
	basePre      = 0.1    // s of record before the strike
)

// baseModes: two modes of a bracket, 95 Hz at 1.2 % and 410 Hz at 0.8 %.
func baseModes() []Mode {
	return []Mode{
		{FrequencyHz: 95, DampingRatio: 0.012, Amplitude: 15},
		{FrequencyHz: 410, DampingRatio: 0.008, Amplitude: -8},
	}
}

// base is the ordinary hit every case varies: a 0.2 kg hammer on a
// medium tip (1 ms contact, 250 N), an accelerometer with a white noise
// floor of 1e-3 m/s^2/sqrt(Hz) (about 100 micro-g/sqrt(Hz)), a 24-bit ADC
// with a 50 m/s^2 range, the default anti-alias filter (6th-order
// Butterworth at 0.4 fs) and a force channel with 5e-3 N/sqrt(Hz).
func base(seed uint64) Spec {
	return Spec{
		SampleRate: baseRate, Duration: baseDuration, PreTrigger: basePre, Seed: seed,
		Modes:             baseModes(),
		Hammer:            Hammer{PeakN: 250, ContactS: ContactTime(0.2, 2e6)},
		Sensor:            Sensor{NoiseDensity: 1e-3},
		ADC:               ADC{Bits: 24, FullScale: 50},
		ForceNoiseDensity: 5e-3,
	}
}

// Corpus returns the committed cases, clean and spoiled per effect.
func Corpus() []Case {
	var cs []Case
	add := func(c Case) { cs = append(cs, c) }

	s := base(101)
	add(Case{Name: "base-clean", Effect: "none (reference hit)", Clean: true, Spec: s,
		About: "the base hit: two modes, white sensor noise, 24-bit ADC"})

	s = base(102)
	s.Sensor = Sensor{NoiseDensity: 1e-3, PinkCornerHz: 200}
	add(Case{Name: "pink-noise-clean", Effect: "1/f sensor noise", Item: 2, Clean: true, Spec: s,
		About: "1/f noise below 200 Hz (the noise density at 95 Hz is 1.8 times the white floor, at 5 Hz 6.4 times)"})
	s = base(103)
	s.Sensor = Sensor{NoiseDensity: 3e-3, PinkCornerHz: 300}
	s.Modes = append(s.Modes, Mode{FrequencyHz: 23, DampingRatio: 0.05, Amplitude: 0.4})
	add(Case{Name: "pink-noise-spoiled", Strict: true, Effect: "1/f sensor noise", Item: 2, Want: check.CodeShortDecay, Spec: s,
		About: "strong 1/f noise and a weak, heavily damped 23 Hz mode that sinks into it within about two cycles: that mode must be dropped as too short; the others stay"})

	s = base(104)
	s.Hum = Hum{FrequencyHz: 50.02, Amplitudes: []float64{0.2, 0.05, 0.08, 0.02, 0.03}}
	s.Modes[0].FrequencyHz = 97
	add(Case{Name: "hum-50-clean", Effect: "mains hum 50 Hz", Item: 1, Clean: true, Spec: s,
		About: "mains hum at 50.02 Hz with four harmonics (0.2 m/s^2 fundamental, 6 times the noise sd), the first mode at 97 Hz, 3 Hz from the 100 Hz harmonic"})
	s = base(105)
	s.Hum = Hum{FrequencyHz: 59.97, Amplitudes: []float64{0.3, 0.04, 0.1}}
	s.Modes[1].FrequencyHz = 425
	add(Case{Name: "hum-60-clean", Effect: "mains hum 60 Hz", Item: 1, Clean: true, Spec: s,
		About: "mains hum at 59.97 Hz with two harmonics, the second mode at 425 Hz"})

	s = base(106)
	s.Drift = Drift{Offset: 0.4, Total: 1.2}
	add(Case{Name: "drift-clean", Effect: "baseline offset and drift", Item: 3, Clean: true, Spec: s,
		About: "DC-coupled amplifier: offset 0.4 m/s^2, thermal settling by 1.2 m/s^2 over the record (3.5 % of the 34.6 m/s^2 peak)"})
	s = base(107)
	s.Drift = Drift{Offset: 5, Total: 40, TauS: 0.5}
	s.ADC.FullScale = 30
	add(Case{Name: "drift-spoiled", Effect: "baseline offset and drift", Item: 3, Want: check.CodeClipped, Spec: s,
		About: "a drifting amplifier runs into the ADC's 30 m/s^2 range during the decay: the hit is clipped"})

	s = base(108)
	s.SampleRate, s.Duration, s.PreTrigger = 256, 12, 0.5
	s.Modes = []Mode{{FrequencyHz: 2, DampingRatio: 0.02, Amplitude: 2}, {FrequencyHz: 41, DampingRatio: 0.01, Amplitude: 3}}
	s.Hammer = Hammer{PeakN: 200, ContactS: 0.01}
	s.Sensor = Sensor{NoiseDensity: 1e-3, HighpassHz: 0.5}
	add(Case{Name: "ac-coupling-clean", Effect: "AC coupling (high-pass 0.5 Hz)", Item: 4, Clean: true, HighpassHz: 0.5, Spec: s,
		About: "a slow structure recorded at 256 Hz for 12 s through a 0.5 Hz first-order AC coupling; the lowest mode at 2 Hz is 4 times the corner"})

	s = base(109)
	s.SampleRate, s.Duration, s.PreTrigger = 64, 60, 2
	s.Modes = []Mode{{FrequencyHz: 0.5, DampingRatio: 0.01, Amplitude: 0.5}, {FrequencyHz: 6.5, DampingRatio: 0.01, Amplitude: 1}}
	s.Hammer = Hammer{PeakN: 300, ContactS: 0.02}
	s.Sensor = Sensor{NoiseDensity: 1e-3}
	add(Case{Name: "half-hertz-clean", Effect: "a 0.5 Hz mode, fmin_hz = 0", Item: 4, Clean: true, FMinZero: true, Spec: s,
		About: "a 0.5 Hz mode in a 60 s record at 64 Hz (a soft mount), analysed with fmin_hz = 0, and a 6.5 Hz mode"})

	s = base(110)
	s.Hammer = Hammer{PeakN: 400, ContactS: ContactTime(0.2, 2e8)}
	s.AntiAlias = AntiAlias{Order: 8, CornerHz: 0.45 * baseRate}
	s.ADC.FullScale = 100
	add(Case{Name: "aa-ringing-clean", Effect: "anti-alias ringing on a short force pulse", Item: 6, Clean: true, Spec: s,
		About: "a steel tip (0.1 ms contact, shorter than a sample) through an 8th-order Butterworth at 0.45 fs: the recorded force pulse rings with negative lobes, one strike; a 100 m/s^2 range, since the sharp start of the response overshoots 45 m/s^2"})
	s = base(111)
	s.Hammer.SecondDelayS, s.Hammer.SecondScale = 0.012, 0.4
	add(Case{Name: "double-strike-spoiled", Effect: "hammer bounce", Item: 6, Want: check.CodeDoubleStrike, Spec: s,
		About: "the hammer bounces and strikes again 12 ms later at 40 % of the first force"})

	s = base(112)
	s.WindowTauS = 0.25
	add(Case{Name: "exp-window-clean", Effect: "recorder exponential window", Item: 5, Clean: true, Spec: s,
		About: "the recorder applied exp(-t/0.25 s) from the first sample and wrote window_tau_s: 0.25"})

	s = base(113)
	s.PreTrigger = 0.4
	s.Sensor = Sensor{NoiseDensity: 1e-3, PinkCornerHz: 50}
	add(Case{Name: "pre-trigger-clean", Effect: "pre-trigger segment", Item: 1, Clean: true, Spec: s,
		About: "0.4 s of pre-trigger record holding sensor noise with 1/f below 50 Hz"})
	s = base(114)
	s.PreviousHitS = 0.3
	add(Case{Name: "pre-trigger-spoiled", Strict: true, Effect: "pre-trigger segment", Item: 1, Want: check.CodePreRinging, Spec: s,
		About: "the previous strike came 0.3 s before this one: the structure still rings through the pre-trigger (95 Hz mode at about 2 m/s^2)"})

	s = base(115)
	s.Sensor = Sensor{NoiseDensity: 2e-6}
	s.ADC = ADC{Bits: 16, FullScale: 500}
	add(Case{Name: "quantisation-clean", Effect: "16-bit ADC, small signal", Item: 7, Clean: true, Spec: s,
		About: "a 16-bit ADC with a 500 m/s^2 range: the 15 m/s^2 peak spans about 1000 steps of 0.0153 m/s^2, the sensor noise is far below the step"})
	s = base(116)
	s.Sensor = Sensor{NoiseDensity: 2e-6}
	s.ADC = ADC{Bits: 16, FullScale: 5000}
	for i := range s.Modes {
		s.Modes[i].Amplitude /= 50
	}
	s.Hammer.PeakN /= 50
	add(Case{Name: "quantisation-spoiled", Strict: true, Effect: "16-bit ADC, small signal", Item: 7, Want: check.CodeShortDecay, Spec: s,
		About: "a tap 50 times lighter on a 5000 m/s^2 range (step 0.153 m/s^2, quantisation noise 0.044 m/s^2 rms): the modes start at about 2 and 0.9 steps; the 410 Hz mode's Cramer-Rao floor 2/sqrt(ENR) is about 12 %, above the 10 % asked for, so it must be dropped as too short"})

	s = base(117)
	s.Duration = 2
	s.Hammer.PeakN = 100
	s.Modes = PlateModes(Plate{LengthM: 0.76, WidthM: 0.40, ThicknessM: 0.005, Drive: [2]float64{0.64, 0.10}, Response: [2]float64{0.64, 0.10}},
		s.Hammer.Impulse(), 1000, 12, 0.005)
	s.ADC.FullScale = 1000
	add(Case{Name: "plate-modes-clean", Effect: "a dozen modes in band", Item: 8, Clean: true, Spec: s,
		About: "a 760 x 400 x 5 mm simply supported steel plate, 2 s record: its 12 modes from 98 to 839 Hz, damping 0.5 %, at least 6 % apart (6 half-power bandwidths); hammer and accelerometer side by side at (0.64 m, 0.10 m), off every nodal line"})
	s = base(118)
	s.Modes = append(s.Modes, Mode{FrequencyHz: 96.5, DampingRatio: 0.012, Amplitude: 10})
	s.ADC.FullScale = 100
	add(Case{Name: "close-modes-spoiled", Strict: true, Effect: "two modes 1.5 Hz apart", Item: 8, Want: check.CodeBeatingModes, Spec: s,
		About: "a second mode 1.5 Hz above the first (a symmetric structure split by a small asymmetry): the two beat"})

	s = base(119)
	s.Modes[0].CubicZeta = 0.0006
	add(Case{Name: "cubic-damping-clean", Effect: "amplitude-dependent (cubic) damping", Item: 10, Clean: true, Spec: s,
		About: "cubic damping at the 95 Hz mode adding 0.06 % to its 1.2 % at the start of the decay: within what a hit resolves"})
	s = base(120)
	s.Modes[0].CubicZeta = 0.012
	add(Case{Name: "cubic-damping-spoiled", Strict: true, NoSplit: true, Effect: "amplitude-dependent (cubic) damping", Item: 10, Want: check.CodeAmplitudeDamping, Spec: s,
		About: "cubic damping doubling the 95 Hz mode's damping at the start of the decay (2.4 % falling to 1.2 %)"})
	s = base(121)
	s.Modes[0].DampingRatio = 0.002
	s.Modes[0].FrictionPerCycle = 0.025
	add(Case{Name: "friction-spoiled", Strict: true, NoSplit: true, Effect: "Coulomb friction in a joint", Item: 10, Want: check.CodeFrictionDecay, Spec: s,
		About: "dry friction at the 95 Hz mode: its envelope falls by 2.5 % of the start every cycle, a straight line, plus 0.2 % viscous damping"})

	s = base(122)
	s.Rattle = &Rattle{TimeS: 0.35, Amplitude: 3, FrequencyHz: 760, DampingRatio: 0.03}
	add(Case{Name: "rattle-spoiled", Strict: true, Effect: "sensor rattle mid-decay", Item: 9, Want: check.CodeTransient, Spec: s,
		About: "a loose sensor knocks 0.35 s into the decay: a 760 Hz, 3 m/s^2 burst dying in about 20 ms"})

	s = base(123)
	s.ADC.FullScale = 40
	add(Case{Name: "clipping-clean", Effect: "ADC range", Clean: true, Spec: s,
		About: "the base hit on a 40 m/s^2 range: its 34.6 m/s^2 peak (the first swing, with the pulse) uses 86 % of it"})
	s = base(124)
	s.ADC.FullScale = 20
	add(Case{Name: "clipping-spoiled", Effect: "ADC range", Want: check.CodeClipped, Spec: s,
		About: "the base hit on a 20 m/s^2 range: the first swings clip"})
	for i := range cs {
		if cs[i].Spec.Meta == nil {
			cs[i].Spec.Meta = map[string]string{}
		}
		cs[i].Spec.Meta["case"] = cs[i].Name
	}
	return cs
}

// Lookup returns the corpus case of the given name.
func Lookup(name string) (Case, error) {
	for _, c := range Corpus() {
		if c.Name == name {
			return c, nil
		}
	}
	return Case{}, fmt.Errorf("field: no corpus case %q", name)
}
