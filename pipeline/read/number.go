package read

import "math"

// pow10 holds the powers of ten that float64 represents exactly.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10,
	1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// decimalText is what fastFloat learnt about a number's printed form.
type decimalText struct {
	decimals int // digits after the decimal separator
	digits   int // significant digits of the mantissa
	hasExp   bool
}

// fastFloat parses the plain decimal numbers recorders write
// ([sign] digits [sep digits] [e [sign] digits], sep '.' or, with comma,
// also ',') when the result is exact by construction: a mantissa below
// 2^53 scaled by a power of ten up to 1e22 is one correctly rounded
// IEEE operation (the classic fast path of decimal-to-binary conversion).
// ok is false for anything else; the caller then uses strconv.
func fastFloat(b []byte, comma bool) (v float64, t decimalText, ok bool) {
	i := 0
	neg := false
	if i < len(b) && (b[i] == '+' || b[i] == '-') {
		neg = b[i] == '-'
		i++
	}
	var m uint64
	nd := 0 // digits taken into m, leading zeros excluded
	sawDigit := false
	point := false
	for ; i < len(b); i++ {
		c := b[i]
		switch {
		case c >= '0' && c <= '9':
			sawDigit = true
			if point {
				t.decimals++
			}
			if m == 0 && c == '0' {
				continue
			}
			if nd >= 19 {
				return 0, t, false
			}
			m = m*10 + uint64(c-'0')
			nd++
			continue
		case (c == '.' || (c == ',' && comma)) && !point:
			point = true
			continue
		}
		break
	}
	if !sawDigit {
		return 0, t, false
	}
	t.digits = nd
	exp := 0
	if i < len(b) && (b[i] == 'e' || b[i] == 'E') {
		t.hasExp = true
		i++
		eneg := false
		if i < len(b) && (b[i] == '+' || b[i] == '-') {
			eneg = b[i] == '-'
			i++
		}
		if i == len(b) {
			return 0, t, false
		}
		for ; i < len(b); i++ {
			c := b[i]
			if c < '0' || c > '9' || exp > 9999 {
				return 0, t, false
			}
			exp = exp*10 + int(c-'0')
		}
		if eneg {
			exp = -exp
		}
	}
	if i != len(b) {
		return 0, t, false
	}
	e10 := exp - t.decimals
	switch {
	case m == 0:
		v = 0
	case m < 1<<53 && e10 >= 0 && e10 <= 22:
		v = float64(m) * pow10[e10]
	case m < 1<<53 && e10 < 0 && e10 >= -22:
		v = float64(m) / pow10[-e10]
	default:
		return 0, t, false
	}
	if neg {
		v = math.Copysign(v, -1)
	}
	return v, t, true
}

// textResolution returns the place value of the last digit of a number
// as printed: 0.0125 -> 1e-4, 3.90625E-05 -> 1e-10. Integers ("0", "12")
// return 0: shortest-form printers write whole values that way exactly,
// while fixed-decimal printers would write "12.000".
func textResolution(cell []byte) float64 {
	cell = trimSpace(cell)
	decimals, exp := 0, 0
	point := false
	i := 0
	for i < len(cell) && (cell[i] == '"' || cell[i] == '+' || cell[i] == '-') {
		i++
	}
	for i < len(cell) && cell[i] >= '0' && cell[i] <= '9' {
		i++
	}
	if i < len(cell) && (cell[i] == '.' || cell[i] == ',') {
		point = true
		i++
		for i < len(cell) && cell[i] >= '0' && cell[i] <= '9' {
			i++
			decimals++
		}
	}
	if i < len(cell) && (cell[i] == 'e' || cell[i] == 'E' || cell[i] == 'd' || cell[i] == 'D') {
		point = true
		j := i + 1
		neg := false
		if j < len(cell) && (cell[j] == '+' || cell[j] == '-') {
			neg = cell[j] == '-'
			j++
		}
		for j < len(cell) && cell[j] >= '0' && cell[j] <= '9' && exp < 1000 {
			exp = exp*10 + int(cell[j]-'0')
			j++
		}
		if neg {
			exp = -exp
		}
	}
	if !point {
		return 0
	}
	return math.Pow10(exp - decimals)
}
