package forward

import (
	"context"
	"testing"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/db/pgtest"
)

// BenchmarkCatchUp measures how fast a bay catches up after an outage:
// 5,000 results waiting in the spool are forwarded to an empty central
// history on the PostgreSQL test server (RINGLOG_TEST_POSTGRES). The
// target is 200 hits/s or more (issue 10). Run:
//
//	go test -run='^$' -bench=CatchUp -benchtime=1x -count=3 ./db/forward
func BenchmarkCatchUp(b *testing.B) {
	const n = 5000
	ctx := context.Background()
	var total time.Duration
	for i := 0; i < b.N; i++ {
		b.StopTimer()
		u := pgtest.URL(b)
		spool := openSpool(b)
		record(b, spool, "c", "c", 0, n, db.HitMeta{Prototype: "P1", Revision: "A"})
		f := newForwarder(b, spool, u, "bay-2")
		if err := f.Connect(ctx); err != nil { // the server is back: connecting is not catching up
			b.Fatal(err)
		}
		b.StartTimer()
		start := time.Now()
		got, err := f.Flush(ctx)
		total += time.Since(start)
		if err != nil || got != n {
			b.Fatalf("Flush = %d, %v", got, err)
		}
	}
	b.ReportMetric(float64(n*b.N)/total.Seconds(), "hits/s")
}
