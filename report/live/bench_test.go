package live

import (
	"context"
	"fmt"
	"io"
	"net"
	"net/http"
	"runtime"
	"sync/atomic"
	"testing"
	"time"
)

// BenchmarkRender draws the page's main part over a history of 100 hits
// (synthetic, pipeline/synth), as the daemon does after each commit; the
// campaign is identified again on every drawing here (the daemon keeps it
// for campaignMaxAge).
func BenchmarkRender(b *testing.B) {
	f := newFixture(b)
	for i := range 100 {
		f.record(b, hitSpec{name: fmt.Sprintf("r%03d.csv", i), prototype: "bracket", revision: []string{"S1", "S2"}[i/50], seed: uint64(i)})
	}
	s := f.server(b, Options{})
	ctx := context.Background()
	for _, cached := range []bool{false, true} {
		b.Run(fmt.Sprintf("campaign-cached=%v", cached), func(b *testing.B) {
			for b.Loop() {
				if !cached {
					s.camp = nil
				}
				if _, _, err := s.renderMain(ctx); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// countWriter counts the bytes an open page has received.
type countWriter struct{ n atomic.Int64 }

func (c *countWriter) Write(p []byte) (int, error) { c.n.Add(int64(len(p))); return len(p), nil }

// BenchmarkUpdate measures one update of the page as the daemon makes it
// after a commit: drawn over a history of 100 hits (campaign kept) and
// delivered to every open page, with 0 and with 50 pages open (50 event
// streams read to the end). The daemon makes at most 2 updates a second
// (minRenderGap = 500 ms): ns/op x 2 is the share of one processor the page can
// take from the recording.
func BenchmarkUpdate(b *testing.B) {
	f := newFixture(b)
	for i := range 100 {
		f.record(b, hitSpec{name: fmt.Sprintf("u%03d.csv", i), prototype: "bracket", revision: "S1", seed: uint64(i)})
	}
	for _, pages := range []int{0, 50} {
		b.Run(fmt.Sprintf("pages=%d", pages), func(b *testing.B) {
			s := f.server(b, Options{})
			ln, err := net.Listen("tcp", "127.0.0.1:0")
			if err != nil {
				b.Fatal(err)
			}
			ctx, cancel := context.WithCancel(context.Background())
			done := make(chan error, 1)
			go func() { done <- s.Serve(ctx, ln) }()
			var counters []*countWriter
			var bodies []io.Closer
			for range pages {
				resp, err := http.Get("http://" + ln.Addr().String() + "/events")
				if err != nil || resp.StatusCode != 200 {
					b.Fatalf("stream: %v %v", resp, err)
				}
				c := &countWriter{}
				counters = append(counters, c)
				bodies = append(bodies, resp.Body)
				go io.Copy(c, resp.Body)
			}
			s.render(ctx) // the campaign is identified once, then kept
			time.Sleep(200 * time.Millisecond)
			for b.Loop() {
				before := make([]int64, len(counters))
				for i, c := range counters {
					before[i] = c.n.Load()
				}
				s.render(ctx)
				ev, _, _ := s.hub.latestEvent()
				for i, c := range counters {
					for c.n.Load() < before[i]+int64(len(ev)) {
						runtime.Gosched()
					}
				}
			}
			b.StopTimer()
			for _, c := range bodies {
				c.Close()
			}
			cancel()
			<-done
		})
	}
}
