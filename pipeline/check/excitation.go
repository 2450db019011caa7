package check

import (
	"fmt"
	"math"
	"math/cmplx"

	"github.com/ringlog/ringlog/pipeline"
)

// Excitation drops a mode whose frequency lies where the force spectrum
// has fallen more than ExcitationDropDB below its level at 0 Hz: the
// hammer tip was too soft to excite it.
//
// Drop rather than flag: common impact-testing practice limits the usable
// band of a hit to where the force spectrum stays within 10-20 dB of its
// low-frequency level. Beyond it the frequency response divides by a
// near-zero force (the half-power estimate is then unreliable) and the
// response that remains is as likely to come from the hammer's own ringing
// or the tip's bounce as from the blow; a mode that matters should be
// measured again with a harder tip rather than kept with a warning.
// Without a force channel the rule is silent.
//
// The spectrum is the magnitude of the discrete-time Fourier transform of
// the unwindowed force pulse (baseline removed, cut out with one pulse
// width of quiet force on each side), evaluated directly at the mode
// frequencies: the same values as an FFT zero-padded without limit, for a
// handful of frequencies at the cost of a few hundred multiplications.
type Excitation struct{}

// Code returns CodeUnderExcited.
func (Excitation) Code() string { return CodeUnderExcited }

// Info describes the rule's reason code.
func (Excitation) Info() []RuleInfo {
	return []RuleInfo{{
		Code:       CodeUnderExcited,
		Severity:   pipeline.SeverityDrop,
		Summary:    "the force spectrum at the mode's frequency is far below its low-frequency level: the hammer tip did not excite the mode",
		Thresholds: []string{"excitation_drop_db"},
	}}
}

// Check compares the force spectrum at every mode with its 0 Hz level.
func (Excitation) Check(in Input, th Thresholds) []pipeline.Reason {
	ms := modes(in)
	if len(ms) == 0 {
		return nil
	}
	fp, ok := in.forcePulseOf(th)
	if !ok {
		return nil
	}
	seg := fp.segment(th)
	width := float64(fp.end-fp.start+1) / fp.fs
	var out []pipeline.Reason
	for i, m := range ms {
		f := m.FrequencyHz
		if !finite(f) || f <= 0 || f >= fp.fs/2 {
			continue
		}
		drop := spectrumDropDB(seg, fp.fs, f)
		if !(drop > th.ExcitationDropDB) {
			continue
		}
		out = append(out, pipeline.Reason{
			Code:     CodeUnderExcited,
			Severity: pipeline.SeverityDrop,
			Mode:     pipeline.ModeRef(i),
			Message: fmt.Sprintf("%s: the force spectrum there is %.1f dB below its level at 0 Hz (limit %.0f dB); "+
				"the hammer pulse (%.2f ms wide) did not excite this mode: use a harder tip to measure it",
				modeName(m), drop, th.ExcitationDropDB, 1000*width),
		})
	}
	return out
}

// segment cuts the main pulse out of the force with one pulse width of
// quiet force on each side, stopping short of any other pulse.
func (fp forcePulse) segment(th Thresholds) []float64 {
	w := fp.end - fp.start + 1
	rise := math.Max(th.StrikeRiseFraction*fp.height, riseNoiseSD*fp.sd)
	lo, hi := max(0, fp.start-w), min(len(fp.g)-1, fp.end+w)
	for i := fp.end + 1; i <= hi; i++ {
		if fp.g[i] > rise {
			hi = i - 1
			break
		}
	}
	for i := fp.start - 1; i >= lo; i-- {
		if fp.g[i] > rise {
			lo = i + 1
			break
		}
	}
	return fp.g[lo : hi+1]
}

// spectrumDropDB returns how far, in dB, the magnitude of the
// discrete-time Fourier transform of g at f lies below its magnitude at
// 0 Hz. +Inf when the spectrum vanishes at f; NaN when g has no 0 Hz
// content.
func spectrumDropDB(g []float64, fs, f float64) float64 {
	var dc float64
	var at complex128
	w := -2 * math.Pi * f / fs
	for n, v := range g {
		dc += v
		s, c := math.Sincos(w * float64(n))
		at += complex(v*c, v*s)
	}
	a := cmplx.Abs(at)
	switch {
	case !(math.Abs(dc) > 0):
		return math.NaN()
	case a == 0:
		return math.Inf(1)
	}
	return 20 * math.Log10(math.Abs(dc)/a)
}
