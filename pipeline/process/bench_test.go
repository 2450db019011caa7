package process_test

import (
	"bytes"
	"context"
	"os"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/process"
	"github.com/ringlog/ringlog/pipeline/read"
	"github.com/ringlog/ringlog/pipeline/synth"
	"gonum.org/v1/gonum/dsp/fourier"
)

// bigCSV is the speed case: a two-channel CSV (force and response,
// plus a time column) of 30 s at 25.6 kHz, about 23 MB. Three modes, 40 dB.
func bigCSV(b *testing.B) []byte {
	b.Helper()
	modes := []synth.Mode{
		{FrequencyHz: 85, DampingRatio: 0.012, Amplitude: 3},
		{FrequencyHz: 410, DampingRatio: 0.008, Amplitude: 2},
		{FrequencyHz: 1730, DampingRatio: 0.015, Amplitude: 1},
	}
	h := synth.Hit{SampleRate: 25600, Duration: 30, PreTrigger: 0.1, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 40), Seed: 3, PulseWidth: 0.0005, PulsePeak: 300}
	rec := &pipeline.Recording{Path: "big.csv", Channels: []pipeline.Channel{
		{Name: "force", Unit: "N", Role: pipeline.RoleForce, SampleRate: 25600, Samples: h.Force()},
		{Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: 25600, Samples: h.Response()},
	}}
	var buf bytes.Buffer
	if err := read.WriteCSV(&buf, rec, read.WriteOptions{TimeColumn: true, Digits: 7}); err != nil {
		b.Fatal(err)
	}
	return buf.Bytes()
}

// BenchmarkFile23MB is parse + analysis of the big CSV, as `ringlog
// analyze` does it (minus process start-up).
func BenchmarkFile23MB(b *testing.B) {
	data := bigCSV(b)
	b.SetBytes(int64(len(data)))
	b.ReportMetric(float64(len(data))/1e6, "MB")
	opt := process.Defaults()
	b.ResetTimer()
	for b.Loop() {
		res, err := process.Data(context.Background(), "big.csv", data, opt)
		if err != nil {
			b.Fatal(err)
		}
		if len(res.Modes) < 3 {
			b.Fatalf("found %d modes, want 3", len(res.Modes))
		}
	}
}

// BenchmarkParse23MB is the parse alone.
func BenchmarkParse23MB(b *testing.B) {
	data := bigCSV(b)
	b.SetBytes(int64(len(data)))
	b.ResetTimer()
	for b.Loop() {
		if _, err := read.Data("big.csv", data, read.Options{}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkShortHit is one typical short hit file (1.5 s at 5 kHz, force
// channel, two modes), the unit of the daemon's throughput.
func BenchmarkShortHit(b *testing.B) {
	modes := []synth.Mode{{FrequencyHz: 60, DampingRatio: 0.012, Amplitude: 20}, {FrequencyHz: 410, DampingRatio: 0.03, Amplitude: 12, Phase: 0.8}}
	h := synth.Hit{SampleRate: 5000, Duration: 1.5, PreTrigger: 0.1, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 40), Seed: 5, PulseWidth: 0.001, PulsePeak: 200}
	rec := &pipeline.Recording{Path: "short.csv", Channels: []pipeline.Channel{
		{Name: "force", Unit: "N", Role: pipeline.RoleForce, SampleRate: 5000, Samples: h.Force()},
		{Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: 5000, Samples: h.Response()},
	}}
	var buf bytes.Buffer
	if err := read.WriteCSV(&buf, rec, read.WriteOptions{TimeColumn: true, Digits: 6}); err != nil {
		b.Fatal(err)
	}
	data := buf.Bytes()
	opt := process.Defaults()
	b.ResetTimer()
	for b.Loop() {
		if _, err := process.Data(context.Background(), "short.csv", data, opt); err != nil {
			b.Fatal(err)
		}
	}
}

// sixModeCSV is the realistic speed case: a two-channel CSV (force
// and response, plus a time column) of 30 s at 25.6 kHz with six modes:
// close pairs at 85/87 Hz and 1730/1800 Hz that no band filter isolates (a
// band 7 half-power bandwidths wide holds both), a heavily damped mode at
// 2.9 kHz (8 %, over in about 10 ms, whose band reaches its neighbours)
// and a single mode at 410 Hz; 50 dB. Made with the closed-form generator
// pipeline/synth.
func sixModeCSV(b *testing.B) []byte {
	b.Helper()
	modes := []synth.Mode{
		{FrequencyHz: 85, DampingRatio: 0.012, Amplitude: 3},
		{FrequencyHz: 87, DampingRatio: 0.010, Amplitude: 2, Phase: 0.7},
		{FrequencyHz: 410, DampingRatio: 0.008, Amplitude: 2, Phase: 0.2},
		{FrequencyHz: 1730, DampingRatio: 0.015, Amplitude: 1, Phase: 1.3},
		{FrequencyHz: 1800, DampingRatio: 0.012, Amplitude: 0.8, Phase: 2.1},
		{FrequencyHz: 2900, DampingRatio: 0.08, Amplitude: 3, Phase: 0.4},
	}
	h := synth.Hit{SampleRate: 25600, Duration: 30, PreTrigger: 0.1, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 50), Seed: 4, PulseWidth: 0.0002, PulsePeak: 300}
	rec := &pipeline.Recording{Path: "six.csv", Channels: []pipeline.Channel{
		{Name: "force", Unit: "N", Role: pipeline.RoleForce, SampleRate: 25600, Samples: h.Force()},
		{Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: 25600, Samples: h.Response()},
	}}
	var buf bytes.Buffer
	if err := read.WriteCSV(&buf, rec, read.WriteOptions{TimeColumn: true, Digits: 7}); err != nil {
		b.Fatal(err)
	}
	return buf.Bytes()
}

// BenchmarkSixModes is parse + analysis of the six-mode file, as `ringlog
// analyze` does it; compare with BenchmarkSixModesReadFFT in the same run.
//
// With RINGLOG_SIX_CSV set, the file is also written there (for the peak
// memory of `ringlog analyze` on it, README "Speed").
func BenchmarkSixModes(b *testing.B) {
	data := sixModeCSV(b)
	if p := os.Getenv("RINGLOG_SIX_CSV"); p != "" {
		if err := os.WriteFile(p, data, 0o644); err != nil {
			b.Fatal(err)
		}
	}
	b.SetBytes(int64(len(data)))
	b.ReportMetric(float64(len(data))/1e6, "MB")
	opt := process.Defaults()
	b.ResetTimer()
	for b.Loop() {
		res, err := process.Data(context.Background(), "six.csv", data, opt)
		if err != nil {
			b.Fatal(err)
		}
		if len(res.Modes) < 6 {
			b.Fatalf("found %d modes, want 6: %+v", len(res.Modes), res.Modes)
		}
	}
}

// BenchmarkSixModesReadFFT is the yardstick of the speed target: parse the
// same file and run one FFT of the response's length.
func BenchmarkSixModesReadFFT(b *testing.B) {
	data := sixModeCSV(b)
	b.SetBytes(int64(len(data)))
	b.ResetTimer()
	for b.Loop() {
		rec, err := read.Data("six.csv", data, read.Options{})
		if err != nil {
			b.Fatal(err)
		}
		x := rec.ByRole(pipeline.RoleResponse)[0].Samples
		fourier.NewFFT(len(x)).Coefficients(nil, x)
	}
}
