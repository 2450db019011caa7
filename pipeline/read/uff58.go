package read

// The layout of universal file dataset 58 below is written from memory of
// the published description of the format (the "universal file format"
// dataset 58 and 58b records), not from any program's reader.
//
//	    -1                     delimiter, I6
//	    58                     dataset number (58b ... for binary, see below)
//	record 1-5                 ID lines 1-5, 80A1 (1: description, 3: date/time)
//	record 6                   2(I5,I10),2(1X,10A1,I10,I4): function type,
//	                           function id, version, load case, response entity,
//	                           node, direction, reference entity, node, direction
//	record 7                   3I10,3E13.5: ordinate data type (2 real single,
//	                           4 real double, 5 complex single, 6 complex double),
//	                           number of values, abscissa spacing (1 even,
//	                           0 uneven), abscissa minimum, increment, z value
//	record 8-11                I10,3I5,2(1X,20A1): specific data type, length,
//	                           force and temperature unit exponents, axis label,
//	                           axis units label; for the abscissa, the ordinate
//	                           (numerator), the ordinate denominator, the z axis
//	record 12                  data: 6E13.5 per line (single), 4E20.12 (double);
//	                           uneven spacing interleaves abscissa values
//	    -1                     delimiter
//
// The binary variant writes "    58b" followed by I6 byte ordering (1 little
// endian, 2 big endian), I6 floating-point format (1 DEC VMS, 2 IEEE 754,
// 3 IBM 370), I12 number of ASCII lines that follow (11), I12 number of
// bytes of binary data after them and four unused fields; records 1-11 are
// ASCII lines and record 12 is raw binary values of the ordinate's
// precision.
//
// Function types (record 6, field 1): 0 general or unknown, 1 time
// response, 2 auto spectrum, 3 cross spectrum, 4 frequency response
// function, 5 transmissibility, 6 coherence, 7 auto correlation, 8 cross
// correlation, 9 power spectral density, 10 energy spectral density, 11
// probability density function, 12 spectrum, ... Specific data types
// (records 8-11, field 1): 0 unknown, 1 general, 2 stress, 3 strain, 5
// temperature, 6 heat flux, 8 displacement, 9 reaction force, 11 velocity,
// 12 acceleration, 13 excitation force, 15 pressure, 16 mass, 17 time, 18
// frequency, 19 rpm, 20 order.

import (
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"github.com/ringlog/ringlog/pipeline"
)

var uffFunctionTypes = map[int]string{
	0: "general", 1: "time response", 2: "auto spectrum", 3: "cross spectrum",
	4: "frequency response function", 5: "transmissibility", 6: "coherence",
	7: "auto correlation", 8: "cross correlation", 9: "power spectral density",
	10: "energy spectral density", 11: "probability density function", 12: "spectrum",
}

var uffDataTypes = map[int]string{
	0: "unknown", 1: "general", 2: "stress", 3: "strain", 5: "temperature", 6: "heat flux",
	8: "displacement", 9: "reaction force", 11: "velocity", 12: "acceleration",
	13: "excitation force", 15: "pressure", 16: "mass", 17: "time", 18: "frequency",
	19: "rpm", 20: "order",
}

const (
	uffDataAcceleration = 12
	uffDataForce        = 13
	uffDataTime         = 17
)

func uffFunctionName(t int) string {
	if s, ok := uffFunctionTypes[t]; ok {
		return s
	}
	return "function type " + strconv.Itoa(t)
}

// uffRecord is one dataset 58 as read.
type uffRecord struct {
	line       int // line of the dataset number
	binary     bool
	id         [5]string
	funcType   int
	ordType    int
	n          int
	even       bool
	dx, dxRes  float64 // abscissa increment and the place value of its last printed digit
	xmin       float64
	absType    int
	absUnit    string
	ordType9   int
	ordLabel   string
	ordUnit    string
	data       []float64
	meta       map[string]string
	skipReason string
}

// UFF58 reads the dataset 58 records of a universal file, ASCII or
// binary (58b). Every usable record becomes a channel: a time response
// (function type 1, or type 0 with a time abscissa) with real ordinate
// data and even abscissa spacing. Other datasets are skipped; other
// dataset 58 records (spectra, FRFs, complex or uneven data) are skipped
// and listed in Meta["uff_skipped"]. A file without a usable record is an
// error that lists why each record was skipped. The channel name is ID
// line 1 unless Options.Names gives them; the unit is the ordinate units
// label; a record whose ordinate is "excitation force" is the force
// channel unless Options say otherwise. name is used in errors and as
// Recording.Path.
func UFF58(r io.Reader, name string, opt Options) (*pipeline.Recording, error) {
	lr := newLineReader(r)
	var recs []*uffRecord
	found58 := false
	first := true
	for {
		line, _, err := lr.read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, lineErr(name, lr.line+1, err, "read error")
		}
		t := trimSpace(line)
		if len(t) == 0 {
			continue
		}
		if string(t) != "-1" {
			if first {
				return nil, lineErr(name, lr.line, ErrUnknownFormat, "unknown format: not a universal file (expected the \"    -1\" delimiter line, found %q)", clip(t))
			}
			return nil, lineErr(name, lr.line, nil, "expected the \"    -1\" delimiter line, found %q", clip(t))
		}
		first = false
		idl, _, err := lr.read()
		if err == io.EOF {
			break // a lone trailing delimiter
		}
		if err != nil {
			return nil, lineErr(name, lr.line+1, err, "read error")
		}
		f := strings.Fields(string(idl))
		if len(f) == 0 {
			return nil, lineErr(name, lr.line, nil, "missing dataset number after the \"-1\" line")
		}
		switch {
		case f[0] == "58":
			if len(f) > 1 && f[1] == "b" {
				found58 = true
				rec, err := readUFF58b(lr, name, f[2:])
				if err != nil {
					return nil, err
				}
				recs = append(recs, rec)
				continue
			}
			found58 = true
			rec, err := readUFF58ASCII(lr, name)
			if err != nil {
				return nil, err
			}
			recs = append(recs, rec)
		case f[0] == "58b":
			found58 = true
			rec, err := readUFF58b(lr, name, f[1:])
			if err != nil {
				return nil, err
			}
			recs = append(recs, rec)
		default:
			if _, err := strconv.Atoi(f[0]); err != nil {
				return nil, lineErr(name, lr.line, nil, "dataset number %q is not a number", clip(idl))
			}
			// Another dataset (units, header, geometry...): skip to its end.
			start := lr.line
			for {
				l, _, err := lr.read()
				if err == io.EOF {
					return nil, lineErr(name, start, nil, "dataset %s is not closed by a \"-1\" line (truncated file?)", f[0])
				}
				if err != nil {
					return nil, lineErr(name, lr.line+1, err, "read error")
				}
				if string(trimSpace(l)) == "-1" {
					break
				}
			}
		}
	}
	if first {
		return nil, fileErr(name, nil, "empty file")
	}
	if !found58 {
		return nil, fileErr(name, nil, "no dataset 58 (function record) in the file")
	}
	var use []*uffRecord
	var skipped []string
	for _, r := range recs {
		if r.skipReason != "" {
			skipped = append(skipped, fmt.Sprintf("line %d: %s", r.line, r.skipReason))
			continue
		}
		use = append(use, r)
	}
	if len(use) == 0 {
		return nil, fileErr(name, nil, "no usable time-response record in %d dataset 58 record(s): %s", len(recs), strings.Join(skipped, "; "))
	}
	if len(opt.Names) > 0 && len(opt.Names) != len(use) {
		return nil, fileErr(name, nil, "%d channel names configured for %d usable dataset 58 records", len(opt.Names), len(use))
	}
	rec := &pipeline.Recording{Path: name, Format: FormatUFF58, Meta: map[string]string{}}
	hints := make([]bool, len(use))
	taken := map[string]bool{}
	for i, u := range use {
		if u.binary {
			rec.Format = FormatUFF58b
		}
		nm := strings.TrimSpace(u.id[0])
		if len(opt.Names) > 0 {
			nm = opt.Names[i]
		} else {
			if nm == "" || strings.EqualFold(nm, "NONE") {
				nm = fmt.Sprintf("ch%d", i+1)
			}
			if taken[nm] {
				nm = fmt.Sprintf("%s_%d", nm, i+1)
			}
		}
		taken[nm] = true
		fs := 1 / u.dx
		if !(fs >= MinSampleRate && fs <= MaxSampleRate) {
			return nil, lineErr(name, u.line, nil, "record %q: abscissa increment %g s gives a sample rate of %g Hz, outside %g to %g Hz, the range this reader accepts",
				nm, u.dx, fs, MinSampleRate, MaxSampleRate)
		}
		unc := fs * (0.5*u.dxRes/u.dx + 1e-12)
		if r := math.Round(fs); math.Abs(fs-r) <= 1.5*unc {
			fs = r
		}
		if i > 0 {
			c0 := rec.Channels[0]
			if len(u.data) != len(c0.Samples) || !approxEq(fs, c0.SampleRate, 1e-9) {
				return nil, lineErr(name, u.line, nil, "record %q has %d values at %g Hz, record %q has %d at %g Hz; all time records of a file must match",
					nm, len(u.data), fs, c0.Name, len(c0.Samples), c0.SampleRate)
			}
			fs = c0.SampleRate
		}
		rec.Channels = append(rec.Channels, pipeline.Channel{Name: nm, Unit: u.ordUnit, SampleRate: fs, Samples: u.data})
		hints[i] = u.ordType9 == uffDataForce
		for k, v := range u.meta {
			rec.Meta[nm+"."+k] = v
		}
	}
	if len(skipped) > 0 {
		rec.Meta["uff_skipped"] = strings.Join(skipped, "; ")
	}
	if err := finish(rec, opt, hints); err != nil {
		return nil, err
	}
	return rec, nil
}

// readUFF58Header reads records 1-11 and decides whether the record is
// usable.
func readUFF58Header(lr *lineReader, name string, r *uffRecord) error {
	var h [11]string
	var hl [11]int
	for i := range h {
		l, _, err := lr.read()
		if err == io.EOF {
			return lineErr(name, r.line, nil, "dataset 58 ends after %d of its 11 header lines (truncated file?)", i)
		}
		if err != nil {
			return lineErr(name, lr.line+1, err, "read error")
		}
		if string(trimSpace(l)) == "-1" {
			return lineErr(name, lr.line, nil, "dataset 58 ends after %d of its 11 header lines", i)
		}
		h[i] = strings.TrimRight(toUTF8(l), " \t")
		hl[i] = lr.line
	}
	r.meta = map[string]string{}
	for i := 0; i < 5; i++ {
		r.id[i] = strings.TrimSpace(h[i])
		if r.id[i] != "" && !strings.EqualFold(r.id[i], "NONE") {
			r.meta["id"+strconv.Itoa(i+1)] = r.id[i]
		}
	}
	// Record 6.
	f6, err := uffRecord6(h[5])
	if err != nil {
		return lineErr(name, hl[5], nil, "record 6: %v", err)
	}
	r.funcType = f6.funcType
	r.meta["function_type"] = strconv.Itoa(f6.funcType)
	for _, kv := range f6.kv {
		if kv[1] != "" {
			r.meta[kv[0]] = kv[1]
		}
	}
	// Record 7: the fixed columns of 3I10,3E13.5 when they hold numbers
	// (I10 fields may touch: "         41234567890"), else free format.
	tok := fixedFields([]byte(h[6]), 10, 10, 10, 13, 13, 13)
	if len(tok) < 5 || !allNumbers(tok) {
		tok = splitNumbers([]byte(h[6]), nil)
	}
	var v7 [5]float64
	for i := 0; i < 5; i++ {
		if i >= len(tok) {
			return lineErr(name, hl[6], nil, "record 7: %d fields, need ordinate type, count, spacing, minimum and increment", len(tok))
		}
		x, ok := parseFortranFloat(tok[i])
		if !ok {
			return lineErr(name, hl[6], nil, "record 7: field %d %q is not a number", i+1, string(trimSpace(tok[i])))
		}
		if i < 3 && (x != math.Trunc(x) || math.Abs(x) > 1<<40) {
			return lineErr(name, hl[6], nil, "record 7: field %d %q is not an integer", i+1, string(trimSpace(tok[i])))
		}
		v7[i] = x
	}
	r.ordType, r.n, r.even = int(v7[0]), int(v7[1]), v7[2] == 1
	r.xmin, r.dx = v7[3], v7[4]
	r.dxRes = textResolution(tok[4])
	r.meta["ordinate_type"] = strconv.Itoa(r.ordType)
	r.meta["abscissa_min"] = strconv.FormatFloat(r.xmin, 'g', -1, 64)
	r.meta["abscissa_increment"] = strconv.FormatFloat(r.dx, 'g', -1, 64)
	if r.n <= 0 {
		return lineErr(name, hl[6], nil, "record 7: number of values is %d", r.n)
	}
	// Records 8 and 9.
	var absLabel, ordLabel string
	r.absType, absLabel, r.absUnit = uffAxis(h[7])
	r.ordType9, ordLabel, r.ordUnit = uffAxis(h[8])
	if absLabel != "" {
		r.meta["abscissa_label"] = absLabel
	}
	if r.absUnit != "" {
		r.meta["abscissa_unit"] = r.absUnit
	}
	if ordLabel != "" {
		r.meta["ordinate_label"] = ordLabel
	}
	r.ordLabel = ordLabel
	if r.ordType9 >= 0 {
		r.meta["ordinate_data_type"] = strconv.Itoa(r.ordType9)
		if s, ok := uffDataTypes[r.ordType9]; ok {
			r.meta["ordinate_data_type"] += " (" + s + ")"
		}
	}

	// Usable?
	timeAbs := r.funcType == 1 || (r.funcType == 0 && r.absType == uffDataTime)
	scale := 1.0
	switch strings.ToLower(r.absUnit) {
	case "", "s", "sec", "secs", "second", "seconds":
	case "ms":
		scale = 1e-3
	default:
		if timeAbs {
			r.skipReason = fmt.Sprintf("abscissa unit %q is not a time unit", r.absUnit)
			return nil
		}
	}
	switch {
	case !timeAbs:
		r.skipReason = fmt.Sprintf("%s (function type %d), not a time response", uffFunctionName(r.funcType), r.funcType)
	case r.ordType == 5 || r.ordType == 6:
		r.skipReason = fmt.Sprintf("complex ordinate data (type %d)", r.ordType)
	case r.ordType != 2 && r.ordType != 4:
		r.skipReason = fmt.Sprintf("unknown ordinate data type %d", r.ordType)
	case !r.even:
		r.skipReason = "uneven abscissa spacing"
	case !(r.dx > 0) || math.IsInf(r.dx, 0):
		return lineErr(name, hl[6], nil, "record 7: abscissa increment %g s gives a zero or negative sample rate", r.dx)
	}
	r.dx *= scale
	r.dxRes *= scale
	return nil
}

func readUFF58ASCII(lr *lineReader, name string) (*uffRecord, error) {
	r := &uffRecord{line: lr.line}
	if err := readUFF58Header(lr, name, r); err != nil {
		return nil, err
	}
	r.meta["format"] = "ascii"
	width := 13
	if r.ordType == 4 || r.ordType == 6 {
		width = 20
	}
	if r.skipReason == "" {
		r.data = make([]float64, 0, min(r.n, 1<<16))
	}
	var tok [][]byte
	var vals []float64
	for {
		l, _, err := lr.read()
		if err == io.EOF {
			return nil, lineErr(name, r.line, nil, "dataset 58 is not closed by a \"-1\" line (truncated file?)")
		}
		if err != nil {
			return nil, lineErr(name, lr.line+1, err, "read error")
		}
		t := trimSpace(l)
		if string(t) == "-1" {
			break
		}
		if r.skipReason != "" || len(t) == 0 {
			continue
		}
		var bad int
		vals, tok, bad = parseDataLine(l, width, tok, vals[:0])
		if bad >= 0 {
			return nil, lineErr(name, lr.line, nil, "value %d %q is not a number", bad+1, string(trimSpace(tok[bad])))
		}
		for i, v := range vals {
			if v-v != 0 {
				return nil, lineErr(name, lr.line, nil, "value %d is %g", i+1, v)
			}
		}
		if len(r.data)+len(vals) > r.n {
			return nil, lineErr(name, lr.line, nil, "more values than the %d the header (line %d) announces", r.n, r.line+7)
		}
		r.data = append(r.data, vals...)
	}
	if r.skipReason == "" && len(r.data) != r.n {
		return nil, lineErr(name, lr.line, nil, "dataset 58 holds %d values, the header (line %d) announces %d", len(r.data), r.line+7, r.n)
	}
	return r, nil
}

// readUFF58b reads a binary record; f holds the fields of the "58b" line
// after the "b".
func readUFF58b(lr *lineReader, name string, f []string) (*uffRecord, error) {
	r := &uffRecord{line: lr.line, binary: true}
	var h [4]int64
	for i := range h {
		if i >= len(f) {
			return nil, lineErr(name, lr.line, nil, "58b line: %d fields, need byte order, float format, ASCII line count and byte count", len(f))
		}
		v, err := strconv.ParseInt(f[i], 10, 64)
		if err != nil {
			return nil, lineErr(name, lr.line, nil, "58b line: field %q is not an integer", f[i])
		}
		h[i] = v
	}
	order, ffmt, nASCII, nBytes := h[0], h[1], h[2], h[3]
	if nASCII != 11 {
		return nil, lineErr(name, lr.line, nil, "58b line: %d ASCII header lines announced, dataset 58 has 11", nASCII)
	}
	if nBytes < 0 {
		return nil, lineErr(name, lr.line, nil, "58b line: negative byte count %d", nBytes)
	}
	if err := readUFF58Header(lr, name, r); err != nil {
		return nil, err
	}
	r.meta["format"] = "binary"
	start := lr.next
	if r.skipReason == "" {
		var bo binary.ByteOrder
		switch order {
		case 1:
			bo = binary.LittleEndian
			r.meta["byte_order"] = "little endian"
		case 2:
			bo = binary.BigEndian
			r.meta["byte_order"] = "big endian"
		default:
			return nil, lineErr(name, r.line, nil, "58b line: byte ordering %d (1 little endian, 2 big endian)", order)
		}
		if ffmt != 2 {
			return nil, lineErr(name, r.line, nil, "58b line: floating-point format %d is not supported (2, IEEE 754, only)", ffmt)
		}
		size := int64(4)
		if r.ordType == 4 {
			size = 8
		}
		need := int64(r.n) * size
		if nBytes < need {
			return nil, lineErr(name, r.line, nil, "58b line: %d bytes announced, but %d values of %d bytes need %d", nBytes, r.n, size, need)
		}
		r.data = make([]float64, 0, min(r.n, 1<<16))
		buf := make([]byte, 64<<10)
		for got := int64(0); got < need; {
			k := min(int64(len(buf)), need-got)
			n, err := lr.readFull(buf[:k])
			for i := 0; i+int(size) <= n; i += int(size) {
				var v float64
				if size == 4 {
					v = float64(math.Float32frombits(bo.Uint32(buf[i:])))
				} else {
					v = math.Float64frombits(bo.Uint64(buf[i:]))
				}
				if v-v != 0 {
					return nil, offErr(name, start+got+int64(i), nil, "binary value %d is %g", len(r.data)+1, v)
				}
				r.data = append(r.data, v)
			}
			got += int64(n)
			if err != nil {
				return nil, offErr(name, lr.next, nil, "truncated binary data: %d bytes announced from byte %d, the file ends after %d", nBytes, start, got)
			}
		}
		nBytes -= need
	}
	if err := lr.discard(nBytes); err != nil {
		return nil, offErr(name, lr.next, nil, "truncated binary data: %d bytes announced from byte %d, the file ends at byte %d", nBytes, start, lr.next)
	}
	for {
		l, _, err := lr.read()
		if err == io.EOF {
			return nil, offErr(name, lr.next, nil, "binary dataset 58 is not closed by a \"-1\" line (truncated file?)")
		}
		if err != nil {
			return nil, offErr(name, lr.next, err, "read error")
		}
		t := trimSpace(l)
		if len(t) == 0 {
			continue
		}
		if string(t) != "-1" {
			return nil, offErr(name, lr.off, nil, "after the binary data: expected the \"    -1\" delimiter line, found %q", clip(t))
		}
		return r, nil
	}
}

type record6 struct {
	funcType int
	kv       [][2]string
}

// uffRecord6 reads record 6: whitespace-separated when it splits into the
// ten fields, else by the fixed columns of 2(I5,I10),2(1X,10A1,I10,I4).
func uffRecord6(s string) (record6, error) {
	keys := []string{"function_type", "function_id", "version", "load_case", "response_entity",
		"response_node", "response_direction", "reference_entity", "reference_node", "reference_direction"}
	f := strings.Fields(s)
	if len(f) != 10 {
		f = f[:0]
		for _, c := range [][2]int{{0, 5}, {5, 15}, {15, 20}, {20, 30}, {31, 41}, {41, 51}, {51, 55}, {56, 66}, {66, 76}, {76, 80}} {
			f = append(f, strings.TrimSpace(substr(s, c[0], c[1])))
		}
	}
	var out record6
	if len(f) == 0 || f[0] == "" {
		return out, fmt.Errorf("no function type")
	}
	t, err := strconv.Atoi(f[0])
	if err != nil {
		return out, fmt.Errorf("function type %q is not an integer", f[0])
	}
	out.funcType = t
	for i := 1; i < len(f) && i < len(keys); i++ {
		out.kv = append(out.kv, [2]string{keys[i], f[i]})
	}
	return out, nil
}

// uffAxis reads records 8-11: the specific data type (-1 when
// unreadable), the axis label and the units label ("" for NONE).
func uffAxis(s string) (dataType int, label, unit string) {
	dataType = -1
	if len(s) >= 26 {
		if v, err := strconv.Atoi(strings.TrimSpace(s[:10])); err == nil {
			dataType = v
			label = strings.TrimSpace(substr(s, 26, 46))
			unit = strings.TrimSpace(substr(s, 47, 67))
			return dataType, none(label), none(unit)
		}
	}
	f := strings.Fields(s)
	if len(f) > 0 {
		if v, err := strconv.Atoi(f[0]); err == nil {
			dataType = v
		}
	}
	if len(f) > 4 {
		label = f[4]
	}
	if len(f) > 5 {
		unit = f[5]
	}
	return dataType, none(label), none(unit)
}

func none(s string) string {
	if strings.EqualFold(s, "NONE") {
		return ""
	}
	return s
}

func substr(s string, a, b int) string {
	if a >= len(s) {
		return ""
	}
	return s[a:min(b, len(s))]
}

// clip shortens a line for an error message.
func clip(b []byte) string {
	if len(b) > 40 {
		return toUTF8(b[:40]) + "..."
	}
	return toUTF8(b)
}

// allNumbers reports whether every field is one number (no inner blanks).
func allNumbers(f [][]byte) bool {
	for _, b := range f {
		t := trimSpace(b)
		if len(t) == 0 || hasSpace(t) {
			return false
		}
		if _, ok := parseFortranFloat(t); !ok {
			return false
		}
	}
	return true
}

// fixedFields cuts a line into fields of the given widths.
func fixedFields(line []byte, widths ...int) [][]byte {
	var out [][]byte
	at := 0
	for _, w := range widths {
		if at >= len(line) {
			break
		}
		e := min(at+w, len(line))
		out = append(out, line[at:e])
		at = e
	}
	return out
}

// parseDataLine parses the numbers of one data line into dst. Fields of
// the given width are tried first (Fortran E fields may touch each other:
// "-1.234500E+00-2.345600E+00"); when the line does not split that way
// it is split on white space and, inside a piece, before a sign that
// follows a digit or a point. bad is the index in toks of the first
// field that is not a number, or -1.
func parseDataLine(line []byte, width int, tok [][]byte, dst []float64) (vals []float64, toks [][]byte, bad int) {
	n0 := len(dst)
	if width > 0 {
		if tok, ok := fixedSplit(line, width, tok[:0]); ok {
			good := true
			for _, b := range tok {
				v, ok := parseFortranFloat(b)
				if !ok {
					good = false
					break
				}
				dst = append(dst, v)
			}
			if good {
				return dst, tok, -1
			}
			dst = dst[:n0]
		}
	}
	tok = splitNumbers(line, tok[:0])
	for i, b := range tok {
		v, ok := parseFortranFloat(b)
		if !ok {
			return dst, tok, i
		}
		dst = append(dst, v)
	}
	return dst, tok, -1
}

// fixedSplit cuts a line into fields of the given width; ok is false
// when the line is not a whole number of non-blank fields.
func fixedSplit(line []byte, width int, dst [][]byte) ([][]byte, bool) {
	for len(line) > 0 && (line[len(line)-1] == ' ' || line[len(line)-1] == '\t') {
		line = line[:len(line)-1]
	}
	if len(line) == 0 || len(line)%width != 0 {
		return dst, false
	}
	for at := 0; at < len(line); at += width {
		f := trimSpace(line[at : at+width])
		if len(f) == 0 || hasSpace(f) {
			return dst, false
		}
		dst = append(dst, f)
	}
	return dst, true
}

// splitNumbers cuts a line of numbers on white space and, inside a
// piece, before a sign that follows a digit or a point (touching Fortran
// E fields).
func splitNumbers(line []byte, dst [][]byte) [][]byte {
	i := 0
	for i < len(line) {
		for i < len(line) && (line[i] == ' ' || line[i] == '\t') {
			i++
		}
		if i >= len(line) {
			break
		}
		s := i
		for i < len(line) && line[i] != ' ' && line[i] != '\t' {
			if i > s && (line[i] == '+' || line[i] == '-') {
				p := line[i-1]
				if (p >= '0' && p <= '9') || p == '.' {
					break
				}
			}
			i++
		}
		dst = append(dst, line[s:i])
	}
	return dst
}

func hasSpace(b []byte) bool {
	for _, c := range b {
		if c == ' ' || c == '\t' {
			return true
		}
	}
	return false
}

// parseFortranFloat parses a number as Fortran writes it: E or D
// exponent, or a three-digit exponent without the letter
// ("0.12345-100").
func parseFortranFloat(b []byte) (float64, bool) {
	b = trimSpace(b)
	if v, _, ok := fastFloat(b, false); ok {
		return v, true
	}
	if len(b) == 0 || len(b) > 40 {
		return 0, false
	}
	var buf [48]byte
	n := 0
	hasE := false
	for i, c := range b {
		switch {
		case c == 'd' || c == 'D' || c == 'e' || c == 'E':
			c = 'E'
			hasE = true
		case (c == '+' || c == '-') && i > 0 && !hasE && b[i-1] >= '0' && b[i-1] <= '9':
			buf[n] = 'E'
			n++
			hasE = true
		}
		buf[n] = c
		n++
	}
	v, err := strconv.ParseFloat(string(buf[:n]), 64)
	if err != nil {
		return 0, false
	}
	return v, true
}

// discard skips n raw bytes.
func (lr *lineReader) discard(n int64) error {
	for n > 0 {
		k := min(n, 1<<30)
		m, err := lr.br.Discard(int(k))
		lr.next += int64(m)
		n -= int64(m)
		if err != nil {
			return err
		}
	}
	return nil
}
