package db

import (
	"context"
	"errors"
	"testing"
	"time"

	"github.com/ringlog/ringlog/pipeline"
)

// TestSyntheticNeverMixed: synthetic hits are stored marked, left out of
// every query and of the status counts unless Filter.Synthetic asks for
// them, and then only they come back; a database with real hits refuses
// them, and no real hit can take a synthetic path.
func TestSyntheticNeverMixed(t *testing.T) {
	ctx := context.Background()
	d := openTemp(t)
	opt := SyntheticOptions{Hits: 300, End: t0, Batch: 128}
	n, err := d.RecordSynthetic(ctx, opt)
	if err != nil || n != 300 {
		t.Fatalf("stored %d: %v", n, err)
	}
	if n, err := d.RecordSynthetic(ctx, opt); err != nil || n != 0 {
		t.Fatalf("a repeated run stored %d: %v", n, err)
	}
	if hits, err := d.Hits(ctx, Filter{}); err != nil || len(hits) != 0 {
		t.Fatalf("real hits: %d (%v), want none", len(hits), err)
	}
	st, err := d.Status(ctx)
	if err != nil || st.Hits != 0 || st.LastHit != nil {
		t.Fatalf("status counts synthetic hits: %+v %v", st, err)
	}
	syn, err := d.Hits(ctx, Filter{Synthetic: true})
	if err != nil || len(syn) != 300 {
		t.Fatalf("synthetic hits: %d (%v)", len(syn), err)
	}
	last := syn[len(syn)-1]
	if !last.Meta.HitTime.Equal(t0) && (last.Meta.HitTime.After(t0) || t0.Sub(last.Meta.HitTime) > 12*time.Hour) {
		t.Errorf("last hit at %v, want near %v", last.Meta.HitTime, t0)
	}
	if last.Meta.Extra[SyntheticMark] == "" || len(last.Result.Modes) != 4 || len(last.Result.Modes[0].Estimates) != 4 {
		t.Errorf("synthetic hit not shaped like a real one: %+v", last)
	}
	verdicts := map[pipeline.Verdict]int{}
	for _, h := range syn {
		verdicts[h.Result.Verdict]++
	}
	if verdicts[pipeline.Accepted] < 200 || verdicts[pipeline.Flagged] == 0 || verdicts[pipeline.Rejected] == 0 {
		t.Errorf("verdicts %v: want mostly accepted, some flagged and rejected", verdicts)
	}

	// A real hit, then: the synthetic ones stay out of its queries, and
	// no more synthetic hits go in.
	real := openTemp(t)
	if _, err := real.RecordResult(ctx, fileInfo("/data/a.csv", "a", t0), HitMeta{Prototype: "P"}, sampleResult("/data/a.csv"), nil); err != nil {
		t.Fatal(err)
	}
	if _, err := real.RecordSynthetic(ctx, opt); !errors.Is(err, ErrRealHits) {
		t.Fatalf("synthetic hits into a real history: %v, want ErrRealHits", err)
	}
	if _, err := d.RecordResult(ctx, fileInfo("/data/a.csv", "a", t0), HitMeta{Prototype: "synthetic-frame"}, sampleResult("/data/a.csv"), nil); err != nil {
		t.Fatal(err)
	}
	for _, f := range []Filter{{}, {Prototype: "synthetic-frame"}, {ForStats: true}} {
		if hits, err := d.Hits(ctx, f); err != nil || len(hits) != 1 || hits[0].Path != "/data/a.csv" {
			t.Errorf("filter %+v: %d hits (%v), want the one real hit", f, len(hits), err)
		}
		f.Synthetic = true
		if hits, err := d.Hits(ctx, f); err != nil || len(hits) != 300 {
			t.Errorf("filter %+v: %d hits (%v), want the 300 synthetic ones", f, len(hits), err)
		}
	}
	if _, err := real.RecordResult(ctx, fileInfo(SyntheticPathPrefix+"x", "x", t0), HitMeta{}, sampleResult("x"), nil); err == nil {
		t.Error("a real hit under the synthetic path prefix was stored")
	}
	if files, err := d.StoredFiles(ctx, Filter{}); err != nil || len(files) != 1 {
		t.Errorf("stored files %d (%v), want the real one", len(files), err)
	}
}
