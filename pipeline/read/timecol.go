package read

import (
	"math"
)

// timePrint learns how a CSV time column was printed, to tell rounding of
// the printed values from uneven sampling. Printers write either a fixed
// number of decimals ("%.6f": every value is within 5e-7 of the truth), a
// fixed number of significant digits ("%g": the rounding grows with the
// value), or the shortest text that reads back exactly. The most decimals
// D and the most significant digits S seen in the column bound the
// rounding of a value v by half of max(10^-D, 10^(floor(log10 |v|)-S+1)).
type timePrint struct {
	decimals, digits int
}

// note records the printed form of one time cell.
func (p *timePrint) note(cell []byte) {
	cell = trimSpace(cell)
	dec, dig := 0, 0
	lead := true
	afterPoint := false
	for _, c := range cell {
		switch {
		case c >= '0' && c <= '9':
			if afterPoint {
				dec++
			}
			if c != '0' || !lead {
				lead = false
				dig++
			}
		case c == '.' || c == ',':
			afterPoint = true
		case c == 'e' || c == 'E':
			goto done
		}
	}
done:
	if dec > p.decimals {
		p.decimals = dec
	}
	if dig > p.digits {
		p.digits = dig
	}
}

// noteText records a printed form already taken apart by fastFloat.
func (p *timePrint) noteText(t decimalText) {
	if t.decimals > p.decimals {
		p.decimals = t.decimals
	}
	if t.digits > p.digits {
		p.digits = t.digits
	}
}

// res returns the place value of the last printed digit of a time t (in
// file units) under the learnt printing.
func (p *timePrint) res(t float64) float64 {
	r := math.Pow10(-p.decimals)
	if t != 0 && p.digits > 0 {
		e := math.Floor(math.Log10(math.Abs(t)))
		r = math.Max(r, math.Pow10(int(e)-p.digits+1))
	}
	return r
}

// timeStepError describes the worst uneven step of a time column.
type timeStepError struct {
	row       int     // the step ends on this row (0-based)
	step, ref float64 // the step and the step it should have been
	tol       float64 // the allowed deviation
	usual     bool    // ref is the most common step (else the mean step)
}

// resCache remembers res for one decade of values: the times increase,
// so the decade changes rarely and math.Log10 is called rarely.
type resCache struct {
	p      *timePrint
	lo, hi float64
	r      float64
}

func (c *resCache) res(t float64) float64 {
	a := math.Abs(t)
	if a >= c.lo && a < c.hi {
		return c.r
	}
	r := c.p.res(t)
	if a > 0 {
		e := math.Floor(math.Log10(a))
		c.lo, c.hi, c.r = math.Pow(10, e), math.Pow(10, e+1), r
	}
	return r
}

// check verifies that the time column t (seconds; strictly increasing)
// is evenly sampled and returns the sample rate and its uncertainty in
// Hz. scale is seconds per file unit.
//
// Every step within relTol of the mean step passes at once. Otherwise the
// column is either printed exactly with a few steps too long (every step
// a whole multiple of the most common step: samples are missing), or
// printed with rounding: then a step may deviate from the mean step by
// relTol of it plus the rounding of its two printed ends, and a step that
// deviates more is uneven. Of several uneven steps the one furthest off
// is reported.
func (p *timePrint) check(t []float64, scale, relTol float64) (fs, unc float64, bad *timeStepError) {
	n := len(t)
	span := t[n-1] - t[0]
	dt := span / float64(n-1)
	tol := relTol * dt
	even := true
	for i := 1; i < n; i++ {
		if math.Abs(t[i]-t[i-1]-dt) > tol {
			even = false
			break
		}
	}
	if !even {
		if ref, ok := commonStep(t, relTol); ok {
			worst := 0.0
			multiples := true
			for i := 1; i < n && multiples; i++ {
				step := t[i] - t[i-1]
				m := math.Round(step / ref)
				if m < 1 || math.Abs(step-m*ref) > relTol*ref {
					multiples = false
				} else if d := math.Abs(step - ref); d > relTol*ref && d > worst {
					worst = d
					bad = &timeStepError{row: i, step: step, ref: ref, tol: relTol * ref, usual: true}
				}
			}
			if multiples && bad != nil {
				return 0, 0, bad
			}
			bad = nil
		}
		worst := 0.0
		rc := resCache{p: p}
		for i := 1; i < n; i++ {
			step := t[i] - t[i-1]
			d := math.Abs(step - dt)
			if d <= tol {
				continue
			}
			allow := 0.5 * (rc.res(t[i]/scale) + rc.res(t[i-1]/scale)) * scale
			if lim := tol + allow*(1+1e-9); d > lim && d/lim > worst {
				bad = &timeStepError{row: i, step: step, ref: dt, tol: lim}
				worst = d / lim
			}
		}
		if bad != nil {
			return 0, 0, bad
		}
	}
	fs = float64(n-1) / span
	// The span is known to within the rounding of its ends: snap to a
	// whole number of Hz when that is inside the uncertainty.
	unc = fs*0.5*(p.res(t[0]/scale)+p.res(t[n-1]/scale))*scale/span + fs*1e-12
	if r := math.Round(fs); math.Abs(fs-r) <= 1.5*unc {
		fs = r
	}
	return fs, unc, nil
}

// commonStep returns the most common step of t, grouping steps within
// relTol of each other, when there are at most 16 distinct steps.
func commonStep(t []float64, relTol float64) (float64, bool) {
	type bucket struct {
		step  float64
		count int
	}
	var b [16]bucket
	nb := 0
	for i := 1; i < len(t); i++ {
		step := t[i] - t[i-1]
		j := 0
		for j < nb && math.Abs(step-b[j].step) > relTol*b[j].step {
			j++
		}
		if j == nb {
			if nb == len(b) {
				return 0, false
			}
			b[nb] = bucket{step, 0}
			nb++
		}
		b[j].count++
	}
	best := 0
	for j := 1; j < nb; j++ {
		if b[j].count > b[best].count {
			best = j
		}
	}
	return b[best].step, nb > 0
}

// isBlankOrComment reports whether a line holds only white space or is a
// comment after leading white space.
func isBlankOrComment(line []byte) bool {
	t := trimSpace(line)
	return len(t) == 0 || t[0] == '#'
}
