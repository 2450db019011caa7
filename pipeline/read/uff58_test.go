package read

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
)

// uffSpec builds dataset 58 text following the record formats of the
// published layout (see the comment at the top of uff58.go).
type uffSpec struct {
	id1, id3          string
	funcType, ordType int
	n, even           int
	dx                float64
	absType           int
	absUnit           string
	ordData           int
	ordLabel, ordUnit string
	node, dir         int
}

func (s uffSpec) header() string {
	if s.absUnit == "" {
		s.absUnit = "s"
	}
	if s.id3 == "" {
		s.id3 = "NONE"
	}
	var b strings.Builder
	fmt.Fprintf(&b, "%s\nNONE\n%s\nNONE\nNONE\n", s.id1, s.id3)
	// record 6: 2(I5,I10),2(1X,10A1,I10,I4)
	fmt.Fprintf(&b, "%5d%10d%5d%10d %-10s%10d%4d %-10s%10d%4d\n", s.funcType, 7, 1, 0, "BEAM", s.node, s.dir, "NONE", 0, 0)
	// record 7: 3I10,3E13.5
	fmt.Fprintf(&b, "%10d%10d%10d%13.5E%13.5E%13.5E\n", s.ordType, s.n, s.even, 0.0, s.dx, 0.0)
	// records 8-11: I10,3I5,2(1X,20A1)
	fmt.Fprintf(&b, "%10d%5d%5d%5d %-20s %-20s\n", s.absType, 0, 0, 0, "Time", s.absUnit)
	fmt.Fprintf(&b, "%10d%5d%5d%5d %-20s %-20s\n", s.ordData, 1, 0, 0, s.ordLabel, s.ordUnit)
	fmt.Fprintf(&b, "%10d%5d%5d%5d %-20s %-20s\n", 0, 0, 0, 0, "NONE", "NONE")
	fmt.Fprintf(&b, "%10d%5d%5d%5d %-20s %-20s\n", 0, 0, 0, 0, "NONE", "NONE")
	return b.String()
}

func (s uffSpec) ascii(data string) string {
	return "    -1\n    58\n" + s.header() + data + "    -1\n"
}

func (s uffSpec) binary(order, ffmt int, nbytes int, data []byte) string {
	return "    -1\n" + fmt.Sprintf("%6s%1s%6d%6d%12d%12d%6d%6d%12d%12d\n", "58", "b", order, ffmt, 11, nbytes, 0, 0, 0, 0) +
		s.header() + string(data) + "    -1\n"
}

func timeSpec(name string, n int) uffSpec {
	return uffSpec{id1: name, funcType: 1, ordType: 4, n: n, even: 1, dx: 1e-3, absType: 17, ordData: 12, ordLabel: name, ordUnit: "m/s^2", node: 12, dir: 3}
}

// TestUFFHandWritten reads a file typed after the published layout:
// other datasets (151 header, 164 units) around, CRLF line ends, single
// precision E13.5 fields that touch, a D exponent, a three-digit exponent
// without its letter, free-format lines, a frequency response record to
// skip and a general-function record with a time abscissa.
func TestUFFHandWritten(t *testing.T) {
	acc := uffSpec{id1: "Accel P12+Z", id3: "02-DEC-25 10:15:00", funcType: 1, ordType: 2, n: 13, even: 1, dx: 1e-3,
		absType: 17, ordData: 12, ordLabel: "Acceleration", ordUnit: "m/s^2", node: 12, dir: 3}
	accData := " 1.00000E+00-2.50000E+00 1.25000E-01-1.23450E+00-2.34560E+00 3.00000E-01\n" +
		"-1.234500E+00-2.345600E+00\n" +
		"  1.23450-101 -1.23450D+00\n" +
		"0.5 -0.5   7\n"
	accWant := []float64{1, -2.5, 0.125, -1.2345, -2.3456, 0.3, -1.2345, -2.3456, 1.2345e-101, -1.2345, 0.5, -0.5, 7}
	frf := uffSpec{id1: "FRF P12+Z/P1+Z", funcType: 4, ordType: 5, n: 3, even: 1, dx: 0.5, absType: 18, absUnit: "Hz", ordData: 12, ordLabel: "Accelerance", ordUnit: "m/s^2/N"}
	frfData := " 1.00000E+00 0.00000E+00 2.00000E+00 1.00000E+00 3.00000E+00-1.00000E+00\n"
	ref := uffSpec{id1: "NONE", funcType: 0, ordType: 4, n: 13, even: 1, dx: 1e-3, absType: 17, ordData: 13, ordLabel: "Force", ordUnit: "N", node: 1, dir: -3}
	var refData strings.Builder
	for i := 0; i < 13; i++ {
		fmt.Fprintf(&refData, "%20.12E", float64(i)*0.25)
		if i%4 == 3 || i == 12 {
			refData.WriteString("\n")
		}
	}
	file := "    -1\n   151\nbracket.unv\nNONE\nmade by hand\n    -1\n" +
		"    -1\n   164\n         1  SI - mks (Newton)  2\n  1.00000000000000000D+00  1.00000000000000000D+00  1.00000000000000000D+00\n  2.73150000000000000D+02\n    -1\n" +
		acc.ascii(accData) + frf.ascii(frfData) + ref.ascii(refData.String())
	file = strings.ReplaceAll(file, "\n", "\r\n")
	rec, err := UFF58(strings.NewReader(file), "hand.unv", Options{})
	if err != nil {
		t.Fatal(err)
	}
	checkConsistent(t, rec)
	if rec.Format != FormatUFF58 || len(rec.Channels) != 2 {
		t.Fatalf("format %q, %d channels", rec.Format, len(rec.Channels))
	}
	a, f := rec.Channels[0], rec.Channels[1]
	if a.Name != "Accel P12+Z" || a.Unit != "m/s^2" || a.Role != pipeline.RoleResponse || a.SampleRate != 1000 {
		t.Errorf("accel channel %+v", a)
	}
	// Single precision text: six significant digits.
	floatsNear(t, "accel", a.Samples, accWant, 0, 1e-15)
	if f.Name != "ch2" || f.Unit != "N" || f.Role != pipeline.RoleForce {
		t.Errorf("force channel %+v (a record of 'excitation force' is the force channel)", f)
	}
	for i, v := range f.Samples {
		if v != float64(i)*0.25 {
			t.Fatalf("force[%d] = %g", i, v)
		}
	}
	for k, v := range map[string]string{
		"Accel P12+Z.id1": "Accel P12+Z", "Accel P12+Z.id3": "02-DEC-25 10:15:00", "Accel P12+Z.function_type": "1",
		"Accel P12+Z.response_node": "12", "Accel P12+Z.response_direction": "3", "Accel P12+Z.response_entity": "BEAM",
		"Accel P12+Z.function_id": "7", "Accel P12+Z.ordinate_data_type": "12 (acceleration)", "ch2.response_direction": "-3",
		"ch2.format": "ascii", "Accel P12+Z.abscissa_unit": "s",
	} {
		if rec.Meta[k] != v {
			t.Errorf("Meta[%q] = %q, want %q", k, rec.Meta[k], v)
		}
	}
	if s := rec.Meta["uff_skipped"]; !strings.Contains(s, "frequency response function (function type 4)") {
		t.Errorf("uff_skipped = %q", s)
	}
}

func TestUFFRoundTrip(t *testing.T) {
	x := make([]float64, 257)
	y := make([]float64, 257)
	for i := range x {
		x[i] = 3 * math.Exp(-0.01*float64(i)) * math.Sin(0.3*float64(i))
		y[i] = math.Pow(10, float64(i%40-20)) * math.Cos(float64(i))
	}
	y[5] = -1.234567890123e-150 // three-digit exponent: fields touch
	for _, fs := range []float64{2048, 25600, 1000, 3000, 51200, 10} {
		rec := &pipeline.Recording{Channels: []pipeline.Channel{
			{Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: fs, Samples: x},
			{Name: "hammer tip", Unit: "N", Role: pipeline.RoleForce, SampleRate: fs, Samples: y},
		}}
		for _, c := range []struct {
			bin, single bool
			rel         float64
			format      string
		}{
			{false, false, 5e-13, FormatUFF58},  // E20.12: 13 significant digits
			{true, false, 0, FormatUFF58b},      // raw float64
			{false, true, 5e-6, FormatUFF58},    // E13.5: 6 significant digits
			{true, true, 0x1p-24, FormatUFF58b}, // raw float32
		} {
			var b bytes.Buffer
			if err := writeUFF58(&b, rec, c.bin, c.single); err != nil {
				t.Fatal(err)
			}
			got, err := UFF58(&b, "rt.uff", Options{})
			if err != nil {
				t.Fatalf("fs %g %+v: %v", fs, c, err)
			}
			checkConsistent(t, got)
			if got.Format != c.format || len(got.Channels) != 2 {
				t.Fatalf("%+v: format %q, %d channels", c, got.Format, len(got.Channels))
			}
			for i, ch := range got.Channels {
				w := rec.Channels[i]
				// The increment is printed with six digits (E13.5): whole
				// rates must still come back exactly.
				if ch.Name != w.Name || ch.Unit != w.Unit || ch.Role != w.Role || ch.SampleRate != fs {
					t.Errorf("fs %g %+v: channel %q %q %q %.9g Hz", fs, c, ch.Name, ch.Unit, ch.Role, ch.SampleRate)
				}
				want := w.Samples
				if c.single {
					want = make([]float64, len(w.Samples))
					for k, v := range w.Samples {
						want[k] = float64(float32(v)) // what single precision can hold
						if v != 0 && math.Abs(v) < 0x1p-126 {
							want[k] = v // the text form keeps tiny values; float32 flushes them
						}
					}
					if c.bin {
						for k, v := range w.Samples {
							want[k] = float64(float32(v))
						}
						floatsNear(t, ch.Name, ch.Samples, want, 0, 0)
						continue
					}
					floatsNear(t, ch.Name, ch.Samples, w.Samples, 0, c.rel)
					continue
				}
				floatsNear(t, ch.Name, ch.Samples, want, 0, c.rel)
			}
		}
	}
}

func TestUFFBinaryVariants(t *testing.T) {
	vals := []float64{1.5, -2.25, 1e-3, 12345.678}
	// Big-endian double precision, with a line break before the closing
	// delimiter.
	var be []byte
	for _, v := range vals {
		be = binary.BigEndian.AppendUint64(be, math.Float64bits(v))
	}
	s := timeSpec("acc", 4)
	file := strings.Replace(s.binary(2, 2, len(be), be), string(be)+"    -1", string(be)+"\n    -1", 1)
	rec, err := UFF58(strings.NewReader(file), "be.uff", Options{})
	if err != nil {
		t.Fatal(err)
	}
	floatsNear(t, "acc", rec.Channels[0].Samples, vals, 0, 0)
	if rec.Format != FormatUFF58b || rec.Meta["acc.byte_order"] != "big endian" {
		t.Errorf("format %q meta %v", rec.Format, rec.Meta)
	}
	// Little-endian single precision; "58b" written as one token.
	var le []byte
	for _, v := range vals {
		le = binary.LittleEndian.AppendUint32(le, math.Float32bits(float32(v)))
	}
	s.ordType = 2
	file = strings.Replace(s.binary(1, 2, len(le), le), "    58b", "   58b", 1)
	rec, err = UFF58(strings.NewReader(file), "le.uff", Options{})
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range rec.Channels[0].Samples {
		if v != float64(float32(vals[i])) {
			t.Errorf("sample %d = %g, want %g", i, v, float64(float32(vals[i])))
		}
	}
}

func TestUFFSampleRate(t *testing.T) {
	// 1/increment, snapped to whole Hz only within the six printed digits.
	for dx, want := range map[string]float64{
		"4.88281E-04": 2048, "3.90625E-05": 25600, "1.00000E-03": 1000, "3.33333E-04": 3000,
		"0.10000E+00": 10, "3.90549E-04": 1 / 3.90549e-4, "2.00000E+00": 0.5,
	} {
		s := timeSpec("a", 2).ascii("  1.000000000000E+00  2.000000000000E+00\n")
		s = strings.Replace(s, fmt.Sprintf("%13.5E", 1e-3), fmt.Sprintf("%13s", dx), 1)
		rec, err := UFF58(strings.NewReader(s), "fs.uff", Options{})
		if err != nil {
			t.Fatalf("%s: %v", dx, err)
		}
		if got := rec.Channels[0].SampleRate; got != want {
			t.Errorf("increment %s: %.12g Hz, want %.12g", dx, got, want)
		}
	}
	// Abscissa in milliseconds.
	sp := timeSpec("a", 2)
	sp.dx, sp.absUnit = 0.5, "ms"
	rec, err := UFF58(strings.NewReader(sp.ascii("1 2\n")), "ms.uff", Options{})
	if err != nil || rec.Channels[0].SampleRate != 2000 {
		t.Fatalf("ms abscissa: %v %+v", err, rec)
	}
}

func TestUFFOptions(t *testing.T) {
	file := timeSpec("a1", 2).ascii("1 2\n") + timeSpec("a2", 2).ascii("3 4\n") + timeSpec("a1", 2).ascii("5 6\n")
	rec, err := UFF58(strings.NewReader(file), "o.uff", Options{})
	if err != nil {
		t.Fatal(err)
	}
	if n := []string{rec.Channels[0].Name, rec.Channels[1].Name, rec.Channels[2].Name}; n[0] != "a1" || n[1] != "a2" || n[2] != "a1_3" {
		t.Errorf("names %q", n)
	}
	rec, err = UFF58(strings.NewReader(file), "o.uff", Options{Names: []string{"x", "y", "z"}, ForceChannel: "z", Sensitivity: map[string]float64{"y": 2}})
	if err != nil {
		t.Fatal(err)
	}
	if rec.Channels[2].Name != "z" || rec.Channels[2].Role != pipeline.RoleForce || rec.Channels[1].Samples[1] != 2 {
		t.Errorf("options not applied: %+v", rec.Channels)
	}
	_, err = UFF58(strings.NewReader(file), "o.uff", Options{Names: []string{"x"}})
	wantErr(t, err, "o.uff", 0, "1 channel names configured for 3 usable")
}

func TestUFFErrors(t *testing.T) {
	ok := timeSpec("acc", 3)
	data3 := "  1.000000000000E+00  2.000000000000E+00  3.000000000000E+00\n"
	frf := uffSpec{id1: "frf", funcType: 4, ordType: 6, n: 1, even: 1, dx: 1, absType: 18, absUnit: "Hz", ordData: 12}
	uneven := ok
	uneven.even = 0
	complexTime := ok
	complexTime.ordType = 5
	zeroDX := ok
	zeroDX.dx = 0
	hz := ok
	hz.absUnit = "Hz"
	var f8 []byte
	for i := 0; i < 3; i++ {
		f8 = binary.LittleEndian.AppendUint64(f8, math.Float64bits(float64(i)))
	}
	binOK := ok.binary(1, 2, 24, f8)
	cases := []struct {
		label, in string
		line      int // -1: not checked
		frags     []string
	}{
		{"empty", "", 0, []string{"empty file"}},
		{"not a universal file", "time,accel\n0,1\n", 1, []string{"unknown format", "not a universal file"}},
		{"no dataset 58", "    -1\n   151\nx\n    -1\n", 0, []string{"no dataset 58"}},
		{"only FRF", frf.ascii(" 1.0 2.0\n"), 0, []string{"no usable time-response record", "line 2: frequency response function (function type 4)"}},
		{"uneven", uneven.ascii(data3), 0, []string{"uneven abscissa spacing"}},
		{"complex", complexTime.ascii(data3), 0, []string{"complex ordinate data (type 5)"}},
		{"abscissa in Hz", hz.ascii(data3), 0, []string{`abscissa unit "Hz" is not a time unit`}},
		{"zero increment", zeroDX.ascii(data3), 9, []string{"zero or negative sample rate"}},
		{"too few values", ok.ascii("  1.0  2.0\n"), 15, []string{"holds 2 values, the header (line 9) announces 3"}},
		{"too many values", ok.ascii("1 2 3 4\n"), 14, []string{"more values than the 3"}},
		{"bad value", ok.ascii("1 2x 3\n"), 14, []string{`value 2 "2x" is not a number`}},
		{"NaN value", ok.ascii("1 NaN 3\n"), 14, []string{"value 2 is NaN"}},
		{"not closed", strings.TrimSuffix(ok.ascii(data3), "    -1\n"), 2, []string{"not closed", "truncated"}},
		{"header cut", "    -1\n    58\nacc\nNONE\nNONE\n    -1\n", 6, []string{"ends after 3 of its 11 header lines"}},
		{"header cut at end", "    -1\n    58\nacc\nNONE\n", 2, []string{"ends after 2 of its 11 header lines"}},
		{"bad record 6", strings.Replace(ok.ascii(data3), "    1         7", "    x         7", 1), 8, []string{"record 6", "not an integer"}},
		{"touching I10 fields", strings.Replace(ok.ascii(data3), fmt.Sprintf("%10d%10d", 4, 3), fmt.Sprintf("%10d%10d", 4, 1234567890), 1), 15, []string{"holds 3 values, the header (line 9) announces 1234567890"}},
		{"bad record 7", strings.Replace(ok.ascii(data3), fmt.Sprintf("%10d%10d", 4, 3), fmt.Sprintf("%10d%10s", 4, "three"), 1), 9, []string{"record 7"}},
		{"missing delimiter", "    -1\n    58\n" + ok.header() + data3 + "garbage\n", 15, []string{"not a number"}},
		{"text after dataset", ok.ascii(data3) + "hello\n", 16, []string{`expected the "    -1" delimiter line, found "hello"`}},
		{"lengths differ", ok.ascii(data3) + timeSpec("b", 2).ascii("1 2\n"), 17, []string{"all time records of a file must match"}},
		{"binary truncated", binOK[:len(binOK)-20], -1, []string{"truncated binary data", "24 bytes announced"}},
		{"binary no delimiter", strings.TrimSuffix(binOK, "    -1\n"), -1, []string{"not closed"}},
		{"binary float format", ok.binary(1, 3, 24, f8), 2, []string{"floating-point format 3"}},
		{"binary byte order", ok.binary(7, 2, 24, f8), 2, []string{"byte ordering 7"}},
		{"binary too few bytes", ok.binary(1, 2, 16, f8[:16]), 2, []string{"16 bytes announced", "need 24"}},
		{"binary ascii lines", strings.Replace(binOK, "          11", "          12", 1), 2, []string{"12 ASCII header lines"}},
		{"binary NaN", ok.binary(1, 2, 24, binary.LittleEndian.AppendUint64(f8[:16], math.Float64bits(math.Inf(1)))), -1, []string{"binary value 3 is +Inf"}},
	}
	for _, c := range cases {
		t.Run(c.label, func(t *testing.T) {
			rec, err := UFF58(strings.NewReader(c.in), "shot.unv", Options{})
			if err == nil {
				t.Fatalf("no error; read %+v", rec)
			}
			wantErr(t, err, "shot.unv", c.line, c.frags...)
		})
	}
	_, err := UFF58(strings.NewReader("\x00\x01garbage"), "g.uff", Options{})
	if !errors.Is(err, ErrUnknownFormat) {
		t.Errorf("%v does not wrap ErrUnknownFormat", err)
	}
	// A truncated binary record names the byte where the data ran out.
	_, err = UFF58(strings.NewReader(binOK[:len(binOK)-20]), "b.uff", Options{})
	var e *Error
	if errors.As(err, &e) && e.Offset != int64(len(binOK)-20) {
		t.Errorf("offset %d, want %d", e.Offset, len(binOK)-20)
	}
}

// TestUFFFreeFormat: writers that separate the header fields by single
// spaces instead of the fixed columns.
func TestUFFFreeFormat(t *testing.T) {
	in := "-1\n58\nacc\nNONE\nNONE\nNONE\nNONE\n1 0 0 0 NONE 5 3 NONE 0 0\n4 3 1 0.0 0.001 0.0\n" +
		"17 0 0 0 Time s\n12 0 0 0 Accel g\n0 0 0 0 NONE NONE\n0 0 0 0 NONE NONE\n1 2 3\n-1\n"
	rec, err := UFF58(strings.NewReader(in), "free.uff", Options{})
	if err != nil {
		t.Fatal(err)
	}
	c := rec.Channels[0]
	if c.SampleRate != 1000 || c.Unit != "g" || rec.Meta["acc.response_node"] != "5" || rec.Meta["acc.ordinate_label"] != "Accel" {
		t.Errorf("%+v %v", c, rec.Meta)
	}
	floatsNear(t, "acc", c.Samples, []float64{1, 2, 3}, 0, 0)
}
