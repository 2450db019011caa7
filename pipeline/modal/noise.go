package modal

import (
	"math"
	"slices"

	"github.com/mjibson/go-dsp/spectral"
)

// Noise sources of a NoiseModel, as in Decay.NoiseSource.
const (
	NoiseFromPreTrigger = "pre-trigger"
	NoiseFromRecordEnd  = "record end"
	NoiseFromResidual   = "residual of the fitted model"
	NoiseWhite          = "white (record too short for a spectrum)"
)

// NoiseModel is the noise of a record as a spectrum: sensors and charge
// amplifiers have 1/f noise at low frequencies and mains hum puts lines at
// 50 or 60 Hz and harmonics, so one RMS value overstates the noise at some
// modes and understates it at others. The spectrum is Welch's average of
// Hann-windowed, half-overlapping periodograms (go-dsp's spectral.Pwelch)
// of a stretch of record that holds noise only.
type NoiseModel struct {
	fs    float64
	psd   []float64 // one-sided power spectral density, units^2/Hz, line-free (running median)
	binHz float64
	// White is the full-rate standard deviation of the noise (its RMS).
	White float64
	// Floor is the quantisation floor step/sqrt(12) (0 when no ADC step
	// was found): no noise level of the model is below it.
	Floor float64
	// Step is the ADC step found in the data, 0 when none.
	Step float64
	// Source says where the spectrum came from.
	Source string
}

// welchMinSamples: fewest noise samples a spectrum is made from (eight
// segment lengths of 32).
const welchMinSamples = 256

// newNoiseModel makes the model from noise-only samples v (offset not yet
// removed), with white the full-rate standard deviation found by the robust
// estimate and step the ADC step (0: none).
func newNoiseModel(v []float64, fs, white, step float64, source string) *NoiseModel {
	nm := &NoiseModel{fs: fs, White: white, Step: step, Source: NoiseWhite}
	if step > 0 {
		nm.Floor = step / math.Sqrt(12)
		nm.White = math.Max(nm.White, nm.Floor)
	}
	if len(v) < welchMinSamples || !(white > 0) {
		return nm
	}
	// at most 64 k samples: enough for a smooth spectrum, bounded cost
	if len(v) > 1<<16 {
		v = v[len(v)-1<<16:]
	}
	// at least 8 segment lengths of data (about 15 half-overlapping
	// segments), so that the spectrum's scatter stays well inside the
	// factor of two that Coloured tests
	nfft := 32
	for nfft*2 <= len(v)/8 && nfft < 4096 {
		nfft *= 2
	}
	buf := make([]float64, len(v))
	med, _ := robustSD(v)
	for i, u := range v {
		buf[i] = u - med
	}
	pxx, _ := spectral.Pwelch(buf, fs, &spectral.PwelchOptions{NFFT: nfft, Noverlap: nfft / 2})
	if len(pxx) < 8 {
		return nm
	}
	// a running median over 9 bins keeps the broad-band shape and drops
	// narrow lines (hum, a tone), which the fit models as lines. The median
	// of averaged periodograms is biased low by a factor that depends on
	// the number of segments; the level is set back by the mean ratio of
	// the periodogram to its running median over the bins that hold no
	// line (ratio under 5; an average of 8 or more periodograms of noise
	// almost never reaches it). Scaling to the samples' variance instead
	// put the power of the lines back into every bin: beside strong hum
	// (hum-60-clean of the field corpus) the noise at the 95 Hz mode came
	// out 14 times too high, its interval 16 times the bound.
	psd := make([]float64, len(pxx))
	win := make([]float64, 0, 9)
	for k := range pxx {
		win = append(win[:0], pxx[max(1, k-4):min(len(pxx), k+5)]...)
		slices.Sort(win)
		psd[k] = win[len(win)/2]
	}
	binHz := fs / float64(nfft)
	var sum float64
	var cnt int
	for k := 1; k < len(psd); k++ {
		if r := pxx[k] / psd[k]; psd[k] > 0 && r < 5 {
			sum += r
			cnt++
		}
	}
	if cnt == 0 || !(sum > 0) {
		return nm
	}
	scale := sum / float64(cnt)
	for k := range psd {
		psd[k] *= scale
	}
	nm.psd, nm.binHz, nm.Source = psd, binHz, source
	if !nm.Coloured() {
		// white within the scatter of the estimate: the robust level is
		// the better estimate at every frequency
		nm.psd = nil
		nm.Source = source + ", white"
	}
	return nm
}

// SDAt returns the white-equivalent standard deviation of the noise at f
// hertz: the full-rate standard deviation that white noise with the
// model's spectral density at f would have, sqrt(S(f) fs/2). A mode is
// judged against it (its SNR, its decay energy over the noise, its
// interval). Never below the quantisation floor.
func (nm *NoiseModel) SDAt(f float64) float64 {
	if nm == nil {
		return 0
	}
	if nm.psd == nil {
		return nm.White
	}
	k := int(math.Round(f / nm.binHz))
	k = max(1, min(k, len(nm.psd)-2))
	return math.Max(math.Sqrt(nm.psd[k]*nm.fs/2), nm.Floor)
}

// BandSD returns the standard deviation of the noise in the band lo..hi
// hertz (the square root of the spectral density integrated over it), the
// level a band-isolated signal sinks into. Never below the quantisation
// floor's share of that band.
func (nm *NoiseModel) BandSD(lo, hi float64) float64 {
	if nm == nil {
		return 0
	}
	lo, hi = math.Max(lo, 0), math.Min(hi, nm.fs/2)
	if !(hi > lo) {
		return 0
	}
	floorVar := nm.Floor * nm.Floor * 2 * (hi - lo) / nm.fs
	if nm.psd == nil {
		return math.Sqrt(math.Max(nm.White*nm.White*2*(hi-lo)/nm.fs, floorVar))
	}
	var v float64
	for k := range nm.psd {
		f0, f1 := (float64(k)-0.5)*nm.binHz, (float64(k)+0.5)*nm.binHz
		if k == 0 {
			f0 = 0
		}
		a, b := math.Max(f0, lo), math.Min(f1, hi)
		if b > a {
			s := nm.psd[k]
			if k == 0 && len(nm.psd) > 1 {
				s = nm.psd[1] // bin 0 holds the removed offset
			}
			v += s * (b - a)
		}
	}
	return math.Sqrt(math.Max(v, floorVar))
}

// Coloured reports whether the spectrum departs from white noise by more
// than a factor of two in density anywhere below 0.45 fs.
func (nm *NoiseModel) Coloured() bool {
	if nm == nil || nm.psd == nil {
		return false
	}
	w := nm.White * nm.White * 2 / nm.fs
	for k := 2; k < len(nm.psd) && float64(k)*nm.binHz < 0.45*nm.fs; k++ {
		if r := nm.psd[k] / w; r > 2 || r < 0.5 {
			return true
		}
	}
	return false
}

// adcStep returns the quantisation step of x: the smallest spacing between
// distinct values when (nearly) every sample lies on the grid of that
// spacing, 0 when the samples are not on a grid (float data, or a step too
// fine to matter). About 4096 evenly spaced samples are examined.
func adcStep(x []float64) float64 {
	step := max(1, len(x)/4096)
	s := make([]float64, 0, len(x)/step+1)
	for i := 0; i < len(x); i += step {
		s = append(s, x[i])
	}
	slices.Sort(s)
	s = slices.Compact(s)
	if len(s) < 3 {
		return 0
	}
	span := s[len(s)-1] - s[0]
	d := math.Inf(1)
	for i := 1; i < len(s); i++ {
		if g := s[i] - s[i-1]; g > 1e-12*span && g < d {
			d = g
		}
	}
	// a grid coarser than 2^-20 of the span matters against the noise;
	// finer ones are float data or 24-bit converters
	if math.IsInf(d, 1) || d < span*0x1p-20 {
		return 0
	}
	// the smallest gap is itself rounded (a text file keeps 6 or 7
	// digits): refine the step by least squares over the grid indices,
	// nearest gaps first so that the index is never off by one
	for _, lim := range []float64{16, 256, math.Inf(1)} {
		var sq, sv float64
		for _, v := range s {
			if q := math.Round((v - s[0]) / d); q <= lim {
				sq += q * q
				sv += q * (v - s[0])
			}
		}
		if sq > 0 {
			d = sv / sq
		}
	}
	for _, v := range s {
		q := (v - s[0]) / d
		if math.Abs(q-math.Round(q)) > 0.05 {
			return 0
		}
	}
	return d
}

// noiseModel builds the noise spectrum from the pre-trigger part where
// there is one, else from the record's end beyond the decay; else it is
// white at the robust level (and the fit's residual may replace it, see
// residualNoise).
func (a *analysis) noiseModel() *NoiseModel {
	if a.hit.preEnd >= welchMinSamples {
		return newNoiseModel(a.x[:a.hit.preEnd], a.fs, a.noise, a.step, NoiseFromPreTrigger)
	}
	if s := a.hit.onset + a.spanN; a.hit.stop-s >= welchMinSamples {
		return newNoiseModel(a.x[s:a.hit.stop], a.fs, a.noise, a.step, NoiseFromRecordEnd)
	}
	return newNoiseModel(nil, a.fs, a.noise, a.step, NoiseWhite)
}

// residualNoise replaces a white model by the spectrum of the fit's
// residual when the record has neither a pre-trigger nor a quiet end.
func (a *analysis) residualNoise(fit *Fit, y []float64) {
	if a.nm.Source != NoiseWhite || len(y) < 4*welchMinSamples {
		return
	}
	r := make([]float64, len(y))
	fit.ModelTo(r, 0, nil, true)
	for i := range r {
		r[i] = y[i] - r[i]
	}
	nm := newNoiseModel(r, a.fs, math.Max(fit.ResidualSD, a.nm.Floor), a.step, NoiseFromResidual)
	if nm.psd != nil {
		a.nm = nm
	}
}
