package read

import (
	"errors"
	"io/fs"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
)

var sampleDir = filepath.Join("..", "..", "testdata", "read")

// The sample files of testdata/read are made by testdata/read/gen.go: a
// 0.5 s record at 2048 Hz of a 120 Hz mode with 1.5 % damping released
// 0.01 s into the record, and a 2 ms half-sine hammer pulse with noise
// of a thousandth of its height. These constants restate that scenario;
// the checks use the closed-form response (decay, halfSine), not the
// generator.
const (
	sampleFS    = 2048.0
	sampleN     = 1024
	sampleT0    = 0.01
	sampleFn    = 120.0
	sampleZeta  = 0.015
	sampleWidth = 0.002
)

func checkSampleResponse(t *testing.T, c *pipeline.Channel, amp, abs, rel float64) {
	t.Helper()
	if c.SampleRate != sampleFS || len(c.Samples) != sampleN {
		t.Fatalf("%s: %g Hz, %d samples; want %g, %d", c.Name, c.SampleRate, len(c.Samples), sampleFS, sampleN)
	}
	want := make([]float64, sampleN)
	for i := range want {
		want[i] = decay(i, sampleFS, sampleT0, amp, sampleFn, sampleZeta)
	}
	floatsNear(t, c.Name, c.Samples, want, abs, rel)
}

func checkSampleForce(t *testing.T, c *pipeline.Channel, peak float64) {
	t.Helper()
	if c.SampleRate != sampleFS || len(c.Samples) != sampleN {
		t.Fatalf("%s: %g Hz, %d samples", c.Name, c.SampleRate, len(c.Samples))
	}
	top := 0.0
	for i, v := range c.Samples {
		// Noise sd is peak/1000: six sd is a generous bound.
		if d := math.Abs(v - halfSine(i, sampleFS, sampleT0, peak, sampleWidth)); d > 6e-3*peak {
			t.Fatalf("%s[%d] = %g, half-sine %g", c.Name, i, v, halfSine(i, sampleFS, sampleT0, peak, sampleWidth))
		}
		top = math.Max(top, v)
	}
	if top < 0.9*peak {
		t.Errorf("%s: pulse top %g, want about %g", c.Name, top, peak)
	}
}

func TestSampleFiles(t *testing.T) {
	for _, f := range []struct {
		file, format string
		rel          float64 // on the response
	}{
		{"decay-comma.csv", FormatCSV, 5.0001e-7}, // 7 significant digits
		{"decay-semicolon-decimal-comma.csv", FormatCSV, 5.0001e-7},
		{"decay-tab-fs-meta.csv", FormatCSV, 5.0001e-7},
		{"decay-ascii.uff", FormatUFF58, 5e-13}, // E20.12
		{"decay-binary.uff", FormatUFF58b, 1e-13},
	} {
		t.Run(f.file, func(t *testing.T) {
			rec, err := File(filepath.Join(sampleDir, f.file), Options{})
			if err != nil {
				t.Fatal(err)
			}
			checkConsistent(t, rec)
			if rec.Format != f.format || len(rec.Channels) != 2 {
				t.Fatalf("format %q, %d channels", rec.Format, len(rec.Channels))
			}
			a, h := rec.Channel("accel"), rec.Channel("force")
			if a == nil || h == nil || a.Unit != "m/s^2" || h.Unit != "N" || a.Role != pipeline.RoleResponse || h.Role != pipeline.RoleForce {
				t.Fatalf("channels %+v", rec.Channels)
			}
			checkSampleResponse(t, a, 20, 1e-12, f.rel)
			checkSampleForce(t, h, 200)
			if f.format == FormatCSV {
				if a.FullScale != 50 || rec.Meta["prototype"] != "bracket-a" || rec.Meta["point"] != "p12 +z" {
					t.Errorf("full scale %g, meta %v", a.FullScale, rec.Meta)
				}
			}
		})
	}
	for _, f := range []struct {
		file     string
		channels int
		abs, rel float64
	}{
		{"two-channel-16bit.wav", 2, 0x1p-16, 0},
		{"float32.wav", 2, 1e-12, 0x1p-24},
		{"three-channel-24bit.wav", 3, 0x1p-24, 0},
	} {
		t.Run(f.file, func(t *testing.T) {
			rec, err := File(filepath.Join(sampleDir, f.file), Options{ForceChannel: "ch" + string(rune('0'+f.channels))})
			if err != nil {
				t.Fatal(err)
			}
			checkConsistent(t, rec)
			if rec.Format != FormatWAV || len(rec.Channels) != f.channels {
				t.Fatalf("format %q, %d channels", rec.Format, len(rec.Channels))
			}
			checkSampleResponse(t, &rec.Channels[0], 0.5, f.abs*(1+1e-9), f.rel)
			checkSampleForce(t, &rec.Channels[f.channels-1], 0.8)
			if f.channels == 3 {
				c := rec.Channels[1]
				for i, v := range c.Samples {
					w := decay(i, sampleFS, sampleT0, 0.5, sampleFn, sampleZeta) + decay(i, sampleFS, sampleT0, 0.2, 310, 0.008)
					if math.Abs(v-w) > f.abs*(1+1e-9) {
						t.Fatalf("ch2[%d] = %g, want %g", i, v, w)
					}
				}
			}
		})
	}
}

func TestFileDetection(t *testing.T) {
	dir := t.TempDir()
	csv, _ := os.ReadFile(filepath.Join(sampleDir, "decay-tab-fs-meta.csv"))
	wav, _ := os.ReadFile(filepath.Join(sampleDir, "two-channel-16bit.wav"))
	uff, _ := os.ReadFile(filepath.Join(sampleDir, "decay-ascii.uff"))
	noise := make([]byte, 2000)
	r := rand.New(rand.NewPCG(9, 9))
	for i := range noise {
		noise[i] = byte(r.UintN(256))
	}
	cases := []struct {
		name   string
		data   []byte
		format string // "" error
	}{
		{"a.csv", csv, FormatCSV},
		{"a.TXT", csv, FormatCSV},
		{"a.tsv", csv, FormatCSV},
		{"a.export", csv, FormatCSV}, // unknown extension, text: CSV
		{"a.wav", wav, FormatWAV},
		{"a.bin", wav, FormatWAV},  // sniffed
		{"a.csv2", wav, FormatWAV}, // sniffed
		{"a.unv", uff, FormatUFF58},
		{"a.uff", uff, FormatUFF58},
		{"a.txt", uff, FormatUFF58}, // the "-1" line wins over the extension
		{"noext", uff, FormatUFF58},
		{"a.bin", noise, ""},
		{"b.dat", noise, ""},
		{"empty.csv", nil, ""},
	}
	for _, c := range cases {
		p := filepath.Join(dir, c.name)
		if err := os.WriteFile(p, c.data, 0o644); err != nil {
			t.Fatal(err)
		}
		rec, err := File(p, Options{})
		if c.format == "" {
			if err == nil {
				t.Errorf("%s: read as %q", c.name, rec.Format)
				continue
			}
			wantErr(t, err, p, -1)
			if c.data != nil && c.name == "a.bin" && !errors.Is(err, ErrUnknownFormat) {
				t.Errorf("%s: %v is not ErrUnknownFormat", c.name, err)
			}
			continue
		}
		if err != nil {
			t.Errorf("%s: %v", c.name, err)
			continue
		}
		if rec.Format != c.format || rec.Path != p {
			t.Errorf("%s: format %q path %q, want %q", c.name, rec.Format, rec.Path, c.format)
		}
	}
	_, err := File(filepath.Join(dir, "missing.csv"), Options{})
	wantErr(t, err, filepath.Join(dir, "missing.csv"), 0, "cannot open")
	if !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("%v does not wrap fs.ErrNotExist", err)
	}
	_, err = File(filepath.Join(dir, "b.dat"), Options{})
	if !errors.Is(err, ErrUnknownFormat) {
		t.Errorf("random .dat: %v is not ErrUnknownFormat", err)
	}
}

func TestErrorFormat(t *testing.T) {
	for _, c := range []struct {
		e    *Error
		want string
	}{
		{&Error{File: "a.csv", Line: 17, Offset: -1, Problem: "bad"}, "a.csv: line 17: bad"},
		{&Error{File: "a.wav", Offset: 44, Problem: "bad"}, "a.wav: byte 44: bad"},
		{&Error{File: "a.wav", Offset: -1, Problem: "cannot open", Err: fs.ErrPermission}, "a.wav: cannot open: permission denied"},
		{&Error{File: "x", Offset: -1, Problem: "unknown format: noise", Err: ErrUnknownFormat}, "x: unknown format: noise"},
		{&Error{Offset: -1, Problem: "p"}, "<input>: p"},
	} {
		if got := c.e.Error(); got != c.want {
			t.Errorf("%q, want %q", got, c.want)
		}
	}
}

// TestData: reading bytes already in memory gives what File gives.
func TestData(t *testing.T) {
	for _, n := range []string{"decay-comma.csv", "decay-binary.uff", "three-channel-24bit.wav"} {
		p := filepath.Join(sampleDir, n)
		b, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		a, err1 := File(p, Options{})
		d, err2 := Data(p, b, Options{})
		if err1 != nil || err2 != nil {
			t.Fatalf("%s: %v %v", n, err1, err2)
		}
		if a.Format != d.Format || len(a.Channels) != len(d.Channels) {
			t.Fatalf("%s: File %q/%d, Data %q/%d", n, a.Format, len(a.Channels), d.Format, len(d.Channels))
		}
		for i := range a.Channels {
			floatsNear(t, n, d.Channels[i].Samples, a.Channels[i].Samples, 0, 0)
		}
	}
	_, err := Data("x.csv", nil, Options{})
	wantErr(t, err, "x.csv", 0, "empty file")
	_, err = Data("x.bin", []byte{0, 1, 2, 3, 0xff}, Options{})
	if !errors.Is(err, ErrUnknownFormat) {
		t.Errorf("%v is not ErrUnknownFormat", err)
	}
}
