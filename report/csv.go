package report

import (
	"encoding/csv"
	"io"
	"math"
	"regexp"
	"strconv"
	"strings"
)

// CSVOptions choose how CSV is written for a spreadsheet.
type CSVOptions struct {
	// DecimalComma writes numbers with a decimal comma and separates the
	// cells with semicolons, as spreadsheets expect in locales whose
	// decimal mark is a comma.
	DecimalComma bool
}

// CSVWriter writes CSV that a spreadsheet imports as data, never as
// formulas: a cell that a spreadsheet would evaluate (one that starts with
// =, +, -, @, a tab or a carriage return) gets a leading single quote,
// unless it is a plain number such as -0.25 or 1e-3 (the OWASP advice on
// CSV injection). Every cell goes through this, whatever its origin (file
// names, metadata, labels).
type CSVWriter struct {
	cw  *csv.Writer
	opt CSVOptions
}

// NewCSVWriter returns a CSVWriter on w.
func NewCSVWriter(w io.Writer, opt CSVOptions) *CSVWriter {
	cw := csv.NewWriter(w)
	if opt.DecimalComma {
		cw.Comma = ';'
	}
	return &CSVWriter{cw: cw, opt: opt}
}

// Num formats a number for a cell: 6 significant digits, empty when it
// cannot be computed (NaN or infinite), with a decimal comma when asked.
func (c *CSVWriter) Num(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return ""
	}
	s := strconv.FormatFloat(x, 'g', 6, 64)
	if c.opt.DecimalComma {
		s = strings.Replace(s, ".", ",", 1)
	}
	return s
}

// Write writes one row, each cell made safe by SafeCSVCell.
func (c *CSVWriter) Write(row []string) error {
	safe := make([]string, len(row))
	for i, s := range row {
		safe[i] = SafeCSVCell(s)
	}
	return c.cw.Write(safe)
}

// Flush writes what is buffered and returns the first error of any write.
func (c *CSVWriter) Flush() error {
	c.cw.Flush()
	return c.cw.Error()
}

// plainNumber is a number as a spreadsheet reads it, with a decimal point
// or comma: such a cell is a value, not a formula, even with a sign.
var plainNumber = regexp.MustCompile(`^[+-]?([0-9]+([.,][0-9]*)?|[.,][0-9]+)([eE][+-]?[0-9]+)?$`)

// SafeCSVCell returns s with a leading single quote when a spreadsheet
// would take it as a formula: it starts with =, +, -, @, a tab or a
// carriage return and is not a plain number.
func SafeCSVCell(s string) string {
	if s == "" || !strings.ContainsRune("=+-@\t\r", rune(s[0])) || plainNumber.MatchString(s) {
		return s
	}
	return "'" + s
}
