package db

import (
	"context"
	"fmt"
	"testing"
)

// BenchmarkRecordResult stores typical three-mode results (four estimates
// per mode, two reasons), each in its own durable transaction. The daemon
// needs at least 50 files/s end to end; the results/s metric shows the
// database's share.
func BenchmarkRecordResult(b *testing.B) {
	d := openTemp(b)
	ctx := context.Background()
	res := sampleResult("/bench/hit.csv")
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; b.Loop(); i++ {
		path := fmt.Sprintf("/bench/hit-%07d.csv", i)
		fi := fileInfo(path, path, t0)
		if _, err := d.RecordResult(ctx, fi, HitMeta{Prototype: "P", Revision: "A"}, res, nil); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(b.N)/b.Elapsed().Seconds(), "results/s")
}

// BenchmarkHits reads back 1000 stored hits with their modes, estimates
// and reasons.
func BenchmarkHits(b *testing.B) {
	d := openTemp(b)
	ctx := context.Background()
	res := sampleResult("/bench/hit.csv")
	for i := 0; i < 1000; i++ {
		path := fmt.Sprintf("/bench/hit-%07d.csv", i)
		if _, err := d.RecordResult(ctx, fileInfo(path, path, t0), HitMeta{Prototype: "P"}, res, nil); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportAllocs()
	for b.Loop() {
		hits, err := d.Hits(ctx, Filter{Prototype: "P"})
		if err != nil || len(hits) != 1000 {
			b.Fatal(len(hits), err)
		}
	}
}
