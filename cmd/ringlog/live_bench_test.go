package main

import (
	"bufio"
	"fmt"
	"net/http"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"testing"
	"time"

	"gonum.org/v1/gonum/stat"
)

// sseClient is an open live page as the browser holds it: an event stream
// read to the end of every event.
type sseClient struct {
	resp   *http.Response
	events chan string
}

func openStream(b testing.TB, url string) *sseClient {
	b.Helper()
	resp, err := http.Get(url + "events")
	if err != nil {
		b.Fatal(err)
	}
	if resp.StatusCode != 200 {
		b.Fatalf("events: %s", resp.Status)
	}
	c := &sseClient{resp: resp, events: make(chan string, 64)}
	go func() {
		defer close(c.events)
		sc := bufio.NewScanner(resp.Body)
		sc.Buffer(make([]byte, 1<<20), 1<<20)
		var ev strings.Builder
		for sc.Scan() {
			if line := sc.Text(); line != "" {
				ev.WriteString(line)
				ev.WriteByte('\n')
				continue
			}
			if ev.Len() > 0 {
				select {
				case c.events <- ev.String():
				default: // a reader that does not look keeps reading
				}
				ev.Reset()
			}
		}
	}()
	return c
}

func (c *sseClient) close() { c.resp.Body.Close() }

// BenchmarkLiveLatency drops one complete hit file at a time (renamed into
// the folder, as a recorder finishing a file) with a live page open, and
// measures the time from the file being stable (arrival + settle time) to
// the event carrying its verdict on the page's stream.
func BenchmarkLiveLatency(b *testing.B) {
	const settle = 500 * time.Millisecond
	d := startLive(b, settle, "[live]\nlisten = \"127.0.0.1:0\"\n")
	page := openStream(b, d.url)
	defer page.close()
	var lat []float64
	i := 0
	for b.Loop() {
		i++
		name := fmt.Sprintf("R1_%04d.csv", i)
		tmp := filepath.Join(d.dir, ".next.tmp")
		if err := os.WriteFile(tmp, hitCSV(b, uint64(1000+i), 4096, 1), 0o644); err != nil {
			b.Fatal(err)
		}
		start := time.Now()
		if err := os.Rename(tmp, filepath.Join(d.export, name)); err != nil {
			b.Fatal(err)
		}
		deadline := time.After(waitLong)
	wait:
		for {
			select {
			case ev, ok := <-page.events:
				if !ok {
					b.Fatal("the stream ended")
				}
				if strings.HasPrefix(ev, "event: hit") && strings.Contains(ev, name) {
					break wait
				}
			case <-deadline:
				b.Fatalf("%s never reached the page", name)
			}
		}
		lat = append(lat, (time.Since(start)-settle).Seconds()*1000)
	}
	b.ReportMetric(median(lat), "ms-beyond-settle")
	b.ReportMetric(quantile(lat, 0.9), "ms-beyond-settle-p90")
}

// BenchmarkLiveRecording drops a burst of 100 short hit files (1 s at
// 4096 Hz) at once and measures the files recorded per second, from the
// end of the settle time to the last row: without the live page, with it
// and no page open, and with 50 pages open (50 event streams, each
// receiving every update). Each iteration runs the three in turn (in a
// rotating order), so that they share the machine's load; the metrics are
// the medians and the ratios to the run without the page.
func BenchmarkLiveRecording(b *testing.B) {
	const burst = 100
	files := make([][]byte, burst)
	for i := range files {
		files[i] = hitCSV(b, uint64(i+1), 4096, 1)
	}
	const settle = 300 * time.Millisecond
	const on = "[live]\nlisten = \"127.0.0.1:0\"\n"
	cases := []struct {
		name  string
		live  string
		pages int
	}{{"off", "", 0}, {"on-0-pages", on, 0}, {"on-50-pages", on, 50}}
	perSec := make([][]float64, len(cases))
	iter := 0
	for b.Loop() {
		for k := range cases {
			ci := (k + iter) % len(cases)
			c := cases[ci]
			perSec[ci] = append(perSec[ci], liveBurst(b, files, settle, c.live, c.pages))
		}
		iter++
	}
	for i, c := range cases {
		b.ReportMetric(median(perSec[i]), c.name+"-files/s")
		if i > 0 {
			var r []float64
			for j := range perSec[i] {
				r = append(r, perSec[i][j]/perSec[0][j])
			}
			b.ReportMetric(median(r), c.name+"/off")
		}
	}
}

// liveBurst records one burst with the given [live] lines and open pages
// and returns the files recorded per second.
func liveBurst(b *testing.B, files [][]byte, settle time.Duration, live string, npages int) float64 {
	b.StopTimer()
	d := startLive(b, settle, live)
	var pages []*sseClient
	var readers sync.WaitGroup
	for range npages {
		p := openStream(b, d.url)
		pages = append(pages, p)
		readers.Add(1)
		go func() {
			defer readers.Done()
			for range p.events {
			}
		}()
	}
	b.StartTimer()
	start := time.Now()
	for i, data := range files {
		tmp := filepath.Join(d.dir, fmt.Sprintf(".hit-%04d.tmp", i))
		if err := os.WriteFile(tmp, data, 0o644); err != nil {
			b.Fatal(err)
		}
		if err := os.Rename(tmp, filepath.Join(d.export, fmt.Sprintf("R1_%04d.csv", i))); err != nil {
			b.Fatal(err)
		}
	}
	for d.recorded.Load() < int64(len(files)) {
		time.Sleep(5 * time.Millisecond)
	}
	rate := float64(len(files)) / (time.Since(start) - settle).Seconds()
	b.StopTimer()
	for _, p := range pages {
		p.close()
	}
	readers.Wait()
	d.stop()
	b.StartTimer()
	return rate
}

func quantile(x []float64, p float64) float64 {
	if len(x) == 0 {
		return 0
	}
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	return stat.Quantile(p, stat.Empirical, s, nil)
}
