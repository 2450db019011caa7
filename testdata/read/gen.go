//go:build ignore

// gen writes the sample recorder files of testdata/read. Run it from the
// repository root:
//
//	go run ./testdata/read/gen.go
//
// Every file holds the same scenario, a synthetic hit from pipeline/synth:
// 0.5 s at 2048 Hz (1024 samples), a 120 Hz mode with 1.5 % damping ratio
// starting 0.01 s into the record, x(t) = A exp(-zeta wn t) sin(wd t) for
// t >= 0 (no noise on the response), and a hammer force channel: a 2 ms
// half-sine of height P plus white noise of P/1000. The tests of
// pipeline/read check the files against that formula.
package main

import (
	"bytes"
	"log"
	"os"
	"path/filepath"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/read"
	"github.com/ringlog/ringlog/pipeline/synth"
)

const (
	fs  = 2048.0
	dur = 0.5
	pre = 0.01
)

func hit(amp, peak float64, extra ...synth.Mode) synth.Hit {
	return synth.Hit{
		SampleRate: fs, Duration: dur, PreTrigger: pre,
		Modes:      append([]synth.Mode{{FrequencyHz: 120, DampingRatio: 0.015, Amplitude: amp}}, extra...),
		PulseWidth: 0.002, PulsePeak: peak, Seed: 7,
	}
}

func main() {
	dir := filepath.Join("testdata", "read")
	if _, err := os.Stat(dir); err != nil {
		log.Fatalf("run from the repository root: %v", err)
	}
	write := func(name string, fn func(*bytes.Buffer) error) {
		var b bytes.Buffer
		if err := fn(&b); err != nil {
			log.Fatalf("%s: %v", name, err)
		}
		if err := os.WriteFile(filepath.Join(dir, name), b.Bytes(), 0o644); err != nil {
			log.Fatal(err)
		}
		log.Printf("%s: %d bytes", name, b.Len())
	}

	// Engineering units: 20 m/s^2 peak response, 200 N hammer.
	h := hit(20, 200)
	eng := &pipeline.Recording{
		Meta: map[string]string{"prototype": "bracket-a", "revision": "r2", "point": "p12 +z"},
		Channels: []pipeline.Channel{
			{Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: fs, Samples: h.Response(), FullScale: 50},
			{Name: "force", Unit: "N", Role: pipeline.RoleForce, SampleRate: fs, Samples: h.Force()},
		},
	}
	write("decay-comma.csv", func(b *bytes.Buffer) error {
		return read.WriteCSV(b, eng, read.WriteOptions{TimeColumn: true, Digits: 7, NoSampleRate: true})
	})
	write("decay-semicolon-decimal-comma.csv", func(b *bytes.Buffer) error {
		return read.WriteCSV(b, eng, read.WriteOptions{Delimiter: ';', DecimalComma: true, TimeColumn: true, Digits: 7, NoSampleRate: true})
	})
	write("decay-tab-fs-meta.csv", func(b *bytes.Buffer) error {
		return read.WriteCSV(b, eng, read.WriteOptions{Delimiter: '\t', Digits: 7})
	})
	write("decay-ascii.uff", func(b *bytes.Buffer) error { return read.WriteUFF58(b, eng, false) })
	write("decay-binary.uff", func(b *bytes.Buffer) error { return read.WriteUFF58(b, eng, true) })

	// WAV has no units: 0.5 full scale response, 0.8 full scale force.
	w := hit(0.5, 0.8)
	raw := &pipeline.Recording{Channels: []pipeline.Channel{
		{Name: "ch1", SampleRate: fs, Samples: w.Response()},
		{Name: "ch2", SampleRate: fs, Samples: w.Force()},
	}}
	write("two-channel-16bit.wav", func(b *bytes.Buffer) error { return read.WriteWAV(b, raw, 16, false) })
	write("float32.wav", func(b *bytes.Buffer) error { return read.WriteWAV(b, raw, 32, true) })

	// Three channels, 24-bit PCM (WAVE_FORMAT_EXTENSIBLE): the second
	// response adds a 310 Hz mode at 0.8 % damping of amplitude 0.2.
	w2 := hit(0.5, 0.8, synth.Mode{FrequencyHz: 310, DampingRatio: 0.008, Amplitude: 0.2})
	raw3 := &pipeline.Recording{Channels: []pipeline.Channel{
		raw.Channels[0],
		{Name: "ch2", SampleRate: fs, Samples: w2.Response()},
		{Name: "ch3", SampleRate: fs, Samples: w.Force()},
	}}
	write("three-channel-24bit.wav", func(b *bytes.Buffer) error { return read.WriteWAV(b, raw3, 24, false) })
}
