package modal

import (
	"testing"

	"github.com/ringlog/ringlog/pipeline/synth"
)

// Speed target (a benchmark, not a timed test): Analyze on a 30 s record at
// 25.6 kHz (768000 samples) with three modes, well under 0.5 s on one core
// (go test -bench Analyze -cpu 1). Hits from pipeline/synth.

func benchHit(b *testing.B, h *synth.Hit) {
	x, f := h.Response(), h.Force()
	d, err := Analyze(x, h.SampleRate, f, Options{})
	if err != nil || len(d.Modes) != len(h.Modes) {
		b.Fatalf("modes %d of %d, err %v", len(d.Modes), len(h.Modes), err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := Analyze(x, h.SampleRate, f, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkAnalyzeLong: 30 s, 25.6 kHz, modes at 23.4 Hz (1.2 %), 87 Hz
// (0.6 %) and 312 Hz (2 %), 60 dB; the decays last up to 6 s.
func BenchmarkAnalyzeLong(b *testing.B) {
	modes := []synth.Mode{
		{FrequencyHz: 23.4, DampingRatio: 0.012, Amplitude: 1, Phase: 0.2},
		{FrequencyHz: 87, DampingRatio: 0.006, Amplitude: 0.6, Phase: 1.1},
		{FrequencyHz: 312, DampingRatio: 0.02, Amplitude: 0.4, Phase: 2.5},
	}
	benchHit(b, &synth.Hit{SampleRate: 25600, Duration: 30, PreTrigger: 0.5, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 60), Seed: 1, PulseWidth: 0.001, PulsePeak: 100})
}

// BenchmarkAnalyzeLongLight: as BenchmarkAnalyzeLong with a lightly damped
// mode (40 Hz, 0.2 %) that rings above the noise for 14 s of the record:
// the least-squares span is then most of the record.
func BenchmarkAnalyzeLongLight(b *testing.B) {
	modes := []synth.Mode{
		{FrequencyHz: 40, DampingRatio: 0.002, Amplitude: 1, Phase: 0.2},
		{FrequencyHz: 131, DampingRatio: 0.008, Amplitude: 0.6, Phase: 1.1},
		{FrequencyHz: 520, DampingRatio: 0.015, Amplitude: 0.4, Phase: 2.5},
	}
	benchHit(b, &synth.Hit{SampleRate: 25600, Duration: 30, PreTrigger: 0.5, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 60), Seed: 1, PulseWidth: 0.001, PulsePeak: 100})
}

// BenchmarkAnalyzeShort: 1 s, 25.6 kHz, two modes, 50 dB.
func BenchmarkAnalyzeShort(b *testing.B) {
	modes := []synth.Mode{
		{FrequencyHz: 140, DampingRatio: 0.01, Amplitude: 1, Phase: 0.2},
		{FrequencyHz: 455, DampingRatio: 0.02, Amplitude: 0.5, Phase: 1.1},
	}
	benchHit(b, &synth.Hit{SampleRate: 25600, Duration: 1, PreTrigger: 0.05, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 50), Seed: 1, PulseWidth: 0.0005, PulsePeak: 100})
}
