package modal

import (
	"fmt"
	"math"
)

// LogDecrement returns the logarithmic decrement per cycle of two peaks of
// the same sign n cycles apart, delta = ln(x0/xn)/n, and the damping ratio
// from the exact relation zeta = delta / sqrt(4 pi^2 + delta^2). Both are
// NaN unless x0 > 0, xn > 0 and n >= 1.
func LogDecrement(x0, xn float64, n int) (delta, zeta float64) {
	if !(x0 > 0 && xn > 0) || n < 1 || math.IsInf(x0, 0) || math.IsInf(xn, 0) {
		return math.NaN(), math.NaN()
	}
	delta = math.Log(x0/xn) / float64(n)
	return delta, ZetaFromLogDec(delta)
}

// parabolicPeak returns the vertex height and offset (in samples, within
// [-1/2, 1/2] for a true local maximum) of the parabola through
// (-1, ym), (0, y0), (1, yp).
func parabolicPeak(ym, y0, yp float64) (peak, offset float64) {
	den := ym - 2*y0 + yp
	if den >= 0 { // not a maximum: keep the sample
		return y0, 0
	}
	offset = 0.5 * (ym - yp) / den
	return y0 - 0.25*(ym-yp)*offset, offset
}

// crestFit returns the vertex height and offset (samples from i) of the
// least-squares parabola through x[i-h..i+h]. With h = 1 it is the
// three-point parabolic interpolation; a wider window averages the noise
// instead of picking its largest sample. The window is clipped to x.
func crestFit(x []float64, i, h int) (peak, offset float64) {
	h = min(h, i, len(x)-1-i)
	if h < 1 {
		return x[i], 0
	}
	if h == 1 {
		return parabolicPeak(x[i-1], x[i], x[i+1])
	}
	// Normal equations of y = c0 + c1 u + c2 u^2 on u = -h..h, where the
	// odd moments vanish: c1 = sum(u y)/S2 and a 2x2 system for c0, c2.
	var s0, s2, s4, sy, suy, suuy float64
	for u := -h; u <= h; u++ {
		fu, y := float64(u), x[i+u]
		s0++
		s2 += fu * fu
		s4 += fu * fu * fu * fu
		sy += y
		suy += fu * y
		suuy += fu * fu * y
	}
	c1 := suy / s2
	det := s0*s4 - s2*s2
	c0 := (s4*sy - s2*suuy) / det
	c2 := (s0*suuy - s2*sy) / det
	if c2 >= 0 {
		return x[i], 0
	}
	offset = -c1 / (2 * c2)
	return c0 - c1*c1/(4*c2), offset
}

// argmaxIn returns the index of the largest x[i] for lo <= i < hi.
func argmaxIn(x []float64, lo, hi int) int {
	best := lo
	for i := lo + 1; i < hi; i++ {
		if x[i] > x[best] {
			best = i
		}
	}
	return best
}

// LogDecrementSignal estimates the damping ratio of a single-mode signal x
// (band-isolated, sampled at fs, starting at the onset of the decay) from
// its successive positive peaks.
//
// The first peak is the largest sample within the first period after the
// onset (or the next period, when that sample is the falling edge of a lobe
// cut by the onset); each next one is the largest sample within half a period of one
// period after the previous. Each peak height is refined by parabolic
// interpolation: the least-squares parabola through the samples within an
// eighth of a period of the largest one (the three-point parabola when a
// period has fewer than 12 samples), so that near the noise the height is
// an average rather than the largest noise excursion, which would make
// the late peaks read high and the damping low. Peaks are taken until one
// falls below 10 times noise (the noise standard deviation in the band), the
// record ends, or maxCycles cycles are in hand (maxCycles <= 0: no limit).
// The logarithmic decrement is minus the least-squares slope of ln(peak)
// against the cycle index, which uses every peak rather than the first and
// the last alone, and zeta = delta / sqrt(4 pi^2 + delta^2) (exact). fd is
// the frequency of the oscillation in hertz (the damped natural frequency;
// only the peak spacing depends on it). cycles is the number of cycles
// fitted. The result is valid only where one mode dominates.
//
// It returns an error wrapping ErrFewCycles when fewer than 2 cycles are
// above the noise, and an error for invalid arguments or a decay that does
// not decay.
func LogDecrementSignal(x []float64, fs, fd, noise float64, maxCycles int) (zeta float64, cycles int, err error) {
	if !(fs > 0) || math.IsInf(fs, 0) {
		return math.NaN(), 0, fmt.Errorf("modal: log decrement: sample rate %g Hz is not a positive number", fs)
	}
	if !(fd > 0 && fd < fs/2) {
		return math.NaN(), 0, fmt.Errorf("modal: log decrement: frequency %g Hz outside (0, %g) Hz", fd, fs/2)
	}
	if !(noise >= 0) || math.IsInf(noise, 0) {
		return math.NaN(), 0, fmt.Errorf("modal: log decrement: noise level %g is not a non-negative number", noise)
	}
	period := fs / fd
	thr := 10 * noise
	n := len(x)
	if n < 3 {
		return math.NaN(), 0, fmt.Errorf("modal: log decrement: signal of %d samples: %w", n, ErrFewCycles)
	}

	// Running sums for the least-squares line ln(peak_k) = c - delta k.
	var sk, skk, sy, sky float64
	peaks := 0
	add := func(k int, p float64) {
		fk, y := float64(k), math.Log(p)
		sk += fk
		skk += fk * fk
		sy += y
		sky += fk * y
		peaks++
	}

	// The first peak: the largest sample of the first period, unless that
	// is the falling edge of a lobe that began before the onset; then the
	// largest of the next period.
	i := argmaxIn(x, 1, min(n-1, 1+int(math.Ceil(period))))
	if x[i] < x[i-1] {
		lo := i + int(math.Ceil(period/2))
		if lo >= n-1 {
			return math.NaN(), 0, fmt.Errorf("modal: log decrement: no peak within the signal: %w", ErrFewCycles)
		}
		i = argmaxIn(x, lo, min(n-1, lo+int(math.Ceil(period))))
	}
	crest := max(1, int(math.Round(period/8)))
	p, off := crestFit(x, i, crest)
	if !(p >= thr && p > 0) {
		return math.NaN(), 0, fmt.Errorf("modal: log decrement: first peak %.3g is not above 10 times the noise %.3g: %w", p, noise, ErrFewCycles)
	}
	add(0, p)
	pos := float64(i) + off
	for k := 1; maxCycles <= 0 || k <= maxCycles; k++ {
		c := pos + period
		lo := int(math.Round(c - period/2))
		hi := int(math.Round(c+period/2)) + 1
		if lo < 1 || hi > n-1 {
			break
		}
		i = argmaxIn(x, lo, hi)
		p, off = crestFit(x, i, crest)
		if !(p >= thr && p > 0) {
			break
		}
		add(k, p)
		pos = float64(i) + off
	}
	cycles = peaks - 1
	if cycles < 2 {
		return math.NaN(), cycles, fmt.Errorf("modal: log decrement: %d cycles above 10 times the noise (need 2): %w", cycles, ErrFewCycles)
	}
	np := float64(peaks)
	slope := (np*sky - sk*sy) / (np*skk - sk*sk)
	delta := -slope
	if !(delta > 0) {
		return math.NaN(), cycles, fmt.Errorf("modal: log decrement: the peaks do not decay (decrement %.3g per cycle)", delta)
	}
	return ZetaFromLogDec(delta), cycles, nil
}
