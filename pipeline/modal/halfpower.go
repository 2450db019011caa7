package modal

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"
)

// ErrNoHalfPower is wrapped by HalfPower when a half-power point cannot be
// found on one side of the peak.
var ErrNoHalfPower = errors.New("half-power point not found")

// FRFKind says which response quantity an FRF relates to the force; the
// exact half-power forms differ between them.
type FRFKind int

// FRF kinds.
const (
	Receptance  FRFKind = iota // displacement over force
	Mobility                   // velocity over force
	Accelerance                // acceleration over force (accelerometer)
)

// String returns the trade name of the kind.
func (k FRFKind) String() string {
	switch k {
	case Receptance:
		return "receptance"
	case Mobility:
		return "mobility"
	case Accelerance:
		return "accelerance"
	}
	return fmt.Sprintf("FRFKind(%d)", int(k))
}

// FRF returns the H1 frequency response function S_fx/S_ff of one impact
// record, force and response sampled at fs, at the frequencies k fs/N,
// k = 0..N/2. Both channels are transformed with NO window (rectangular):
// a Hann window on an impact record suppresses the start of the decay and
// biases the damping (DESIGN.md section 5). They are zero-padded to N, the
// next power of two >= max(padTo, len(force)). With one record H1 is the
// ratio of the two spectra; a bin where the force spectrum is exactly zero
// gives H = 0. On a long record, gate the force channel to the pulse first
// (zero it outside the hammer contact, a rectangular force window, common
// practice): otherwise the noise of the whole force record adds to the
// spectrum of the short pulse.
func FRF(force, response []float64, fs float64, padTo int) (freqs []float64, h []complex128, err error) {
	if len(force) == 0 || len(force) != len(response) {
		return nil, nil, fmt.Errorf("modal: FRF: force has %d samples and response %d: need equal, non-zero lengths", len(force), len(response))
	}
	if !(fs > 0) || math.IsInf(fs, 0) {
		return nil, nil, fmt.Errorf("modal: FRF: sample rate %g Hz is not a positive number", fs)
	}
	nfft := ceilPow2(max(padTo, len(force)))
	w := getSpectrumWork(nfft)
	defer putSpectrumWork(w)
	nb := nfft/2 + 1
	h = make([]complex128, nb)
	freqs = make([]float64, nb)
	w.transform(response)
	copy(h, w.half)
	w.transform(force)
	for k, f := range w.half {
		sff := real(f)*real(f) + imag(f)*imag(f)
		if sff == 0 {
			h[k] = 0
		} else {
			h[k] = cmplx.Conj(f) * h[k] / complex(sff, 0)
		}
		freqs[k] = float64(k) * fs / float64(nfft)
	}
	return freqs, h, nil
}

// Spectrum returns the magnitude of the DFT of x (unnormalised,
// |sum x_j exp(-2 pi i jk/N)|) at the frequencies k fs/N, k = 0..N/2, with
// no window and x zero-padded to N, the next power of two >=
// max(padTo, len(x)).
//
// For half-power damping from a response alone, use HalfPower with
// Receptance on this spectrum: the Fourier transform of a free decay
// A exp(-sigma t) sin(wd t), t >= 0, is A wd / (wn^2 - w^2 + 2i zeta wn w),
// exactly the receptance shape of the mode (the free decay after an impulse
// is the impulse response, whose transform is the receptance). A decay
// that starts at another phase phi adds a term sin(phi)(sigma + i w) to the
// numerator, a mobility-like part (a decay starting at its peak, phi =
// pi/2, has the mobility shape, for which the receptance forms read zeta
// low by about 3 zeta^2 relative, 0.7 % at zeta = 5 %, and fn high by about
// 2 zeta^2); the tests measure both phases at zeta = 0.5, 2 and 5 %.
// An empty x or a non-positive fs gives zero magnitudes.
func Spectrum(x []float64, fs float64, padTo int) (freqs, mag []float64) {
	nfft := ceilPow2(max(padTo, len(x)))
	nb := nfft/2 + 1
	freqs = make([]float64, nb)
	mag = make([]float64, nb)
	if len(x) == 0 || !(fs > 0) {
		return freqs, mag
	}
	w := getSpectrumWork(nfft)
	defer putSpectrumWork(w)
	w.transform(x)
	for k, c := range w.half {
		mag[k] = cmplx.Abs(c)
		freqs[k] = float64(k) * fs / float64(nfft)
	}
	return freqs, mag
}

// HalfPowerFloor returns the smallest damping ratio that half-power
// bandwidth can resolve with frequency spacing df at natural frequency fn,
// 0.44 df / fn with no window (the rule of DESIGN.md section 5).
func HalfPowerFloor(df, fn float64) float64 { return 0.44 * df / fn }

// HalfPower estimates the natural frequency and damping ratio of the mode
// whose peak is nearest fPeak from the magnitude mag of an FRF (or a
// response spectrum, see Spectrum) at the ascending frequencies freqs.
//
// The half-power frequencies f1 < f2 come from HalfPowerPoints. The damping
// ratio uses the exact forms for a single viscously damped mode (DESIGN.md
// section 5), not the light-damping (f2-f1)/(2 fn):
//
//   - Receptance and Accelerance: R = (f2^2 - f1^2)/(f2^2 + f1^2),
//     zeta = sqrt((1 - 1/sqrt(1 + R^2))/2); fn^2 = (f1^2 + f2^2)/(2(1 - 2 zeta^2))
//     for receptance and fn^2 = 2(1 - 2 zeta^2)/(1/f1^2 + 1/f2^2) for
//     accelerance (the half-power points of |H|^2 = 1/((1-r^2)^2 + (2 zeta r)^2)
//     satisfy r^2 = 1 - 2 zeta^2 -/+ 2 zeta sqrt(1 - zeta^2), r = f/fn, and
//     accelerance is the same curve in fn/f);
//   - Mobility: zeta = (f2 - f1)/(2 sqrt(f1 f2)), fn = sqrt(f1 f2).
//
// It returns an error wrapping ErrNoHalfPower when the magnitude does not
// fall to the half-power level before the end of the data on a side.
func HalfPower(freqs []float64, mag []float64, fPeak float64, kind FRFKind) (fn, zeta float64, err error) {
	if kind != Receptance && kind != Mobility && kind != Accelerance {
		return math.NaN(), math.NaN(), fmt.Errorf("modal: half-power: unknown FRF kind %d", int(kind))
	}
	f1, f2, _, err := HalfPowerPoints(freqs, mag, fPeak)
	if err != nil {
		return math.NaN(), math.NaN(), err
	}
	fn, zeta = halfPowerExact(f1, f2, kind)
	return fn, zeta, nil
}

// HalfPowerPoints finds the peak of mag nearest fPeak and the frequencies
// f1 < f2 on either side where the magnitude is peak/sqrt(2).
//
// From the bin nearest fPeak it climbs to the local maximum and refines the
// peak height with a parabola through the three top bins; f1 and f2 are
// interpolated linearly between the bins that straddle the half-power level
// on each side. It returns an error wrapping ErrNoHalfPower when the
// magnitude does not fall to that level before the end of the data on a
// side, or the peak is at the edge of the data.
func HalfPowerPoints(freqs []float64, mag []float64, fPeak float64) (f1, f2, peak float64, err error) {
	nan := math.NaN()
	n := len(mag)
	if n < 3 || len(freqs) != n {
		return nan, nan, nan, fmt.Errorf("modal: half-power: %d frequencies and %d magnitudes: need equal lengths of at least 3", len(freqs), n)
	}
	if !(fPeak >= freqs[0] && fPeak <= freqs[n-1]) {
		return nan, nan, nan, fmt.Errorf("modal: half-power: peak frequency %g Hz outside the data (%g-%g Hz)", fPeak, freqs[0], freqs[n-1])
	}
	// Nearest bin, then uphill to the local maximum.
	k := 0
	for i := range freqs {
		if math.Abs(freqs[i]-fPeak) < math.Abs(freqs[k]-fPeak) {
			k = i
		}
	}
	for k+1 < n && mag[k+1] > mag[k] {
		k++
	}
	for k > 0 && mag[k-1] > mag[k] {
		k--
	}
	if k == 0 || k == n-1 {
		return nan, nan, nan, fmt.Errorf("modal: half-power: the peak near %g Hz is at the edge of the data: %w", fPeak, ErrNoHalfPower)
	}
	peak, _ = parabolicPeak(mag[k-1], mag[k], mag[k+1])
	level := peak / math.Sqrt2

	i := k
	for i > 0 && mag[i] >= level {
		i--
	}
	if !(mag[i] < level) {
		return nan, nan, peak, fmt.Errorf("modal: half-power: below the peak at %g Hz: %w", freqs[k], ErrNoHalfPower)
	}
	f1 = freqs[i] + (level-mag[i])/(mag[i+1]-mag[i])*(freqs[i+1]-freqs[i])
	j := k
	for j < n-1 && mag[j] >= level {
		j++
	}
	if !(mag[j] < level) {
		return nan, nan, peak, fmt.Errorf("modal: half-power: above the peak at %g Hz: %w", freqs[k], ErrNoHalfPower)
	}
	f2 = freqs[j-1] + (mag[j-1]-level)/(mag[j-1]-mag[j])*(freqs[j]-freqs[j-1])
	if !(f1 > 0 && f2 > f1) {
		return nan, nan, peak, fmt.Errorf("modal: half-power: half-power points %g and %g Hz: %w", f1, f2, ErrNoHalfPower)
	}
	return f1, f2, peak, nil
}

// halfPowerExact applies the exact single-mode forms to half-power points
// f1 < f2.
func halfPowerExact(f1, f2 float64, kind FRFKind) (fn, zeta float64) {
	if kind == Mobility {
		fn = math.Sqrt(f1 * f2)
		return fn, (f2 - f1) / (2 * fn)
	}
	a, b := f1*f1, f2*f2
	R := (b - a) / (b + a)
	zeta = math.Sqrt((1 - 1/math.Sqrt(1+R*R)) / 2)
	c := 1 - 2*zeta*zeta
	if kind == Accelerance {
		return math.Sqrt(2 * c / (1/a + 1/b)), zeta
	}
	return math.Sqrt((a + b) / (2 * c)), zeta
}
