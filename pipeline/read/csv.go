package read

import (
	"bytes"
	"errors"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/ringlog/ringlog/pipeline"
)

// CSV reads delimited text: optional "# key: value" metadata lines, a
// header row of column names (with units in brackets or parentheses), and
// one row of numbers per sample. See the package documentation for the
// rules. name is used in errors and as Recording.Path.
func CSV(r io.Reader, name string, opt Options) (*pipeline.Recording, error) {
	size := int64(-1)
	if l, ok := r.(interface{ Len() int }); ok {
		size = int64(l.Len())
	}
	return readCSV(r, name, opt, size)
}

// csvCol is one column of the header.
type csvCol struct {
	name, unit string
	timeScale  float64 // > 0 for the time column: seconds per unit
}

// metaLine is one "# key: value" line.
type metaLine struct {
	key, value string
	line       int
}

// readCSV is CSV with a size hint (bytes, -1 unknown) used to size the
// sample slices once.
func readCSV(r io.Reader, name string, opt Options, size int64) (*pipeline.Recording, error) {
	lr := newLineReader(r)
	meta := map[string]string{}
	var metas []metaLine
	var header []byte
	sawComment := false
	for header == nil {
		line, _, err := lr.read()
		if err == io.EOF {
			if !sawComment {
				return nil, fileErr(name, nil, "empty file")
			}
			return nil, fileErr(name, nil, "no header row: the file has only comment or blank lines")
		}
		if err != nil {
			return nil, lineErr(name, lr.line+1, err, "read error")
		}
		if lr.line == 1 {
			if bytes.HasPrefix(line, []byte("\xff\xfe")) || bytes.HasPrefix(line, []byte("\xfe\xff")) {
				return nil, lineErr(name, 1, ErrUnknownFormat, "unknown format: UTF-16 text (\"Unicode text\" export) is not read; export as UTF-8 or ANSI CSV")
			}
			line = bytes.TrimPrefix(line, []byte("\xef\xbb\xbf")) // UTF-8 byte order mark
		}
		if i := firstControl(line); i >= 0 {
			return nil, &Error{File: name, Line: lr.line, Offset: lr.off + int64(i), Err: ErrUnknownFormat,
				Problem: "unknown format: binary byte 0x" + strconv.FormatUint(uint64(line[i]), 16) + ", not a delimited text file"}
		}
		t := trimSpace(line)
		switch {
		case len(t) == 0:
		case t[0] == '#':
			sawComment = true
			kb, vb, ok := bytes.Cut(t[1:], []byte{':'})
			if !ok {
				continue // a plain comment
			}
			k := strings.ToLower(clipBytes(trimSpace(kb), MaxMetaKey))
			v := clipBytes(trimSpace(vb), MaxMetaText)
			if k == "" {
				continue
			}
			meta[k] = v
			metas = append(metas, metaLine{k, v, lr.line})
		default:
			header = append([]byte(nil), t...)
		}
	}
	headerLine := lr.line

	// Delimiter: tab, else semicolon, else comma (also for one column).
	delim := byte(',')
	if bytes.IndexByte(header, '\t') >= 0 {
		delim = '\t'
	} else if bytes.IndexByte(header, ';') >= 0 {
		delim = ';'
	}
	decComma := delim != ','
	if n := bytes.Count(header, []byte{delim}) + 1; n > MaxChannels+1 { // +1: a trailing delimiter
		return nil, lineErr(name, headerLine, nil, "%d columns in the header; at most %d channels are read (is this a recorder export?)", n, MaxChannels)
	}
	cells := bytes.Split(header, []byte{delim})
	trailing := false
	if len(cells) > 1 && len(trimSpace(cells[len(cells)-1])) == 0 {
		trailing = true // "a,b," style rows
		cells = cells[:len(cells)-1]
	}
	cols := make([]csvCol, len(cells))
	timeCol := -1
	numeric := 0
	seen := map[string]int{}
	for i, c := range cells {
		s := strings.TrimSpace(unquote(clipBytes(trimSpace(c), MaxName)))
		if s == "" {
			return nil, lineErr(name, headerLine, nil, "column %d has no name in the header", i+1)
		}
		if _, err := strconv.ParseFloat(strings.Replace(s, ",", ".", 1), 64); err == nil {
			numeric++
		}
		nm, unit := splitUnit(s)
		if j, dup := seen[nm]; dup {
			return nil, lineErr(name, headerLine, nil, "columns %d and %d are both named %q", j+1, i+1, nm)
		}
		seen[nm] = i
		cols[i] = csvCol{name: nm, unit: unit}
		if sc := timeScale(nm, unit); sc > 0 {
			if timeCol >= 0 {
				return nil, lineErr(name, headerLine, nil, "two time columns: %q and %q", cols[timeCol].name, nm)
			}
			timeCol = i
			cols[i].timeScale = sc
		}
	}
	if numeric == len(cols) {
		return nil, lineErr(name, headerLine, nil, "no header row: the first row holds numbers, expected column names (e.g. time [s],accel [m/s^2])")
	}
	if timeCol >= 0 && len(cols) == 1 {
		return nil, lineErr(name, headerLine, nil, "no data columns besides the time column %q", cols[timeCol].name)
	}

	// Metadata the reader understands.
	var rateFS float64
	rateLine := 0
	fullScale := 0.0
	for _, m := range metas {
		key := strings.NewReplacer(" ", "_", "-", "_").Replace(m.key)
		switch key {
		case "sample_rate", "samplerate", "sampling_rate", "sample_frequency", "sampling_frequency", "fs", "sample_rate_hz":
			fs, err := parseQuantity(m.value, map[string]float64{"": 1, "hz": 1, "khz": 1e3, "s/s": 1, "sps": 1})
			if err != nil {
				return nil, lineErr(name, m.line, nil, "sample rate %q: %v", m.value, err)
			}
			if !(fs > 0) || math.IsInf(fs, 0) {
				return nil, lineErr(name, m.line, nil, "sample rate %q must be positive", m.value)
			}
			if rateLine > 0 && !approxEq(fs, rateFS, 1e-9) {
				return nil, lineErr(name, m.line, nil, "sample rate %q disagrees with the one on line %d (%g Hz)", m.value, rateLine, rateFS)
			}
			rateFS, rateLine = fs, m.line
		case "dt", "sample_interval", "sampling_interval", "time_step":
			dt, err := parseQuantity(m.value, map[string]float64{"": 1, "s": 1, "ms": 1e-3, "us": 1e-6, "µs": 1e-6})
			if err != nil {
				return nil, lineErr(name, m.line, nil, "sample interval %q: %v", m.value, err)
			}
			if !(dt > 0) || math.IsInf(dt, 0) {
				return nil, lineErr(name, m.line, nil, "sample interval %q must be positive (sample rate would be zero or negative)", m.value)
			}
			fs := 1 / dt
			if r := math.Round(fs); approxEq(fs, r, 1e-9) {
				fs = r
			}
			if rateLine > 0 && !approxEq(fs, rateFS, 1e-6) {
				return nil, lineErr(name, m.line, nil, "sample interval %q disagrees with the sample rate on line %d (%g Hz)", m.value, rateLine, rateFS)
			}
			rateFS, rateLine = fs, m.line
		case "full_scale", "fullscale", "range":
			v, err := parseQuantity(m.value, nil)
			if err != nil {
				return nil, lineErr(name, m.line, nil, "full scale %q: %v", m.value, err)
			}
			if !(v > 0) || math.IsInf(v, 0) {
				return nil, lineErr(name, m.line, nil, "full scale %q must be positive", m.value)
			}
			fullScale = v
		}
	}

	relTol := opt.TimeTolerance
	if relTol <= 0 {
		relTol = 1e-3
	}
	ncol := len(cols)
	vals := make([][]float64, ncol)
	dataStart := lr.next
	var (
		rows        int
		tPrev       float64
		prevLine    int
		scratch     [maxCellScratch]byte
		sizedSlices = size <= 0
		tp          timePrint
		skipped     []int // row index after each blank or comment line among the data
	)
	for {
		line, nl, err := lr.read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, lineErr(name, lr.line+1, err, "read error")
		}
		if len(line) == 0 || line[0] == '#' || ((line[0] == ' ' || line[0] == '\t') && isBlankOrComment(line)) {
			skipped = append(skipped, rows)
			continue
		}
		if trailing && line[len(line)-1] == delim {
			line = line[:len(line)-1]
		}
		col, start := 0, 0
		for {
			rel := bytes.IndexByte(line[start:], delim)
			end := len(line)
			if rel >= 0 {
				end = start + rel
			}
			if col >= ncol {
				return nil, rowErr(name, lr.line, nl, "%d cells, the header has %d", ncol+1+bytes.Count(line[end:], []byte{delim}), ncol)
			}
			cell := trimSpace(line[start:end])
			v, txt, fast := fastFloat(cell, decComma)
			if !fast {
				var err error
				v, err = parseCell(cell, decComma, &scratch)
				if err != nil {
					return nil, rowErr(name, lr.line, nl, "%s cell %q in column %q", err.Error(), trimSpace(cell), cols[col].name)
				}
			}
			if col == timeCol {
				if fast && !txt.hasExp {
					tp.noteText(txt)
				} else {
					tp.note(cell)
				}
				t := v * cols[col].timeScale
				if rows > 0 && !(t > tPrev) {
					return nil, rowErr(name, lr.line, nl, "time does not increase: %.9g s after %.9g s on line %d", t, tPrev, prevLine)
				}
				tPrev = t
				v = t
			}
			vals[col] = append(vals[col], v)
			col++
			if rel < 0 {
				break
			}
			start = end + 1
		}
		if col < ncol {
			if !nl {
				return nil, lineErr(name, lr.line, nil, "truncated last line: %d of %d cells and no line ending (was the file still being written?)", col, ncol)
			}
			return nil, lineErr(name, lr.line, nil, "%d cells, the header has %d", col, ncol)
		}
		rows++
		if !sizedSlices && rows == 64 {
			// Size every column once from the length of the first rows.
			sizedSlices = true
			perRow := float64(lr.next-dataStart) / float64(rows)
			est := int64(float64(size-dataStart)/perRow*1.03) + 16
			if est > int64(rows) && est <= size {
				for i := range vals {
					vals[i] = append(make([]float64, 0, est), vals[i]...)
				}
			}
		}
		prevLine = lr.line
	}
	if rows == 0 {
		return nil, lineErr(name, headerLine, nil, "no data rows after the header")
	}
	lineOf := func(row int) int {
		return headerLine + 1 + row + sort.SearchInts(skipped, row+1)
	}

	// Sample rate: the time column and the metadata must agree; the
	// options only fill in.
	fs := 0.0
	if timeCol >= 0 && rows >= 2 {
		fsTime, unc, bad := tp.check(vals[timeCol], cols[timeCol].timeScale, relTol)
		if bad != nil {
			what := "mean"
			if bad.usual {
				what = "usual"
			}
			return nil, lineErr(name, lineOf(bad.row), nil,
				"uneven time step: %.6g s from line %d, the %s step is %.6g s (tolerance %.3g s); samples are missing or the clock jumped",
				bad.step, lineOf(bad.row-1), what, bad.ref, bad.tol)
		}
		fs = fsTime
		if rateLine > 0 {
			if math.Abs(fsTime-rateFS) > rateFS*relTol+unc {
				return nil, lineErr(name, rateLine, nil, "sample rate %g Hz disagrees with the time column (%.9g Hz)", rateFS, fsTime)
			}
			fs = rateFS
		}
	} else if rateLine > 0 {
		fs = rateFS
	}
	if fs == 0 {
		switch {
		case opt.SampleRate > 0 && !math.IsInf(opt.SampleRate, 0):
			fs = opt.SampleRate
		case opt.SampleRate != 0:
			return nil, fileErr(name, nil, "configured sample rate %g Hz must be positive", opt.SampleRate)
		case timeCol >= 0:
			return nil, fileErr(name, nil, "one data row: the time column cannot give a sample rate, and no sample_rate metadata or configured rate")
		default:
			return nil, fileErr(name, nil, "no sample rate: no time column, no \"# sample_rate: ...\" line, and none configured")
		}
	}

	rec := &pipeline.Recording{Path: name, Format: FormatCSV, Meta: meta}
	for i, c := range cols {
		if i == timeCol {
			continue
		}
		rec.Channels = append(rec.Channels, pipeline.Channel{
			Name: c.name, Unit: c.unit, SampleRate: fs, Samples: vals[i], FullScale: fullScale,
		})
	}
	if err := finish(rec, opt, nil); err != nil {
		return nil, err
	}
	for i := range rec.Channels {
		if rec.Channels[i].Role == pipeline.RoleForce {
			rec.Channels[i].FullScale = 0 // full_scale describes the response channels
		}
	}
	return rec, nil
}

// rowErr is a problem on a data row; on a last line without line ending
// it says that the line is truncated.
func rowErr(name string, line int, nl bool, format string, args ...any) *Error {
	e := lineErr(name, line, nil, format, args...)
	if !nl {
		e.Problem = "truncated last line (no line ending): " + e.Problem
	}
	return e
}

// cellError classifies a bad cell.
type cellError string

func (e cellError) Error() string { return string(e) }

const (
	errEmptyCell   cellError = "empty"
	errNonNumeric  cellError = "non-numeric"
	errNaNCell     cellError = "NaN"
	errInfCell     cellError = "infinite"
	errRangeCell   cellError = "out-of-range"
	maxCellScratch           = 64
)

// parseCell parses one numeric cell: spaces and double quotes around it
// are ignored; with decComma a decimal comma is accepted. It does not
// allocate for cells of up to 32 bytes.
func parseCell(cell []byte, decComma bool, scratch *[maxCellScratch]byte) (float64, error) {
	cell = trimSpace(cell)
	if len(cell) >= 2 && cell[0] == '"' && cell[len(cell)-1] == '"' {
		cell = trimSpace(cell[1 : len(cell)-1])
	}
	if len(cell) == 0 {
		return 0, errEmptyCell
	}
	if decComma && len(cell) <= maxCellScratch {
		if i := bytes.IndexByte(cell, ','); i >= 0 {
			n := copy(scratch[:], cell)
			scratch[i] = '.'
			cell = scratch[:n]
		}
	}
	v, err := strconv.ParseFloat(string(cell), 64)
	if err != nil {
		if errors.Is(err, strconv.ErrRange) {
			return 0, errRangeCell
		}
		return 0, errNonNumeric
	}
	if v-v != 0 { // NaN or Inf
		if math.IsNaN(v) {
			return 0, errNaNCell
		}
		return 0, errInfCell
	}
	return v, nil
}

// splitUnit splits "accel [m/s^2]" or "accel (g)" into name and unit.
func splitUnit(s string) (name, unit string) {
	for _, p := range [][2]byte{{'[', ']'}, {'(', ')'}} {
		if strings.HasSuffix(s, string(p[1])) {
			if i := strings.LastIndexByte(s, p[0]); i > 0 {
				n := strings.TrimSpace(s[:i])
				if n != "" {
					return n, strings.TrimSpace(s[i+1 : len(s)-1])
				}
			}
		}
	}
	return s, ""
}

// timeScale returns seconds per unit when a column with this name and
// unit is a time axis, else 0.
func timeScale(name, unit string) float64 {
	n := strings.ToLower(name)
	u := strings.ToLower(unit)
	switch n {
	case "time_ms", "t_ms":
		if u == "" {
			return 1e-3
		}
		return 0
	case "time_s", "t_s", "time_sec":
		if u == "" || u == "s" {
			return 1
		}
		return 0
	case "time", "t", "times", "seconds", "second", "sec", "s", "zeit", "temps", "tiempo", "tempo":
	default:
		return 0
	}
	switch u {
	case "", "s", "sec", "secs", "second", "seconds":
		return 1
	case "ms":
		return 1e-3
	case "us", "µs", "μs":
		return 1e-6
	}
	return 0
}

// unquote removes one pair of double quotes around s.
func unquote(s string) string {
	if len(s) >= 2 && s[0] == '"' && s[len(s)-1] == '"' {
		return s[1 : len(s)-1]
	}
	return s
}

// parseQuantity parses "25600", "25.6 kHz", "25,6 kHz" or "0.002 s". units
// maps lower-case unit text to a factor; nil accepts and ignores any unit.
func parseQuantity(s string, units map[string]float64) (float64, error) {
	s = strings.TrimSpace(s)
	i := 0
	for i < len(s) && strings.IndexByte("+-0123456789.,eE", s[i]) >= 0 {
		// stop at an 'e' that starts a word (not an exponent)
		if (s[i] == 'e' || s[i] == 'E') && (i == 0 || i+1 >= len(s) || strings.IndexByte("+-0123456789", s[i+1]) < 0) {
			break
		}
		i++
	}
	num, unit := s[:i], strings.ToLower(strings.TrimSpace(s[i:]))
	if strings.Count(num, ",") == 1 && !strings.Contains(num, ".") {
		num = strings.Replace(num, ",", ".", 1)
	}
	v, err := strconv.ParseFloat(num, 64)
	if err != nil {
		return 0, errors.New("not a number")
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, errors.New("not a finite number")
	}
	if units == nil {
		return v, nil
	}
	f, ok := units[unit]
	if !ok {
		return 0, errors.New("unknown unit " + strconv.Quote(unit))
	}
	return v * f, nil
}

// approxEq reports whether a and b agree to a relative tolerance.
func approxEq(a, b, rel float64) bool {
	return math.Abs(a-b) <= rel*math.Max(math.Abs(a), math.Abs(b))
}
