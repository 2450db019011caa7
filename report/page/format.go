package page

import (
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Pct writes a damping ratio as a percentage with three significant
// digits ("1.12", "0.0953"); "–" when it cannot be computed.
func Pct(z float64) string {
	if math.IsNaN(z) || math.IsInf(z, 0) {
		return "–"
	}
	return strconv.FormatFloat(100*z, 'f', decimals(100*z, 3), 64)
}

// decimals returns the digits after the point that show sig significant
// digits of x (at least 0, at most 6).
func decimals(x float64, sig int) int {
	if x == 0 {
		return sig - 1
	}
	d := sig - 1 - int(math.Floor(math.Log10(math.Abs(x))))
	return min(6, max(0, d))
}

// PctInterval writes a damping-ratio interval as percentages, with the
// digits of its wider end.
func PctInterval(ci [2]float64) string {
	if math.IsNaN(ci[0]) || math.IsNaN(ci[1]) || math.IsInf(ci[0], 0) || math.IsInf(ci[1], 0) {
		return "–"
	}
	d := decimals(100*math.Max(math.Abs(ci[0]), math.Abs(ci[1])), 3)
	return strconv.FormatFloat(100*ci[0], 'f', d, 64) + " – " + strconv.FormatFloat(100*ci[1], 'f', d, 64)
}

// Hz writes a frequency in Hz with four significant digits.
func Hz(f float64) string {
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return "–"
	}
	return strconv.FormatFloat(f, 'f', decimals(f, 4), 64)
}

// HzInterval writes a frequency interval with the digits its width needs.
func HzInterval(ci [2]float64) string {
	if math.IsNaN(ci[0]) || math.IsNaN(ci[1]) || math.IsInf(ci[0], 0) || math.IsInf(ci[1], 0) {
		return "–"
	}
	d := decimals(math.Max(ci[1]-ci[0], 1e-9), 2)
	d = max(d, decimals(ci[1], 4))
	return strconv.FormatFloat(ci[0], 'f', d, 64) + " – " + strconv.FormatFloat(ci[1], 'f', d, 64)
}

// num writes x with sig significant digits, in scientific notation with a
// superscript exponent outside 0.01 .. 10000 ("2.51×10⁻⁵").
func num(x float64, sig int) string {
	switch {
	case math.IsNaN(x) || math.IsInf(x, 0):
		return "–"
	case x == 0:
		return "0"
	}
	a := math.Abs(x)
	if a >= 0.01 && a < 1e4 {
		return strconv.FormatFloat(x, 'f', decimals(x, sig), 64)
	}
	e := int(math.Floor(math.Log10(a)))
	m := x / math.Pow(10, float64(e))
	if math.Abs(m) >= 9.9995 { // rounding carried into the next decade
		m /= 10
		e++
	}
	return strconv.FormatFloat(m, 'f', sig-1, 64) + "×10" + superscript(e)
}

func superscript(n int) string {
	const digits = "⁰¹²³⁴⁵⁶⁷⁸⁹"
	sup := []rune(digits)
	var b strings.Builder
	if n < 0 {
		b.WriteString("⁻")
		n = -n
	}
	for _, c := range strconv.Itoa(n) {
		b.WriteRune(sup[c-'0'])
	}
	return b.String()
}

// interval writes [lo, hi] with num.
func interval(ci [2]float64, sig int) string {
	if math.IsNaN(ci[0]) || math.IsNaN(ci[1]) {
		return "–"
	}
	return num(ci[0], sig) + " – " + num(ci[1], sig)
}

// plural writes n and the noun, with an s when n is not 1.
func plural(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}
