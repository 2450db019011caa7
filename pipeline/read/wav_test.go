package read

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"errors"
	"io"
	"math"
	"os"
	"path/filepath"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
)

// TestWAVScipyReference reads WAV files written by scipy.io.wavfile (an
// implementation independent of ours, see
// testdata/read/make_wav_reference.py) and compares every sample with the
// values scipy wrote, recorded in wav_reference.json.
func TestWAVScipyReference(t *testing.T) {
	dir := filepath.Join("..", "..", "testdata", "read")
	raw, err := os.ReadFile(filepath.Join(dir, "wav_reference.json"))
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Files []struct {
			File     string
			Rate     float64
			Channels int
			Kind     string
			Bits     int
			Frames   int
			Raw      [][]float64
		}
	}
	if err := json.Unmarshal(raw, &ref); err != nil {
		t.Fatal(err)
	}
	if len(ref.Files) < 5 {
		t.Fatalf("only %d reference files", len(ref.Files))
	}
	for _, f := range ref.Files {
		t.Run(f.File, func(t *testing.T) {
			rec, err := File(filepath.Join(dir, f.File), Options{})
			if err != nil {
				t.Fatal(err)
			}
			checkConsistent(t, rec)
			if rec.Format != FormatWAV || len(rec.Channels) != f.Channels {
				t.Fatalf("format %q, %d channels, want wav, %d", rec.Format, len(rec.Channels), f.Channels)
			}
			for c, ch := range rec.Channels {
				if ch.SampleRate != f.Rate || len(ch.Samples) != f.Frames {
					t.Fatalf("channel %d: %g Hz, %d samples; want %g, %d", c, ch.SampleRate, len(ch.Samples), f.Rate, f.Frames)
				}
				want := make([]float64, f.Frames)
				for n := range want {
					v := f.Raw[n][c]
					switch f.Kind {
					case "int": // our convention: code / 2^(bits-1)
						want[n] = v / math.Ldexp(1, f.Bits-1)
					case "uint": // 8-bit: (code - 128) / 128
						want[n] = (v - 128) / 128
					default:
						want[n] = v
					}
				}
				floatsNear(t, ch.Name, ch.Samples, want, 0, 0)
			}
		})
	}
}

func TestWAVRoundTrip(t *testing.T) {
	for _, tc := range []struct {
		bits  int
		float bool
		chans int
	}{
		{8, false, 1}, {16, false, 1}, {16, false, 2}, {16, false, 3}, {24, false, 2}, {32, false, 3},
		{32, true, 1}, {32, true, 3}, {64, true, 2},
	} {
		rec := &pipeline.Recording{}
		for c := 0; c < tc.chans; c++ {
			x := make([]float64, 301) // odd byte count for 8-bit mono: a pad byte
			for i := range x {
				x[i] = 0.9 * math.Sin(0.05*float64(i*(c+1))+float64(c))
			}
			x[0] = 1.0    // saturates in PCM
			x[1] = -1.0   // exactly the lowest code
			x[2] = -1e-12 // rounds to zero
			rec.Channels = append(rec.Channels, pipeline.Channel{Name: "x", SampleRate: 4000, Samples: x})
		}
		var b bytes.Buffer
		if err := WriteWAV(&b, rec, tc.bits, tc.float); err != nil {
			t.Fatal(err)
		}
		got, err := WAV(bytes.NewReader(b.Bytes()), "rt.wav", Options{})
		if err != nil {
			t.Fatalf("%+v: %v", tc, err)
		}
		checkConsistent(t, got)
		if len(got.Channels) != tc.chans {
			t.Fatalf("%+v: %d channels", tc, len(got.Channels))
		}
		q := math.Ldexp(1, -(tc.bits - 1)) // one PCM code
		for c, ch := range got.Channels {
			if ch.Name != "ch"+string(rune('1'+c)) || ch.SampleRate != 4000 || ch.Unit != "" {
				t.Errorf("%+v: channel %+v", tc, ch)
			}
			w := rec.Channels[c].Samples
			switch {
			case tc.float && tc.bits == 64:
				floatsNear(t, "float64", ch.Samples, w, 0, 0)
			case tc.float:
				floatsNear(t, "float32", ch.Samples, w, 0, 0x1p-24)
			default:
				if ch.Samples[0] != 1-q || ch.Samples[1] != -1 || ch.Samples[2] != 0 {
					t.Errorf("%d-bit: full-scale codes read %v", tc.bits, ch.Samples[:3])
				}
				floatsNear(t, "pcm", ch.Samples[3:], w[3:], q/2*(1+1e-9), 0)
				if ch.FullScale != 1 {
					t.Errorf("PCM full scale %g, want 1", ch.FullScale)
				}
			}
		}
		if tc.float && got.Channels[0].FullScale != 0 {
			t.Errorf("float full scale %g, want 0 (unknown)", got.Channels[0].FullScale)
		}
		// Through a plain io.Reader (no Seek): the same.
		got2, err := WAV(io.MultiReader(bytes.NewReader(b.Bytes())), "rt.wav", Options{})
		if err != nil || len(got2.Channels[0].Samples) != 301 {
			t.Fatalf("plain reader: %v", err)
		}
	}
	if err := WriteWAV(io.Discard, &pipeline.Recording{Channels: []pipeline.Channel{{SampleRate: 44.1, Samples: []float64{0}}}}, 16, false); err == nil {
		t.Error("non-integer sample rate accepted")
	}
	if err := WriteWAV(io.Discard, &pipeline.Recording{Channels: []pipeline.Channel{{SampleRate: 44100, Samples: []float64{0}}}}, 12, false); err == nil {
		t.Error("12-bit PCM accepted")
	}
}

// wavBuilder assembles WAV files chunk by chunk for the tests.
type wavBuilder struct{ b []byte }

func newWAV() *wavBuilder {
	return &wavBuilder{b: []byte("RIFF\x00\x00\x00\x00WAVE")}
}

func (w *wavBuilder) chunk(id string, body []byte) *wavBuilder {
	w.b = append(w.b, id...)
	w.b = binary.LittleEndian.AppendUint32(w.b, uint32(len(body)))
	w.b = append(w.b, body...)
	if len(body)%2 == 1 {
		w.b = append(w.b, 0)
	}
	return w
}

func (w *wavBuilder) bytes() []byte {
	binary.LittleEndian.PutUint32(w.b[4:], uint32(len(w.b)-8))
	return w.b
}

func fmtBody(tag uint16, chans, rate, bits int) []byte {
	le := binary.LittleEndian
	var b []byte
	b = le.AppendUint16(b, tag)
	b = le.AppendUint16(b, uint16(chans))
	b = le.AppendUint32(b, uint32(rate))
	b = le.AppendUint32(b, uint32(rate*chans*bits/8))
	b = le.AppendUint16(b, uint16(chans*bits/8))
	b = le.AppendUint16(b, uint16(bits))
	return b
}

func extBody(sub uint16, chans, rate, bits, valid int) []byte {
	le := binary.LittleEndian
	b := fmtBody(waveExtensible, chans, rate, bits)
	b = le.AppendUint16(b, 22)
	b = le.AppendUint16(b, uint16(valid))
	b = le.AppendUint32(b, 3)
	b = le.AppendUint16(b, sub)
	return append(b, guidTail[:]...)
}

func TestWAVChunks(t *testing.T) {
	le := binary.LittleEndian
	var f32 []byte
	for _, v := range []float32{0.5, -0.25, 0.125, 1.5} {
		f32 = le.AppendUint32(f32, math.Float32bits(v))
	}
	// LIST of odd size (pad byte) before fmt, junk between fmt and data,
	// a chunk after data, extensible header with the float sub-format.
	data := newWAV().
		chunk("LIST", []byte("INFOISFT\x05\x00\x00\x00test\x00")).
		chunk("fmt ", extBody(waveFloat, 2, 1000, 32, 32)).
		chunk("junk", []byte{1, 2, 3}).
		chunk("data", f32).
		chunk("cue ", make([]byte, 28)).
		bytes()
	rec, err := WAV(bytes.NewReader(data), "c.wav", Options{Names: []string{"acc", "hammer"}})
	if err != nil {
		t.Fatal(err)
	}
	floatsNear(t, "acc", rec.Channels[0].Samples, []float64{0.5, 0.125}, 0, 0)
	floatsNear(t, "hammer", rec.Channels[1].Samples, []float64{-0.25, 1.5}, 0, 0)
	if rec.Channels[1].Role != pipeline.RoleForce || rec.Meta["wav_encoding"] != "float" {
		t.Errorf("roles/meta: %+v", rec)
	}
	// Extensible PCM with 20 valid bits in a 24-bit container.
	var p24 []byte
	for _, v := range []int32{1 << 22, -(1 << 23), 16} {
		p24 = append(p24, byte(v), byte(v>>8), byte(v>>16))
	}
	data = newWAV().chunk("fmt ", extBody(wavePCM, 1, 48000, 24, 20)).chunk("data", p24).bytes()
	rec, err = WAV(bytes.NewReader(data), "e.wav", Options{Sensitivity: map[string]float64{"ch1": 0.5}})
	if err != nil {
		t.Fatal(err)
	}
	// Sensitivity 0.5 doubles the values and the full scale.
	floatsNear(t, "ch1", rec.Channels[0].Samples, []float64{1, -2, 32.0 / (1 << 23)}, 0, 0)
	if rec.Channels[0].FullScale != 2 || rec.Meta["wav_valid_bits"] != "20" {
		t.Errorf("full scale %g meta %v", rec.Channels[0].FullScale, rec.Meta)
	}
}

func TestWAVErrors(t *testing.T) {
	pcm := fmtBody(wavePCM, 2, 8000, 16)
	frames := make([]byte, 40) // 10 frames of 2 x 16 bit
	good := newWAV().chunk("fmt ", pcm).chunk("data", frames).bytes()
	if _, err := WAV(bytes.NewReader(good), "ok.wav", Options{}); err != nil {
		t.Fatalf("baseline: %v", err)
	}
	zeroRate := newWAV().chunk("fmt ", fmtBody(wavePCM, 2, 0, 16)).chunk("data", frames).bytes()
	nan := newWAV().chunk("fmt ", fmtBody(waveFloat, 1, 100, 64)).
		chunk("data", binary.LittleEndian.AppendUint64(make([]byte, 8), math.Float64bits(math.NaN()))).bytes()
	badAlign := fmtBody(wavePCM, 2, 8000, 16)
	badAlign[12] = 3
	unknownGUID := extBody(wavePCM, 1, 8000, 16, 16)
	unknownGUID[len(unknownGUID)-1] ^= 0xff
	cases := []struct {
		label string
		in    []byte
		off   int64 // -2: do not check
		frags []string
		opt   Options
	}{
		{"empty", nil, -1, []string{"empty file"}, Options{}},
		{"not RIFF", []byte("time,accel\n0,1\n"), 0, []string{"unknown format", "not a RIFF/WAVE"}, Options{}},
		{"RIFX", []byte("RIFX\x00\x00\x00\x00WAVE"), 0, []string{"big-endian"}, Options{}},
		{"truncated data (seekable)", good[:len(good)-7], int64(len(good) - 7), []string{"truncated data chunk", "declares 40 bytes"}, Options{}},
		{"zero sample rate", zeroRate, 24, []string{"sample rate is zero"}, Options{}},
		{"no fmt", newWAV().chunk("LIST", []byte("abcd")).bytes(), 24, []string{"no fmt chunk"}, Options{}},
		{"no data", newWAV().chunk("fmt ", pcm).bytes(), 36, []string{"no data chunk"}, Options{}},
		{"data before fmt", newWAV().chunk("data", frames).chunk("fmt ", pcm).bytes(), 12, []string{"data chunk before the fmt chunk"}, Options{}},
		{"short fmt", newWAV().chunk("fmt ", pcm[:12]).chunk("data", frames).bytes(), 16, []string{"fmt chunk of 12 bytes"}, Options{}},
		{"ADPCM", newWAV().chunk("fmt ", fmtBody(2, 1, 8000, 4)).chunk("data", frames).bytes(), 20, []string{"format tag 0x0002"}, Options{}},
		{"12 bit", newWAV().chunk("fmt ", fmtBody(wavePCM, 1, 8000, 12)).chunk("data", frames).bytes(), 34, []string{"12 bits"}, Options{}},
		{"16-bit float", newWAV().chunk("fmt ", fmtBody(waveFloat, 1, 8000, 16)).chunk("data", frames).bytes(), 34, []string{"IEEE float with 16 bits"}, Options{}},
		{"zero channels", newWAV().chunk("fmt ", fmtBody(wavePCM, 0, 8000, 16)).chunk("data", frames).bytes(), 22, []string{"zero channels"}, Options{}},
		{"block align", newWAV().chunk("fmt ", badAlign).chunk("data", frames).bytes(), 32, []string{"block align 3"}, Options{}},
		{"unknown GUID", newWAV().chunk("fmt ", unknownGUID).chunk("data", frames).bytes(), 44, []string{"sub-format GUID"}, Options{}},
		{"partial frame", newWAV().chunk("fmt ", pcm).chunk("data", frames[:38]).bytes(), 40, []string{"not a whole number of 4-byte frames"}, Options{}},
		{"empty data", newWAV().chunk("fmt ", pcm).chunk("data", nil).bytes(), 36, []string{"no samples"}, Options{}},
		{"NaN sample", nan, 52, []string{"sample is NaN"}, Options{}},
		{"chunk past end", newWAV().chunk("fmt ", pcm).bytes()[:30], 30, []string{"truncated fmt chunk"}, Options{}},
		{"LIST past end", append(newWAV().chunk("fmt ", pcm).bytes(), "LIST\xff\x00\x00\x00abc"...), 47, []string{`chunk "LIST" at byte 36 declares 255 bytes`}, Options{}},
		{"truncated chunk header", append(newWAV().chunk("fmt ", pcm).bytes(), "da"...), 36, []string{"truncated chunk header"}, Options{}},
		{"names mismatch", good, -1, []string{"3 channel names configured for a WAV file of 2 channels"}, Options{Names: []string{"a", "b", "c"}}},
		{"duplicate names", good, -1, []string{`two channels named "a"`}, Options{Names: []string{"a", "a"}}},
	}
	for _, c := range cases {
		t.Run(c.label, func(t *testing.T) {
			_, err := WAV(bytes.NewReader(c.in), "hit.wav", c.opt)
			e := wantErr(t, err, "hit.wav", 0, c.frags...)
			if c.off != -2 && e.Offset != c.off {
				t.Errorf("offset %d, want %d (%v)", e.Offset, c.off, err)
			}
		})
	}
	// Without Seek the truncation shows where the data ran out.
	_, err := WAV(io.MultiReader(bytes.NewReader(good[:len(good)-7])), "hit.wav", Options{})
	e := wantErr(t, err, "hit.wav", 0, "truncated data chunk", "after 33 bytes")
	if e.Offset != int64(len(good)-7) {
		t.Errorf("offset %d, want %d", e.Offset, len(good)-7)
	}
	_, err = WAV(bytes.NewReader([]byte("MZ\x90\x00\x03\x00\x00\x00\x04\x00\x00\x00")), "x.wav", Options{})
	if !errors.Is(err, ErrUnknownFormat) {
		t.Errorf("%v does not wrap ErrUnknownFormat", err)
	}
}
