package synth

import (
	"math"
	"math/rand/v2"
)

// Mode is one damped mode of a synthetic hit.
type Mode struct {
	FrequencyHz  float64 // undamped natural frequency f_n
	DampingRatio float64 // fraction of critical, 0 < zeta < 1
	Amplitude    float64 // initial amplitude of the envelope
	Phase        float64 // radians; 0 gives a sine that starts at zero
}

// Hit describes a synthetic hit record.
type Hit struct {
	SampleRate float64 // samples per second
	Duration   float64 // seconds of record
	PreTrigger float64 // seconds of quiet record before the hit
	Modes      []Mode
	// NoiseSD is the standard deviation of the white Gaussian noise added
	// to the response. Use NoiseForSNR to set it from a peak SNR.
	NoiseSD float64
	Seed    uint64

	// Force pulse: a half-sine of PulseWidth seconds and PulsePeak height
	// at the trigger. Zero width means no force channel.
	PulseWidth float64
	PulsePeak  float64
	// DoubleHitDelay > 0 adds a second pulse (a hammer bounce) that much
	// later, with DoubleHitScale times the first pulse's height, and a
	// second response to it.
	DoubleHitDelay float64
	DoubleHitScale float64
	// ClipLevel > 0 saturates the response at +/- ClipLevel.
	ClipLevel float64
	// Friction > 0 adds a Coulomb-like linear envelope decay: the first
	// mode's envelope falls by Friction (amplitude units per second)
	// instead of exponentially.
	Friction float64
	// RingingBefore > 0 makes the structure ring at the first mode's
	// frequency with this amplitude from the start of the record (a
	// pre-trigger fault).
	RingingBefore float64
}

// NoiseForSNR returns the noise standard deviation that gives a peak
// signal-to-noise ratio of snrDB, defined as 20 log10(peak/sd) with peak the
// sum of the mode amplitudes.
func NoiseForSNR(modes []Mode, snrDB float64) float64 {
	peak := 0.0
	for _, m := range modes {
		peak += math.Abs(m.Amplitude)
	}
	return peak / math.Pow(10, snrDB/20)
}

// Samples returns the number of samples of the record.
func (h *Hit) Samples() int { return int(math.Round(h.Duration * h.SampleRate)) }

// Response returns the response channel of the hit.
func (h *Hit) Response() []float64 {
	n := h.Samples()
	x := make([]float64, n)
	t0 := h.PreTrigger
	h.addDecay(x, t0, 1)
	if h.DoubleHitDelay > 0 {
		h.addDecay(x, t0+h.DoubleHitDelay, h.DoubleHitScale)
	}
	if h.RingingBefore > 0 && len(h.Modes) > 0 {
		w := 2 * math.Pi * h.Modes[0].FrequencyHz
		for i := range x {
			t := float64(i) / h.SampleRate
			x[i] += h.RingingBefore * math.Sin(w*t+0.3)
		}
	}
	if h.NoiseSD > 0 {
		r := rand.New(rand.NewPCG(h.Seed, 0x5eed))
		for i := range x {
			x[i] += h.NoiseSD * r.NormFloat64()
		}
	}
	if h.ClipLevel > 0 {
		for i, v := range x {
			x[i] = math.Max(-h.ClipLevel, math.Min(h.ClipLevel, v))
		}
	}
	return x
}

func (h *Hit) addDecay(x []float64, t0, scale float64) {
	for k, m := range h.Modes {
		wn := 2 * math.Pi * m.FrequencyHz
		wd := wn * math.Sqrt(1-m.DampingRatio*m.DampingRatio)
		sigma := m.DampingRatio * wn
		for i := range x {
			t := float64(i)/h.SampleRate - t0
			if t < 0 {
				continue
			}
			env := m.Amplitude * scale * math.Exp(-sigma*t)
			if k == 0 && h.Friction > 0 {
				env = math.Max(0, m.Amplitude*scale-h.Friction*t)
			}
			x[i] += env * math.Sin(wd*t+m.Phase)
		}
	}
}

// Force returns the force channel (nil when PulseWidth is 0). The noise on
// the force channel is a thousandth of the pulse height.
func (h *Hit) Force() []float64 {
	if h.PulseWidth <= 0 {
		return nil
	}
	n := h.Samples()
	f := make([]float64, n)
	pulse := func(t0, peak float64) {
		for i := range f {
			t := float64(i)/h.SampleRate - t0
			if t >= 0 && t <= h.PulseWidth {
				f[i] += peak * math.Sin(math.Pi*t/h.PulseWidth)
			}
		}
	}
	pulse(h.PreTrigger, h.PulsePeak)
	if h.DoubleHitDelay > 0 {
		pulse(h.PreTrigger+h.DoubleHitDelay, h.PulsePeak*h.DoubleHitScale)
	}
	r := rand.New(rand.NewPCG(h.Seed, 0xf0ce))
	for i := range f {
		f[i] += 1e-3 * h.PulsePeak * r.NormFloat64()
	}
	return f
}
