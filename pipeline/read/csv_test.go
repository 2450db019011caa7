package read

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
)

func TestCSVDelimitersAndDecimalComma(t *testing.T) {
	want := map[string][]float64{"accel": {1.5, -3.5, 0.001}, "force": {2, 4, 0}}
	cases := map[string]string{
		"comma":                   "time,accel,force\n0,1.5,2\n0.001,-3.5,4\n0.002,1e-3,0\n",
		"semicolon decimal comma": "time;accel;force\n0;1,5;2\n0,001;-3,5;4\n0,002;1e-3;0\n",
		"semicolon decimal point": "time;accel;force\n0;1.5;2\n0.001;-3.5;4\n0.002;0.001;0\n",
		"tab decimal comma":       "time\taccel\tforce\n0\t1,5\t2\n0,001\t-3,5\t4\n0,002\t0,001\t0\n",
		"tab decimal point":       "time\taccel\tforce\n0\t1.5\t2\n0.001\t-3.5\t4\n0.002\t0.001\t0\n",
		"CRLF, BOM, spaces":       "\xef\xbb\xbftime , accel , force\r\n 0 , 1.5 , 2\r\n0.001, -3.5,4 \r\n0.002,0.001,0\r\n",
		"quoted":                  "\"time\",\"accel\",\"force\"\n\"0\",\"1.5\",\"2\"\n\"0.001\",\"-3.5\",\"4\"\n\"0.002\",\"0.001\",\"0\"\n",
		"trailing delimiter":      "time;accel;force;\n0;1,5;2;\n0,001;-3,5;4;\n0,002;0,001;0;\n",
		"no final newline":        "time,accel,force\n0,1.5,2\n0.001,-3.5,4\n0.002,1e-3,0",
		"blank and comment rows":  "\n# made by hand\n\ntime,accel,force\n0,1.5,2\n\n0.001,-3.5,4\n# a note\n0.002,1e-3,0\n\n",
	}
	for label, in := range cases {
		t.Run(label, func(t *testing.T) {
			rec, err := CSV(strings.NewReader(in), "x.csv", Options{})
			if err != nil {
				t.Fatal(err)
			}
			checkConsistent(t, rec)
			if rec.Format != FormatCSV || rec.Path != "x.csv" {
				t.Errorf("format %q path %q", rec.Format, rec.Path)
			}
			if len(rec.Channels) != 2 {
				t.Fatalf("%d channels, want 2 (time consumed)", len(rec.Channels))
			}
			for name, w := range want {
				c := rec.Channel(name)
				if c == nil {
					t.Fatalf("no channel %q", name)
				}
				floatsNear(t, name, c.Samples, w, 0, 0)
				if c.SampleRate != 1000 {
					t.Errorf("%s: sample rate %g, want 1000 (time step 0.001 s)", name, c.SampleRate)
				}
			}
			if rec.Channel("force").Role != pipeline.RoleForce || rec.Channel("accel").Role != pipeline.RoleResponse {
				t.Errorf("roles: %+v", rec.Channels)
			}
		})
	}
}

func TestCSVHeaderUnits(t *testing.T) {
	cases := []struct{ head, name, unit string }{
		{"accel [m/s^2]", "accel", "m/s^2"},
		{"accel (g)", "accel", "g"},
		{"Force [N]", "Force", "N"},
		{"accel", "accel", ""},
		{"acc x [m/s^2]", "acc x", "m/s^2"},
		{"acc(1) [mV]", "acc(1)", "mV"},
		{"a [m/s\xb2]", "a", "m/s²"}, // Latin-1 superscript two, as a European code page writes it
	}
	for _, c := range cases {
		rec, err := CSV(strings.NewReader("# fs: 100\n"+c.head+"\n1\n2\n"), "u.csv", Options{})
		if err != nil {
			t.Fatalf("%q: %v", c.head, err)
		}
		if got := rec.Channels[0]; got.Name != c.name || got.Unit != c.unit {
			t.Errorf("%q: name %q unit %q, want %q %q", c.head, got.Name, got.Unit, c.name, c.unit)
		}
	}
}

func TestCSVTimeColumnNames(t *testing.T) {
	for _, h := range []string{"time", "t", "time_s", "time [s]", "Time (s)", "TIME", "seconds", "sec", "zeit [s]"} {
		rec, err := CSV(strings.NewReader(h+",a\n0,1\n0.002,2\n0.004,3\n"), "t.csv", Options{})
		if err != nil {
			t.Fatalf("%q: %v", h, err)
		}
		if len(rec.Channels) != 1 || rec.Channels[0].SampleRate != 500 {
			t.Errorf("%q: %d channels at %g Hz, want 1 at 500 Hz", h, len(rec.Channels), rec.Channels[0].SampleRate)
		}
	}
	for _, h := range []string{"time [ms]", "time_ms", "t (ms)"} {
		rec, err := CSV(strings.NewReader(h+",a\n0,1\n2,2\n4,3\n"), "t.csv", Options{})
		if err != nil {
			t.Fatalf("%q: %v", h, err)
		}
		if len(rec.Channels) != 1 || rec.Channels[0].SampleRate != 500 {
			t.Errorf("%q: %d channels at %g Hz, want 1 at 500 Hz", h, len(rec.Channels), rec.Channels[0].SampleRate)
		}
	}
	// Pre-trigger: time starts below zero.
	rec, err := CSV(strings.NewReader("time [s],a\n-0.002,1\n-0.001,2\n0,3\n0.001,4\n"), "t.csv", Options{})
	if err != nil || rec.Channels[0].SampleRate != 1000 {
		t.Fatalf("negative start: %v %+v", err, rec)
	}
	// A column called "temperature [K]" is data, not time.
	rec, err = CSV(strings.NewReader("# fs: 10\ntemperature [K],a\n1,2\n"), "t.csv", Options{})
	if err != nil || len(rec.Channels) != 2 {
		t.Fatalf("temperature column: %v %+v", err, rec)
	}
}

func TestCSVMetadata(t *testing.T) {
	in := "# Prototype : bracket-a\n# Window_Tau: 0.25\n# Sample Rate: 25,6 kHz\n# full_scale: 50 m/s^2\n# just a remark\n" +
		"accel [m/s^2];hammer [N]\n1;2\n3;4\n"
	rec, err := CSV(strings.NewReader(in), "m.csv", Options{Sensitivity: map[string]float64{"accel": 2, "hammer": 0.5, "absent": 7}})
	if err != nil {
		t.Fatal(err)
	}
	for k, v := range map[string]string{"prototype": "bracket-a", "window_tau": "0.25", "sample rate": "25,6 kHz", "full_scale": "50 m/s^2"} {
		if rec.Meta[k] != v {
			t.Errorf("Meta[%q] = %q, want %q (all: %q)", k, rec.Meta[k], v, rec.Meta)
		}
	}
	a, f := rec.Channel("accel"), rec.Channel("hammer")
	if a.SampleRate != 25600 {
		t.Errorf("sample rate %g, want 25600", a.SampleRate)
	}
	// Sensitivity divides the samples and the full scale.
	floatsNear(t, "accel", a.Samples, []float64{0.5, 1.5}, 0, 0)
	floatsNear(t, "hammer", f.Samples, []float64{4, 8}, 0, 0)
	if a.FullScale != 25 || f.FullScale != 0 {
		t.Errorf("full scale accel %g (want 50/2) hammer %g (want 0: force)", a.FullScale, f.FullScale)
	}
	for in, fs := range map[string]float64{
		"# fs: 2048\n":           2048,
		"# fs: 2048 Hz\n":        2048,
		"# sampling rate: 1e4\n": 1e4,
		"# dt: 0.5 ms\n":         2000,
		"# dt: 0.0001\n":         10000,
		"# sample_rate: 2048\n# dt: 0.00048828125\n": 2048,
	} {
		rec, err := CSV(strings.NewReader(in+"a\n1\n"), "m.csv", Options{})
		if err != nil {
			t.Fatalf("%q: %v", in, err)
		}
		if rec.Channels[0].SampleRate != fs {
			t.Errorf("%q: %g Hz, want %g", in, rec.Channels[0].SampleRate, fs)
		}
	}
}

func TestCSVSampleRateSources(t *testing.T) {
	// Metadata and time column agree: the metadata's exact value is used.
	rec, err := CSV(strings.NewReader("# fs: 3000\ntime,a\n0,1\n0.000333,2\n0.000667,3\n0.001,4\n"), "s.csv", Options{SampleRate: 10})
	if err != nil {
		t.Fatal(err)
	}
	if rec.Channels[0].SampleRate != 3000 {
		t.Errorf("%g Hz, want 3000", rec.Channels[0].SampleRate)
	}
	// Only the options give one.
	rec, err = CSV(strings.NewReader("a\n1\n2\n"), "s.csv", Options{SampleRate: 512})
	if err != nil || rec.Channels[0].SampleRate != 512 {
		t.Fatalf("%v %+v", err, rec)
	}
	// A file's rate beats the options.
	rec, err = CSV(strings.NewReader("# fs: 256\na\n1\n2\n"), "s.csv", Options{SampleRate: 512})
	if err != nil || rec.Channels[0].SampleRate != 256 {
		t.Fatalf("%v %+v", err, rec)
	}
}

// TestCSVRoundedTime: recorders print time with a fixed number of
// decimals. At 25.6 kHz and six decimals every printed step is off by up
// to 1e-6 s (2.6 % of the 39.0625 us step), which must not read as
// uneven; the sample rate must come out exactly (it is known: the rows
// were made at 25600 Hz), and a single dropped row must still be found.
func TestCSVRoundedTime(t *testing.T) {
	const fs, n = 25600.0, 3000
	var b bytes.Buffer
	b.WriteString("time;accel\n")
	for i := 0; i < n; i++ {
		if i == 2000 {
			continue // the dropped row, file line 2001 is the row after the gap
		}
		fmt.Fprintf(&b, "%.6f;%d\n", float64(i)/fs, i)
	}
	_, err := CSV(bytes.NewReader(b.Bytes()), "r.csv", Options{})
	wantErr(t, err, "r.csv", 2002, "uneven time step", "line 2001")

	b.Reset()
	b.WriteString("time;accel\n")
	for i := 0; i < n; i++ {
		fmt.Fprintf(&b, "%.6f;%d\n", float64(i)/fs, i)
	}
	rec, err := CSV(bytes.NewReader(b.Bytes()), "r.csv", Options{})
	if err != nil {
		t.Fatal(err)
	}
	if rec.Channels[0].SampleRate != fs {
		t.Errorf("sample rate %.9g, want exactly %g", rec.Channels[0].SampleRate, fs)
	}
	// C's default "%g" keeps six significant digits: 1.23457 s is
	// rounded by 5e-6 s, an eighth of a step at 25.6 kHz.
	b.Reset()
	b.WriteString("time,accel\n")
	for i := 0; i < 2*int(fs); i++ {
		fmt.Fprintf(&b, "%g,%d\n", float64(i)/fs, i)
	}
	rec, err = CSV(bytes.NewReader(b.Bytes()), "g.csv", Options{})
	if err != nil {
		t.Fatal(err)
	}
	if rec.Channels[0].SampleRate != fs {
		t.Errorf("%%g times: sample rate %.9g, want exactly %g", rec.Channels[0].SampleRate, fs)
	}
	// Shortest-form times at 1 kHz ("0.001", "0.002", ...) look like three
	// decimals, but one missing row among 1000 must still be found.
	b.Reset()
	b.WriteString("time,accel\n")
	for i := 0; i < 1000; i++ {
		if i != 500 {
			fmt.Fprintf(&b, "%s,%d\n", strconv.FormatFloat(float64(i)/1000, 'g', -1, 64), i)
		}
	}
	_, err = CSV(bytes.NewReader(b.Bytes()), "k.csv", Options{})
	wantErr(t, err, "k.csv", 502, "uneven time step", "0.002 s from line 501", "usual step is 0.001 s")
	// Jitter of half a step between exactly printed times is uneven.
	_, err = CSV(strings.NewReader("t,a\n0,0\n0.001,0\n0.002,0\n0.0035,0\n0.0045,0\n"), "j.csv", Options{})
	wantErr(t, err, "j.csv", 5, "uneven time step", "0.0015")
}

func TestCSVErrors(t *testing.T) {
	rnd := make([]byte, 300)
	r := rand.New(rand.NewPCG(1, 2))
	for i := range rnd {
		rnd[i] = byte(r.UintN(256))
	}
	cases := []struct {
		label, in string
		line      int
		frags     []string
		opt       Options
	}{
		{"empty file", "", 0, []string{"empty file"}, Options{}},
		{"blank lines", "\n  \n\n", 0, []string{"empty file"}, Options{}},
		{"comments only", "# fs: 10\n# x: y\n", 0, []string{"no header row"}, Options{}},
		{"header only", "# fs: 100\ntime,accel\n", 2, []string{"no data rows"}, Options{}},
		{"numeric header", "0,1\n0.1,2\n", 1, []string{"no header row", "numbers"}, Options{}},
		{"truncated last line", "time,accel,force\n0,1,2\n0.001,3", 3, []string{"truncated last line", "2 of 3 cells", "no line ending"}, Options{}},
		{"truncated mid number", "time,accel\n0,1\n0.001,1.2e", 3, []string{"truncated last line", `non-numeric cell "1.2e"`}, Options{}},
		{"short row", "time,accel,force\n0,1,2\n0.001,3\n0.002,4,5\n", 3, []string{"2 cells, the header has 3"}, Options{}},
		{"long row", "time,accel\n0,1\n0.001,3,4,5\n", 3, []string{"4 cells, the header has 2"}, Options{}},
		{"NaN", "time,accel\n0,1\n0.001,NaN\n", 3, []string{`NaN cell "NaN" in column "accel"`}, Options{}},
		{"Inf", "time;accel\n0;1\n0,001;-Inf\n", 3, []string{`infinite cell "-Inf" in column "accel"`}, Options{}},
		{"infinity word", "a\n1\ninfinity\n", 3, []string{"infinite cell"}, Options{SampleRate: 1}},
		{"overflow", "time,accel\n0,1\n0.001,1e999\n", 3, []string{"out-of-range cell"}, Options{}},
		{"non-numeric", "time,accel\n0,1\n0.001,1.2x\n", 3, []string{`non-numeric cell "1.2x" in column "accel"`}, Options{}},
		{"decimal comma with comma delimiter", "time,accel\n0,1\n0.001,1,5\n", 3, []string{"3 cells"}, Options{}},
		{"empty cell", "time,accel,b\n0,,1\n", 2, []string{`empty cell "" in column "accel"`}, Options{}},
		{"uneven step", "time,a\n0,0\n0.001,0\n0.002,0\n0.004,0\n0.005,0\n", 5, []string{"uneven time step", "0.002 s from line 4", "usual step is 0.001 s"}, Options{}},
		{"time goes back", "time,a\n0,0\n0.001,0\n0.0005,0\n", 4, []string{"time does not increase", "line 3"}, Options{}},
		{"time repeats", "time,a\n0,0\n0.001,0\n0.001,0\n", 4, []string{"time does not increase"}, Options{}},
		{"first step negative", "time,a\n0.001,0\n0,0\n", 3, []string{"time does not increase"}, Options{}},
		{"zero sample rate", "# sample_rate: 0\na\n1\n", 1, []string{"sample rate", "must be positive"}, Options{}},
		{"negative sample rate", "# x: 1\n# fs: -2048\na\n1\n", 2, []string{"must be positive"}, Options{}},
		{"zero interval", "# dt: 0\na\n1\n", 1, []string{"sample interval", "zero or negative"}, Options{}},
		{"bad rate unit", "# fs: 2048 furlongs\na\n1\n", 1, []string{"unknown unit"}, Options{}},
		{"bad rate number", "# fs: fast\na\n1\n", 1, []string{"not a number"}, Options{}},
		{"rates disagree", "# fs: 1000\n# sample rate: 2000\na\n1\n", 2, []string{"disagrees"}, Options{}},
		{"time disagrees", "# fs: 2000\ntime,a\n0,0\n0.001,0\n0.002,0\n", 1, []string{"disagrees with the time column (1000 Hz)"}, Options{}},
		{"no sample rate", "a,b\n1,2\n", 0, []string{"no sample rate"}, Options{}},
		{"one row no rate", "time,a\n0,1\n", 0, []string{"one data row"}, Options{}},
		{"bad configured rate", "a\n1\n", 0, []string{"configured sample rate"}, Options{SampleRate: -5}},
		{"bad full scale", "# full_scale: -1\n# fs: 1\na\n1\n", 1, []string{"full scale"}, Options{}},
		{"duplicate names", "# fs: 1\na,b,a\n1,2,3\n", 2, []string{`columns 1 and 3 are both named "a"`}, Options{}},
		{"two time columns", "time,t,a\n0,0,1\n", 1, []string{"two time columns"}, Options{}},
		{"only a time column", "time\n0\n1\n", 1, []string{"no data columns"}, Options{}},
		{"unnamed column", "# fs: 1\na,,b\n1,2,3\n", 2, []string{"column 2 has no name"}, Options{}},
		{"force channel missing", "# fs: 1\na,b\n1,2\n", 0, []string{`force channel "hammer" not found`}, Options{ForceChannel: "hammer"}},
		{"zero sensitivity", "# fs: 1\na,b\n1,2\n", 0, []string{"sensitivity 0"}, Options{Sensitivity: map[string]float64{"b": 0}}},
		{"random bytes", string(rnd), -1, []string{"unknown format", "binary byte"}, Options{}},
		{"UTF-16", "\xff\xfet\x00i\x00m\x00e\x00\n\x00", 1, []string{"UTF-16"}, Options{}},
	}
	for _, c := range cases {
		t.Run(c.label, func(t *testing.T) {
			rec, err := CSV(strings.NewReader(c.in), "hit-003.csv", c.opt)
			if err == nil {
				t.Fatalf("no error; read %+v", rec)
			}
			wantErr(t, err, "hit-003.csv", c.line, c.frags...)
		})
	}
	// The exact message for one case, as the engineer sees it.
	_, err := CSV(strings.NewReader("time [s],accel [m/s^2]\n0,1\n0.001,1.2x\n"), "hit-003.csv", Options{})
	if got, want := err.Error(), `hit-003.csv: line 3: non-numeric cell "1.2x" in column "accel"`; got != want {
		t.Errorf("message\n%s\nwant\n%s", got, want)
	}
	_, err = CSV(bytes.NewReader(rnd), "noise.csv", Options{})
	if !errors.Is(err, ErrUnknownFormat) {
		t.Errorf("random bytes: %v does not wrap ErrUnknownFormat", err)
	}
}

func TestCSVRoles(t *testing.T) {
	cases := []struct {
		head  string
		opt   Options
		force string // "" none
	}{
		{"accel,Hammer", Options{}, "Hammer"},
		{"LOAD cell,accel", Options{}, "LOAD cell"},
		{"accel,impact_x,force", Options{}, "impact_x"}, // the first that matches
		{"accel,acc2", Options{}, ""},
		{"accel,ref", Options{ForceChannel: "ref"}, "ref"},
		{"accel,REF", Options{ForceChannel: "ref"}, "REF"},
		{"accel,force", Options{NoForce: true}, ""},
		{"accel,force", Options{ForceChannel: "accel"}, "accel"},
	}
	for _, c := range cases {
		n := strings.Count(c.head, ",") + 1
		row := strings.TrimSuffix(strings.Repeat("1,", n), ",")
		rec, err := CSV(strings.NewReader("# fs: 10\n"+c.head+"\n"+row+"\n"), "r.csv", c.opt)
		if err != nil {
			t.Fatalf("%q: %v", c.head, err)
		}
		got := ""
		for _, ch := range rec.Channels {
			if ch.Role == pipeline.RoleForce {
				got = ch.Name
			}
		}
		if got != c.force {
			t.Errorf("%q %+v: force %q, want %q", c.head, c.opt, got, c.force)
		}
	}
}

func TestCSVLongLines(t *testing.T) {
	// MaxChannels columns of 300-byte cells: lines far beyond the 256 KiB
	// read buffer.
	const cols = MaxChannels
	pad := strings.Repeat("0", 290)
	var b bytes.Buffer
	b.WriteString("# fs: 100\n")
	for i := 0; i < cols; i++ {
		if i > 0 {
			b.WriteByte(',')
		}
		fmt.Fprintf(&b, "c%d_%s", i, strings.Repeat("x", 290))
	}
	for r := 0; r < 3; r++ {
		b.WriteByte('\n')
		for i := 0; i < cols; i++ {
			if i > 0 {
				b.WriteByte(',')
			}
			fmt.Fprintf(&b, "%s%d.25", pad, i+r)
		}
	}
	rec, err := CSV(&b, "wide.csv", Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(rec.Channels) != cols || rec.Channels[cols-1].Samples[2] != cols-1+2+0.25 {
		t.Fatalf("%d channels, last %v", len(rec.Channels), rec.Channels[cols-1].Samples)
	}
}

// TestCSVAllocations: the reader must not allocate per cell or per row.
// 20000 rows of three cells would be 60000 allocations if it did.
func TestCSVAllocations(t *testing.T) {
	data := makeCSV(20000, 25600)
	allocs := testing.AllocsPerRun(3, func() {
		if _, err := CSV(bytes.NewReader(data), "a.csv", Options{}); err != nil {
			t.Fatal(err)
		}
	})
	if allocs > 100 {
		t.Errorf("%.0f allocations for 20000 rows", allocs)
	}
	// Without a size hint the slices grow by doubling: still few.
	allocs = testing.AllocsPerRun(3, func() {
		if _, err := CSV(struct{ *bytes.Reader }{bytes.NewReader(data)}, "a.csv", Options{}); err != nil {
			t.Fatal(err)
		}
	})
	if allocs > 200 {
		t.Errorf("%.0f allocations for 20000 rows without size hint", allocs)
	}
}

// makeCSV returns a recorder-style CSV: time with 7 decimals and two
// channels of 6 significant digits.
func makeCSV(rows int, fs float64) []byte {
	var b bytes.Buffer
	b.Grow(rows * 32)
	b.WriteString("# device: bench\ntime [s],accel [m/s^2],force [N]\n")
	var buf []byte
	for i := 0; i < rows; i++ {
		tt := float64(i) / fs
		buf = strconv.AppendFloat(buf[:0], tt, 'f', 7, 64)
		buf = append(buf, ',')
		// a decay over a noise floor of about 1e-3 (a recorder's own noise)
		buf = strconv.AppendFloat(buf, 3*math.Exp(-0.5*tt)*math.Sin(2*math.Pi*120*tt)+1e-3*math.Sin(7919*tt*tt), 'g', 6, 64)
		buf = append(buf, ',')
		buf = strconv.AppendFloat(buf, 0.01*math.Cos(2*math.Pi*7*tt), 'g', 6, 64)
		buf = append(buf, '\n')
		b.Write(buf)
	}
	return b.Bytes()
}

func TestCSVRoundTrip(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	mk := func(n int) []float64 {
		x := make([]float64, n)
		for i := range x {
			x[i] = r.NormFloat64() * math.Pow(10, float64(r.IntN(12)-6))
		}
		return x
	}
	rec := &pipeline.Recording{
		Meta: map[string]string{"prototype": "p1", "Sample_Rate": "999", "note": "two\nlines"},
		Channels: []pipeline.Channel{
			{Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: 2560, Samples: mk(500), FullScale: 40},
			{Name: "hammer", Unit: "N", Role: pipeline.RoleForce, SampleRate: 2560, Samples: mk(500)},
		},
	}
	for _, wo := range []WriteOptions{
		{},
		{TimeColumn: true},
		{TimeColumn: true, NoSampleRate: true},
		{Delimiter: ';', DecimalComma: true},
		{Delimiter: '\t', DecimalComma: true, TimeColumn: true},
		{Delimiter: '\t'},
	} {
		var b bytes.Buffer
		if err := WriteCSV(&b, rec, wo); err != nil {
			t.Fatal(err)
		}
		got, err := CSV(&b, "rt.csv", Options{})
		if err != nil {
			t.Fatalf("%+v: %v", wo, err)
		}
		checkConsistent(t, got)
		if len(got.Channels) != 2 || got.Meta["prototype"] != "p1" || got.Meta["note"] != "two lines" {
			t.Fatalf("%+v: %+v", wo, got)
		}
		for i, c := range got.Channels {
			w := rec.Channels[i]
			if c.Name != w.Name || c.Unit != w.Unit || c.Role != w.Role || c.SampleRate != 2560 || c.FullScale != w.FullScale {
				t.Errorf("%+v: channel %+v, want %+v", wo, c, w)
			}
			floatsNear(t, c.Name, c.Samples, w.Samples, 0, 0) // shortest form: exact
		}
	}
	// Limited digits.
	var b bytes.Buffer
	if err := WriteCSV(&b, rec, WriteOptions{Digits: 4}); err != nil {
		t.Fatal(err)
	}
	got, err := CSV(&b, "rt.csv", Options{})
	if err != nil {
		t.Fatal(err)
	}
	floatsNear(t, "accel", got.Channels[0].Samples, rec.Channels[0].Samples, 0, 5e-4)
	// Writer refusals.
	if err := WriteCSV(&b, rec, WriteOptions{DecimalComma: true}); err == nil {
		t.Error("decimal comma with comma delimiter accepted")
	}
	bad := *rec
	bad.Channels = append([]pipeline.Channel(nil), rec.Channels...)
	bad.Channels[1].Samples = bad.Channels[1].Samples[:10]
	if err := WriteCSV(&b, &bad, WriteOptions{}); err == nil {
		t.Error("channels of unequal length accepted")
	}
}
