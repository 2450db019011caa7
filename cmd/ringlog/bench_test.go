package main

import (
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
	const burst = 200
	files := make([][]byte, burst)
	for i := range files {
		files[i] = hitCSV(b, uint64(i+1), 4096, 1)
	}
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
		perSec = append(perSec, burst/el.Seconds())
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
