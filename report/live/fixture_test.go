package live

// A small test history: hit files made by the closed-form generator
// pipeline/synth (synthetic, invented scenario: a test stand's bracket,
// revisions S1 and S2), analysed by the real pipeline (process.Data, the
// daemon's path) and recorded in a real SQLite history.

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/process"
	"github.com/ringlog/ringlog/pipeline/read"
	"github.com/ringlog/ringlog/pipeline/synth"
	"github.com/ringlog/ringlog/report"
)

type fixture struct {
	store *db.DB
	dir   string
}

// hitSpec is one hit to record.
type hitSpec struct {
	name, prototype, revision string
	spoil                     string // "", "double", "clipped"
	seed                      uint64
}

func newFixture(t testing.TB) *fixture {
	t.Helper()
	dir := t.TempDir()
	store, err := db.Open(context.Background(), filepath.Join(dir, "history.db"))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { store.Close() })
	return &fixture{store: store, dir: dir}
}

// record writes, analyses and records one synthetic hit and returns its id.
func (f *fixture) record(t testing.TB, h hitSpec) int64 {
	t.Helper()
	modes := []synth.Mode{{FrequencyHz: 52, DampingRatio: 0.012, Amplitude: 1}, {FrequencyHz: 190, DampingRatio: 0.008, Amplitude: 0.5}}
	for i := range modes {
		modes[i].DampingRatio *= 1 + 0.05*float64(int(h.seed%7)-3)/3
	}
	hit := synth.Hit{SampleRate: 2048, Duration: 1.5, PreTrigger: 0.05, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 46), Seed: h.seed, PulseWidth: 0.0012, PulsePeak: 200}
	switch h.spoil {
	case "double":
		// a bounce 35 ms later: long enough a decay before it (70 samples)
		// for the modes of the rejected hit to be estimated and labelled
		hit.DoubleHitDelay, hit.DoubleHitScale = 0.035, 0.45
	case "clipped":
		hit.ClipLevel = 0.8
	}
	resp := hit.Response()
	rec := &pipeline.Recording{Path: h.name, Format: "csv", Channels: []pipeline.Channel{
		{Name: "hammer", Unit: "N", Role: pipeline.RoleForce, SampleRate: 2048, Samples: hit.Force()},
		{Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: 2048, Samples: resp}}}
	var buf bytes.Buffer
	if err := read.WriteCSV(&buf, rec, read.WriteOptions{TimeColumn: true}); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(f.dir, h.name)
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	res, err := process.Data(context.Background(), path, buf.Bytes(), process.Defaults())
	if err != nil {
		t.Fatal(err)
	}
	sum := sha256.Sum256(buf.Bytes())
	out, err := f.store.RecordResult(context.Background(), db.FileInfo{Path: path, Size: int64(buf.Len()), MTime: time.Now(),
		SHA256: hex.EncodeToString(sum[:])}, db.HitMeta{Prototype: h.prototype, Revision: h.revision, HitTime: time.Now()}, res, nil)
	if err != nil {
		t.Fatal(err)
	}
	return out.HitID
}

func testExpected(string) []report.Expected {
	return []report.Expected{{Label: "sway", FrequencyHz: 52, Tolerance: 0.1}, {Label: "twist", FrequencyHz: 190, Tolerance: 0.1}}
}

// testHitJSON stands in for the command's 'history --json' shape.
func testHitJSON(h db.Hit) any {
	return map[string]any{"file": h.Path, "sha256": h.SHA256, "verdict": h.Result.Verdict, "prototype": h.Meta.Prototype,
		"revision": h.Meta.Revision, "modes": h.Result.Modes, "reasons": h.Result.Reasons}
}

func (f *fixture) server(t testing.TB, opt Options) *Server {
	t.Helper()
	if opt.Expected == nil {
		opt.Expected = testExpected
	}
	if opt.HitJSON == nil {
		opt.HitJSON = testHitJSON
	}
	if opt.Status == nil {
		opt.Status = func(ctx context.Context) (any, error) {
			st, err := f.store.Status(ctx)
			return map[string]any{"hits": st.Hits, "pending": st.Pending}, err
		}
	}
	s, err := New(f.store, opt)
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// get runs one request through the handler.
func get(t testing.TB, h http.Handler, method, target string, hdr ...string) *httptest.ResponseRecorder {
	t.Helper()
	r := httptest.NewRequest(method, target, nil)
	r.Host = "127.0.0.1:8620"
	r.RemoteAddr = "127.0.0.1:40000"
	for i := 0; i+1 < len(hdr); i += 2 {
		if hdr[i] == "Host" {
			r.Host = hdr[i+1]
			continue
		}
		r.Header.Set(hdr[i], hdr[i+1])
	}
	w := httptest.NewRecorder()
	h.ServeHTTP(w, r)
	return w
}
