package page

// A synthetic test history: hit files written by the closed-form generator
// pipeline/synth into a folder, analysed by the real pipeline
// (process.Data, the daemon's path) and recorded in a real SQLite history.
// The scenario is invented: a mixer frame, revisions A (welded) and B
// (bolted, damps more), hit on two bays; some hits are spoiled the ways
// the quality rules know.

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"sync"
	"testing"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/process"
	"github.com/ringlog/ringlog/pipeline/read"
	"github.com/ringlog/ringlog/pipeline/synth"
	"github.com/ringlog/ringlog/report"
)

// fixtureModes are the modes of the invented mixer frame.
var fixtureModes = []struct {
	label string
	fHz   float64
	zeta  [2]float64 // revision A, B
	amp   float64
}{
	{"sway", 38, [2]float64{0.012, 0.018}, 1.0},
	{"twist", 141, [2]float64{0.008, 0.010}, 0.6},
	{"plate", 415, [2]float64{0.015, 0.017}, 0.35},
}

// fixtureExpected are the expected modes, as a configuration lists them.
func fixtureExpected(string) []report.Expected {
	var out []report.Expected
	for _, m := range fixtureModes {
		out = append(out, report.Expected{Label: m.label, FrequencyHz: m.fHz, Tolerance: 0.08})
	}
	return out
}

const (
	fixRate     = 2048.0
	fixDuration = 2.0
)

// fixHit is one planned hit.
type fixHit struct {
	name  string
	rev   int
	bay   string
	point string
	at    time.Time
	spoil string // "", "clipped", "double", "ringing", "missed", "friction", "noisy"
}

// spoils are the faults, in the order the plan cycles through them.
var spoils = []string{"clipped", "double", "ringing", "missed", "friction", "noisy"}

// planDay plans n hits on the day of start, one every 2.5 minutes from
// 07:30, every spoilEvery-th spoiled (0: none).
func planDay(start time.Time, n, spoilEvery int, r *rand.Rand) []fixHit {
	y, m, d := start.Date()
	t0 := time.Date(y, m, d, 7, 30, 0, 0, start.Location())
	var out []fixHit
	for i := range n {
		h := fixHit{rev: i * 2 / max(n, 1), bay: []string{"bay-1", "bay-2"}[i%2],
			point: []string{"P1", "P2", "P3"}[r.IntN(3)], at: t0.Add(time.Duration(i) * 150 * time.Second)}
		if spoilEvery > 0 && i%spoilEvery == spoilEvery-1 {
			h.spoil = spoils[(i/spoilEvery)%len(spoils)]
		}
		h.name = fmt.Sprintf("%s_%s_%s_%04d.csv", start.Format("0102"), []string{"A", "B"}[h.rev], h.point, i+1)
		out = append(out, h)
	}
	return out
}

// fixRecording simulates one hit.
func fixRecording(h fixHit, seed uint64) *pipeline.Recording {
	r := rand.New(rand.NewPCG(seed, 5))
	var modes []synth.Mode
	for _, m := range fixtureModes {
		modes = append(modes, synth.Mode{FrequencyHz: m.fHz * (1 + 0.003*r.NormFloat64()),
			DampingRatio: m.zeta[h.rev] * (1 + 0.08*r.NormFloat64()), Amplitude: m.amp * (0.7 + 0.6*r.Float64())})
	}
	hit := synth.Hit{SampleRate: fixRate, Duration: fixDuration, PreTrigger: 0.05, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 46), Seed: seed, PulseWidth: 0.0012, PulsePeak: 200}
	switch h.spoil {
	case "clipped":
		hit.ClipLevel = 0.8
	case "double":
		hit.DoubleHitDelay, hit.DoubleHitScale = 0.021, 0.45
	case "ringing":
		hit.RingingBefore = 0.3
	case "missed":
		hit.Modes, hit.NoiseSD, hit.PulseWidth = nil, 0.002, 0
	case "friction":
		hit.Modes = hit.Modes[:1]
		hit.Friction = 1.1
	case "noisy":
		hit.NoiseSD = synth.NoiseForSNR(modes, 14)
	}
	resp := hit.Response()
	force := hit.Force()
	if force == nil {
		force = make([]float64, len(resp))
	}
	return &pipeline.Recording{Path: h.name, Format: "csv", Channels: []pipeline.Channel{
		{Name: "hammer", Unit: "N", Role: pipeline.RoleForce, SampleRate: fixRate, Samples: force},
		{Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: fixRate, Samples: resp},
	}}
}

// buildHistory writes the planned hits into dir, analyses them in
// parallel and records them in dir/history.db. It returns the database.
func buildHistory(tb testing.TB, dir, prototype string, plan []fixHit) *db.DB {
	tb.Helper()
	ctx := context.Background()
	store, err := db.Open(ctx, filepath.Join(dir, "history.db"))
	if err != nil {
		tb.Fatal(err)
	}
	type done struct {
		fi  db.FileInfo
		res *pipeline.Result
		err error
	}
	out := make([]done, len(plan))
	var wg sync.WaitGroup
	work := make(chan int)
	for range runtime.GOMAXPROCS(0) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range work {
				h := plan[i]
				rec := fixRecording(h, uint64(h.at.Unix())*7+uint64(i))
				var buf bytes.Buffer
				if err := read.WriteCSV(&buf, rec, read.WriteOptions{TimeColumn: true, Digits: 7}); err != nil {
					out[i].err = err
					continue
				}
				path := filepath.Join(dir, h.name)
				if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
					out[i].err = err
					continue
				}
				if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
					out[i].err = err
					continue
				}
				sum := sha256.Sum256(buf.Bytes())
				out[i].fi = db.FileInfo{Path: path, Size: int64(buf.Len()), MTime: h.at, SHA256: hex.EncodeToString(sum[:])}
				out[i].res, out[i].err = process.Data(ctx, path, buf.Bytes(), process.Defaults())
			}
		}()
	}
	for i := range plan {
		work <- i
	}
	close(work)
	wg.Wait()
	for i, h := range plan {
		o := out[i]
		if o.err != nil {
			tb.Fatalf("%s: %v", h.name, o.err)
		}
		labelModes(o.res)
		meta := db.HitMeta{Prototype: prototype, Revision: []string{"A", "B"}[h.rev], Bay: h.bay, Point: h.point, Direction: "z", HitTime: h.at}
		if _, err := store.RecordResult(ctx, o.fi, meta, o.res, nil); err != nil {
			tb.Fatal(err)
		}
	}
	return store
}

// labelModes labels modes by the nearest expected mode within 8 %, as the
// daemon does with a configuration.
func labelModes(res *pipeline.Result) {
	for i := range res.Modes {
		m := &res.Modes[i]
		best := math.Inf(1)
		for _, e := range fixtureModes {
			if d := math.Abs(m.FrequencyHz-e.fHz) / e.fHz; d < 0.08 && d < best {
				best, m.Label = d, e.label
			}
		}
	}
}

// bigDay is the history of the benchmark: a day of 200 hits (every 7th
// spoiled, about 30 flagged or rejected) after two earlier days of 40
// hits. Built once per test binary.
type bigDay struct {
	dir   string
	store *db.DB
	day   time.Time
}

var (
	bigOnce sync.Once
	big     bigDay
	bigErr  error
)

// theBigDay returns the shared 200-hit history, building it on first use
// (about 5 s on two cores).
func theBigDay(tb testing.TB) bigDay {
	tb.Helper()
	bigOnce.Do(func() {
		dir, err := os.MkdirTemp("", "ringlog-page-test-")
		if err != nil {
			bigErr = err
			return
		}
		big.dir = dir
		loc := time.FixedZone("lab", 2*3600)
		big.day = time.Date(2025, 3, 12, 12, 0, 0, 0, loc)
		r := rand.New(rand.NewPCG(3, 4))
		var plan []fixHit
		plan = append(plan, planDay(big.day.AddDate(0, 0, -6), 40, 9, r)...)
		plan = append(plan, planDay(big.day.AddDate(0, 0, -2), 40, 9, r)...)
		plan = append(plan, planDay(big.day, 200, 7, r)...)
		big.store = buildHistory(tb, dir, "mixer-frame", plan)
	})
	if bigErr != nil {
		tb.Fatal(bigErr)
	}
	return big
}

// TestMain removes the shared history after the tests.
func TestMain(m *testing.M) {
	code := m.Run()
	if big.store != nil {
		big.store.Close()
	}
	if big.dir != "" {
		os.RemoveAll(big.dir)
	}
	os.Exit(code)
}
