package read

import (
	"bytes"
	"os"
	"path/filepath"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
)

// The fuzz targets assert that no input makes a reader panic, that every
// failure is an *Error naming the input, and that every success keeps the
// readers' promises (checkConsistent). Seeds: the f.Add calls below, the
// sample files, and testdata/fuzz/FuzzXxx.

// addSamples adds sample files as seeds; lines > 0 keeps only their first
// lines (large seeds make the fuzzer's minimisation slow).
func addSamples(f *testing.F, lines int, names ...string) {
	for _, n := range names {
		b, err := os.ReadFile(filepath.Join(sampleDir, n))
		if err != nil {
			f.Fatal(err)
		}
		if lines > 0 {
			at := 0
			for i := 0; i < lines && at < len(b); i++ {
				if k := bytes.IndexByte(b[at:], '\n'); k >= 0 {
					at += k + 1
				} else {
					at = len(b)
				}
			}
			b = b[:at]
		}
		f.Add(b)
	}
}

func fuzzCheck(t *testing.T, rec *pipeline.Recording, err error, name string) {
	if err != nil {
		e, ok := err.(*Error)
		if !ok {
			t.Fatalf("error %v (%T) is not *Error", err, err)
		}
		if e.File != name {
			t.Fatalf("error names %q, want %q", e.File, name)
		}
		_ = e.Error()
		return
	}
	checkConsistent(t, rec)
}

func FuzzCSV(f *testing.F) {
	for _, s := range []string{
		"time,accel,force\n0,1.5,2\n0.001,-3.5,4\n0.002,1e-3,0\n",
		"# fs: 2048\naccel [m/s^2];hammer [N]\n1,5;2\n-3,5;4\n",
		"time\ta\n0\t1,5\n0,001\t2\n",
		"time,a\n0,1\n0.001,2\n0.003,3\n",
		"time,a\n0,1\n0.001,NaN\n",
		"time,a,b\n0,1,2\n0.001,3",
		"# sample_rate: 0\na\n1\n",
		"",
		"a\n",
		"\"t\",\"a\"\r\n\"0\",\"1\"\r\n\"1\",\"2\"\r\n",
	} {
		f.Add([]byte(s))
	}
	addSamples(f, 30, "decay-comma.csv", "decay-tab-fs-meta.csv")
	f.Fuzz(func(t *testing.T, b []byte) {
		rec, err := CSV(bytes.NewReader(b), "f.csv", Options{})
		fuzzCheck(t, rec, err, "f.csv")
		// With a configured rate, files without one read too.
		rec, err = CSV(bytes.NewReader(b), "f.csv", Options{SampleRate: 100})
		fuzzCheck(t, rec, err, "f.csv")
	})
}

func FuzzWAV(f *testing.F) {
	pcm := fmtBody(wavePCM, 2, 8000, 16)
	f.Add(newWAV().chunk("fmt ", pcm).chunk("data", make([]byte, 16)).bytes())
	f.Add(newWAV().chunk("LIST", []byte("abc")).chunk("fmt ", extBody(waveFloat, 1, 100, 32, 32)).chunk("data", []byte{0, 0, 128, 63}).bytes())
	f.Add(newWAV().chunk("fmt ", fmtBody(wavePCM, 1, 100, 24)).chunk("data", []byte{1, 2, 3, 4, 5, 6}).bytes())
	f.Add(newWAV().chunk("fmt ", fmtBody(wavePCM, 1, 0, 8)).chunk("data", []byte{1}).bytes())
	f.Add([]byte("RIFF\x00\x00\x00\x00WAVE"))
	f.Add([]byte{})
	addSamples(f, 0, "ref-int16-3ch.wav", "ref-float64-2ch.wav", "ref-uint8-1ch.wav")
	f.Fuzz(func(t *testing.T, b []byte) {
		rec, err := WAV(bytes.NewReader(b), "f.wav", Options{})
		fuzzCheck(t, rec, err, "f.wav")
		// Without Seek the reader must not trust the declared sizes.
		rec, err = WAV(struct{ *bytes.Buffer }{bytes.NewBuffer(b)}, "f.wav", Options{})
		fuzzCheck(t, rec, err, "f.wav")
	})
}

func FuzzUFF58(f *testing.F) {
	ok := timeSpec("acc", 3)
	f.Add([]byte(ok.ascii("  1.000000000000E+00  2.000000000000E+00  3.000000000000E+00\n")))
	f.Add([]byte(ok.ascii("-1.23450E+00-2.34560E+00 3.0D+00\n")))
	f.Add([]byte(ok.binary(1, 2, 24, make([]byte, 24))))
	f.Add([]byte(ok.binary(2, 2, 24, make([]byte, 24))))
	frf := uffSpec{id1: "frf", funcType: 4, ordType: 6, n: 1, even: 1, dx: 1, absType: 18, absUnit: "Hz"}
	f.Add([]byte(frf.ascii("1 2\n")))
	f.Add([]byte("    -1\n   151\nx\n    -1\n"))
	f.Add([]byte("    -1\n    58\n"))
	var small bytes.Buffer
	if err := WriteUFF58(&small, &pipeline.Recording{Channels: []pipeline.Channel{
		{Name: "accel", Unit: "m/s^2", SampleRate: 2048, Samples: []float64{0, 1.5, -0.75, 1e-120}},
		{Name: "force", Unit: "N", Role: pipeline.RoleForce, SampleRate: 2048, Samples: []float64{3, 2, 1, 0}},
	}}, true); err != nil {
		f.Fatal(err)
	}
	f.Add(small.Bytes())
	f.Fuzz(func(t *testing.T, b []byte) {
		rec, err := UFF58(bytes.NewReader(b), "f.uff", Options{})
		fuzzCheck(t, rec, err, "f.uff")
	})
}
