package main

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"sync/atomic"
	"testing"
	"time"

	"gonum.org/v1/gonum/stat"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/read"
	"github.com/ringlog/ringlog/pipeline/synth"
)

// benchDaemon starts the daemon in-process on a fresh folder and database
// with the given settle time; n counts recorded files.
func benchDaemon(b *testing.B, settle time.Duration) (export string, n *atomic.Int64, stop func()) {
	b.Helper()
	dir := b.TempDir()
	export = filepath.Join(dir, "export")
	if err := os.MkdirAll(export, 0o755); err != nil {
		b.Fatal(err)
	}
	cfgPath := filepath.Join(dir, "ringlog.toml")
	cfgText := fmt.Sprintf("database = %q\nsettle = %q\nscan_interval = \"1s\"\nlog_level = \"warn\"\n[[folder]]\npath = %q\nprototype = \"bench\"\n",
		filepath.Join(dir, "h.db"), settle.String(), export)
	if err := os.WriteFile(cfgPath, []byte(cfgText), 0o644); err != nil {
		b.Fatal(err)
	}
	cfg, err := loadConfig(cfgPath)
	if err != nil {
		b.Fatal(err)
	}
	m := &Main{Config: cfg, Stderr: os.Stderr}
	n = new(atomic.Int64)
	m.Recorded = func(o outcome, rec db.Outcome, err error) {
		if err == nil && o.err == nil {
			n.Add(1)
		}
	}
	if err := m.Open(context.Background()); err != nil {
		b.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- m.Run(ctx) }()
	<-m.Started()
	return export, n, func() {
		cancel()
		if err := <-done; err != nil {
			b.Error(err)
		}
		m.Close()
	}
}

// BenchmarkDaemonThroughput drops a burst of 200 short hit files (1 s at
// 4096 Hz, two channels, like a typical hit export) into the watched folder
// and reports the files per second from the end of the settle period to
// the last row in the database.
func BenchmarkDaemonThroughput(b *testing.B) {
	files := make([][]byte, 200)
	for i := range files {
		files[i] = hitCSV(b, uint64(i+1), 4096, 1)
	}
	daemonThroughput(b, files)
}

// BenchmarkDaemonThroughputTwoModes is the same burst of realistic short
// hits: 1.5 s at 5 kHz, a force channel, two modes (a light one and a
// heavier one), 0.1 s pre-trigger, 40 dB (closed-form generator
// pipeline/synth).
func BenchmarkDaemonThroughputTwoModes(b *testing.B) {
	files := make([][]byte, 200)
	for i := range files {
		modes := []synth.Mode{
			{FrequencyHz: 60 + float64(i%7), DampingRatio: 0.012, Amplitude: 20},
			{FrequencyHz: 410 + float64(i%5), DampingRatio: 0.03, Amplitude: 12, Phase: 0.8},
		}
		h := synth.Hit{SampleRate: 5000, Duration: 1.5, PreTrigger: 0.1, Modes: modes,
			NoiseSD: synth.NoiseForSNR(modes, 40), Seed: uint64(i + 1), PulseWidth: 0.001, PulsePeak: 200}
		rec := &pipeline.Recording{Channels: []pipeline.Channel{
			{Name: "force", Unit: "N", Role: pipeline.RoleForce, SampleRate: 5000, Samples: h.Force()},
			{Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: 5000, Samples: h.Response()},
		}}
		var buf bytes.Buffer
		if err := read.WriteCSV(&buf, rec, read.WriteOptions{Digits: 6}); err != nil {
			b.Fatal(err)
		}
		files[i] = buf.Bytes()
	}
	daemonThroughput(b, files)
}

func daemonThroughput(b *testing.B, files [][]byte) {
	burst := int64(len(files))
	settle := 300 * time.Millisecond
	var perSec []float64
	for b.Loop() {
		b.StopTimer()
		export, n, stop := benchDaemon(b, settle)
		b.StartTimer()
		start := time.Now()
		for i, data := range files {
			tmp := filepath.Join(export, fmt.Sprintf(".hit-%04d.tmp", i))
			if err := os.WriteFile(tmp, data, 0o644); err != nil {
				b.Fatal(err)
			}
			if err := os.Rename(tmp, filepath.Join(export, fmt.Sprintf("hit-%04d.csv", i))); err != nil {
				b.Fatal(err)
			}
		}
		for n.Load() < burst {
			time.Sleep(5 * time.Millisecond)
		}
		el := time.Since(start) - settle
		perSec = append(perSec, float64(burst)/el.Seconds())
		b.StopTimer()
		stop()
		b.StartTimer()
	}
	b.ReportMetric(median(perSec), "files/s")
}

// BenchmarkDaemonLatency writes one complete hit file at a time (rename
// into the folder, as a recorder finishing a file) and measures the time
// from the file becoming stable (its arrival + the settle time) to its row
// in the database.
func BenchmarkDaemonLatency(b *testing.B) {
	settle := 500 * time.Millisecond
	export, n, stop := benchDaemon(b, settle)
	defer stop()
	var lat []float64
	i := 0
	for b.Loop() {
		i++
		data := hitCSV(b, uint64(1000+i), 4096, 1)
		tmp := filepath.Join(export, ".next.tmp")
		if err := os.WriteFile(tmp, data, 0o644); err != nil {
			b.Fatal(err)
		}
		want := n.Load() + 1
		start := time.Now()
		if err := os.Rename(tmp, filepath.Join(export, fmt.Sprintf("hit-%04d.csv", i))); err != nil {
			b.Fatal(err)
		}
		for n.Load() < want {
			time.Sleep(2 * time.Millisecond)
		}
		lat = append(lat, (time.Since(start)-settle).Seconds()*1000)
	}
	b.ReportMetric(median(lat), "ms-after-settle")
}

func median(x []float64) float64 {
	if len(x) == 0 {
		return 0
	}
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	return stat.Quantile(0.5, stat.Empirical, s, nil)
}
