package read

import (
	"bytes"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/synth"
)

// BenchmarkCSV23MB parses 30 s at 25.6 kHz (768000 rows: a time column
// with 7 decimals and two channels of 6 significant digits, about 23 MB).
// Target: well under 0.5 s per file on one core, i.e. above ~50 MB/s.
func BenchmarkCSV23MB(b *testing.B) {
	data := makeCSV(768000, 25600)
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		rec, err := CSV(bytes.NewReader(data), "bench.csv", Options{})
		if err != nil {
			b.Fatal(err)
		}
		if len(rec.Channels[0].Samples) != 768000 || rec.Channels[0].SampleRate != 25600 {
			b.Fatalf("%d samples at %g Hz", len(rec.Channels[0].Samples), rec.Channels[0].SampleRate)
		}
	}
}

func benchRecording() *pipeline.Recording {
	h := synth.Hit{SampleRate: 25600, Duration: 30, Modes: []synth.Mode{{FrequencyHz: 120, DampingRatio: 0.01, Amplitude: 0.5}},
		PulseWidth: 0.002, PulsePeak: 0.5, Seed: 1, NoiseSD: 1e-3}
	return &pipeline.Recording{Channels: []pipeline.Channel{
		{Name: "accel", SampleRate: 25600, Samples: h.Response()},
		{Name: "force", SampleRate: 25600, Samples: h.Force()},
	}}
}

// BenchmarkWAV reads the same 30 s, two channels, as 24-bit PCM.
func BenchmarkWAV(b *testing.B) {
	var buf bytes.Buffer
	if err := WriteWAV(&buf, benchRecording(), 24, false); err != nil {
		b.Fatal(err)
	}
	data := buf.Bytes()
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := WAV(bytes.NewReader(data), "bench.wav", Options{}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkUFF58 reads the same 30 s, two channels, as ASCII dataset 58
// (E20.12) records.
func BenchmarkUFF58(b *testing.B) {
	var buf bytes.Buffer
	if err := WriteUFF58(&buf, benchRecording(), false); err != nil {
		b.Fatal(err)
	}
	data := buf.Bytes()
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := UFF58(bytes.NewReader(data), "bench.uff", Options{}); err != nil {
			b.Fatal(err)
		}
	}
}
