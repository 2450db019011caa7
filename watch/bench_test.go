package watch_test

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/ringlog/ringlog/watch"
)

// BenchmarkSettleLatency measures the time from the end of a file's last
// write to its hand-out, minus the settle period, reported as
// ms-over-settle. With notifications it should stay at a few ms (the timer
// fires at the deadline); in polling mode it adds the wait for the next
// scan (up to ScanInterval, here 100 ms).
func BenchmarkSettleLatency(b *testing.B) {
	const settle = 50 * time.Millisecond
	for _, mode := range []struct {
		name string
		poll bool
	}{{"events", false}, {"poll", true}} {
		b.Run(mode.name, func(b *testing.B) {
			dir := b.TempDir()
			w, err := watch.New(watch.Config{
				Folders:      []watch.Folder{{Path: dir, Poll: mode.poll}},
				Settle:       settle,
				ScanInterval: 100 * time.Millisecond,
			}, nil)
			if err != nil {
				b.Fatal(err)
			}
			ctx, cancel := context.WithCancel(context.Background())
			defer cancel()
			out := make(chan watch.Ready)
			go w.Run(ctx, out)
			for w.Stats().Scans == 0 {
				time.Sleep(time.Millisecond)
			}
			var over time.Duration
			b.ResetTimer()
			for i := 0; b.Loop(); i++ {
				p := filepath.Join(dir, fmt.Sprintf("hit-%d.csv", i))
				if err := os.WriteFile(p, []byte("t,a\n0,1\n"), 0o644); err != nil {
					b.Fatal(err)
				}
				written := time.Now()
				r := <-out
				if r.Path != p {
					b.Fatalf("got %s, want %s", r.Path, p)
				}
				over += time.Since(written) - settle
			}
			b.ReportMetric(float64(over.Microseconds())/1000/float64(b.N), "ms-over-settle")
		})
	}
}
