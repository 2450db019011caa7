package process_test

import (
	"bytes"
	"context"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/process"
	"github.com/ringlog/ringlog/pipeline/read"
	"github.com/ringlog/ringlog/pipeline/synth"
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

// BenchmarkShortHit is one typical short hit file (1 s at 4 kHz), the unit
// of the daemon's throughput.
func BenchmarkShortHit(b *testing.B) {
	modes := []synth.Mode{{FrequencyHz: 60, DampingRatio: 0.01, Amplitude: 20}, {FrequencyHz: 230, DampingRatio: 0.008, Amplitude: 8}}
	h := synth.Hit{SampleRate: 4000, Duration: 1, PreTrigger: 0.05, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 40), Seed: 5, PulseWidth: 0.001, PulsePeak: 200}
	rec := &pipeline.Recording{Path: "short.csv", Channels: []pipeline.Channel{
		{Name: "force", Unit: "N", Role: pipeline.RoleForce, SampleRate: 4000, Samples: h.Force()},
		{Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: 4000, Samples: h.Response()},
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
