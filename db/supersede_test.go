package db

import (
	"context"
	"testing"
	"time"

	"github.com/ringlog/ringlog/pipeline"
)

// ids returns the ids of hits, in order.
func ids(hs []Hit) []int64 {
	var out []int64
	for _, h := range hs {
		out = append(out, h.ID)
	}
	return out
}

// TestChangedFileSupersedes: a file appended after it was recorded gives a
// new hit that supersedes the first; every query counts the path once.
func TestChangedFileSupersedes(t *testing.T) {
	d := openTemp(t)
	ctx := context.Background()
	before := time.Now().Add(-time.Second)
	path := "/export/P7_0001.csv"
	v1 := fileInfo(path, "first part", t0)
	v2 := fileInfo(path, "first part and what the recorder appended", t0.Add(5*time.Second))
	other := fileInfo("/export/P7_0002.csv", "another hit", t0)
	meta := HitMeta{Prototype: "P7", Revision: "B", HitTime: t0}
	o1, err := d.RecordResult(ctx, v1, meta, sampleResult(path), nil)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := d.RecordResult(ctx, other, meta, sampleResult(other.Path), nil); err != nil {
		t.Fatal(err)
	}
	o2, err := d.RecordResult(ctx, v2, meta, sampleResult(path), nil)
	if err != nil {
		t.Fatal(err)
	}
	if o2.HitID == o1.HitID || o2.Duplicate || o2.Repeat || o2.Revived || len(o2.Superseded) != 1 ||
		o2.Superseded[0].HitID != o1.HitID || o2.Superseded[0].SHA256 != v1.SHA256 || o2.Superseded[0].Verdict != pipeline.Flagged {
		t.Fatalf("outcome of the changed file %+v, want a new hit superseding %d", o2, o1.HitID)
	}
	for _, f := range []Filter{{}, {ForStats: true}, {Prototype: "P7"}} {
		hs, err := d.Hits(ctx, f)
		if err != nil {
			t.Fatal(err)
		}
		if len(hs) != 2 || hs[0].ID == o1.HitID || hs[1].ID == o1.HitID {
			t.Errorf("Hits(%+v) = %v, want the two current hits without %d", f, ids(hs), o1.HitID)
		}
	}
	all, err := d.Hits(ctx, Filter{WithSuperseded: true})
	if err != nil {
		t.Fatal(err)
	}
	var old *Hit
	for i := range all {
		if all[i].ID == o1.HitID {
			old = &all[i]
		} else if all[i].SupersededBy != 0 {
			t.Errorf("hit %d is marked superseded by %d", all[i].ID, all[i].SupersededBy)
		}
	}
	if len(all) != 3 || old == nil || old.SupersededBy != o2.HitID || old.SupersededBySHA256 != v2.SHA256 ||
		old.SupersededAt.Before(before) || len(old.Result.Modes) != 3 {
		t.Fatalf("with superseded: %d hits, old %+v", len(all), old)
	}
	// The earlier result stays as provenance.
	if rs, err := d.Results(ctx, o1.HitID); err != nil || len(rs) != 1 || rs[0].Superseded {
		t.Errorf("results of the superseded hit %+v, %v", rs, err)
	}
	if sf, err := d.StoredFiles(ctx, Filter{}); err != nil || len(sf) != 2 {
		t.Errorf("StoredFiles: %d, %v; want the 2 current hits", len(sf), err)
	}
	st, err := d.Status(ctx)
	if err != nil || st.Hits != 2 || st.Superseded != 1 || st.Files[StateAnalysed] != 2 {
		t.Errorf("status %+v, %v; want 2 hits, 2 analysed files", st, err)
	}
	if fs, _, _ := d.File(ctx, path); fs.HitID != o2.HitID || fs.SHA256 != v2.SHA256 || fs.Size != v2.Size {
		t.Errorf("file row %+v, want it on hit %d", fs, o2.HitID)
	}
	// The live page's queries.
	recent, err := d.RecentHits(ctx, 10)
	if err != nil || len(recent) != 2 {
		t.Errorf("RecentHits = %v, %v", ids(recent), err)
	}
	after, err := d.HitsAfter(ctx, 0, 10)
	if err != nil || len(after) != 2 {
		t.Errorf("HitsAfter = %v, %v", ids(after), err)
	}
	tally, err := d.TallyRecorded(ctx, before, time.Now().Add(time.Minute))
	if err != nil || len(tally) != 1 || tally[0].Total != 2 {
		t.Errorf("TallyRecorded = %+v, %v; want 2 hits", tally, err)
	}
	// The day's superseded hits, for the daily report.
	sup, err := d.SupersededBetween(ctx, before, time.Now().Add(time.Minute))
	if err != nil || len(sup) != 1 {
		t.Fatalf("SupersededBetween = %+v, %v", sup, err)
	}
	s := sup[0]
	if s.ID != o1.HitID || s.SHA256 != v1.SHA256 || s.Path != path || s.ByID != o2.HitID || s.BySHA256 != v2.SHA256 ||
		s.ByPath != path || s.Verdict != pipeline.Flagged || !s.HitTime.Equal(t0) {
		t.Errorf("superseded hit %+v", s)
	}
	if sup, _ := d.SupersededBetween(ctx, before.Add(-48*time.Hour), before); len(sup) != 0 {
		t.Errorf("SupersededBetween of another day = %+v", sup)
	}
	// The same version again changes nothing.
	o3, err := d.RecordResult(ctx, v2, meta, sampleResult(path), nil)
	if err != nil || !o3.Repeat || len(o3.Superseded) != 0 || o3.HitID != o2.HitID {
		t.Errorf("repeat: %+v, %v", o3, err)
	}
}

// TestSameBytesTwoPathsIsNoSupersede: a copy under another name stays a
// duplicate, and the copy changing later supersedes nothing of the first.
func TestSameBytesTwoPathsIsNoSupersede(t *testing.T) {
	d := openTemp(t)
	ctx := context.Background()
	a := fileInfo("/export/a.csv", "same bytes", t0)
	b := fileInfo("/backup/a.csv", "same bytes", t0)
	oa, err := d.RecordResult(ctx, a, HitMeta{}, sampleResult(a.Path), nil)
	if err != nil {
		t.Fatal(err)
	}
	ob, err := d.RecordResult(ctx, b, HitMeta{}, sampleResult(b.Path), nil)
	if err != nil || !ob.Duplicate || ob.HitID != oa.HitID || len(ob.Superseded) != 0 {
		t.Fatalf("copy: %+v, %v", ob, err)
	}
	b2 := fileInfo(b.Path, "the copy, rewritten", t0.Add(time.Minute))
	ob2, err := d.RecordResult(ctx, b2, HitMeta{}, sampleResult(b.Path), nil)
	if err != nil || ob2.Duplicate || len(ob2.Superseded) != 0 {
		t.Fatalf("the copy changed: %+v, %v", ob2, err)
	}
	hs, err := d.Hits(ctx, Filter{})
	if err != nil || len(hs) != 2 {
		t.Errorf("Hits = %v, %v; want the first and the copy's new content", ids(hs), err)
	}
}

// TestReplacedByExistingContent: a file replaced by the bytes of another
// recorded hit becomes its duplicate; the file's earlier hit is
// superseded by that hit. Back to its first bytes, its first hit is
// current again.
func TestReplacedByExistingContent(t *testing.T) {
	d := openTemp(t)
	ctx := context.Background()
	p := fileInfo("/export/p.csv", "p's bytes", t0)
	q := fileInfo("/export/q.csv", "q's bytes", t0)
	op, err := d.RecordResult(ctx, p, HitMeta{}, sampleResult(p.Path), nil)
	if err != nil {
		t.Fatal(err)
	}
	oq, err := d.RecordResult(ctx, q, HitMeta{}, sampleResult(q.Path), nil)
	if err != nil {
		t.Fatal(err)
	}
	pAsQ := fileInfo(p.Path, "q's bytes", t0.Add(time.Minute))
	o, err := d.RecordResult(ctx, pAsQ, HitMeta{}, sampleResult(p.Path), nil)
	if err != nil || !o.Duplicate || o.HitID != oq.HitID || len(o.Superseded) != 1 || o.Superseded[0].HitID != op.HitID {
		t.Fatalf("p replaced by q's bytes: %+v, %v; want a duplicate of %d superseding %d", o, err, oq.HitID, op.HitID)
	}
	hs, err := d.Hits(ctx, Filter{})
	if err != nil || len(hs) != 1 || hs[0].ID != oq.HitID {
		t.Errorf("Hits = %v, %v; want only q's hit %d", ids(hs), err, oq.HitID)
	}
	if fs, _, _ := d.File(ctx, p.Path); fs.State != StateDuplicate || fs.HitID != oq.HitID {
		t.Errorf("p's file row %+v", fs)
	}
	// p holds its first bytes again.
	pBack := fileInfo(p.Path, "p's bytes", t0.Add(2*time.Minute))
	o, err = d.RecordResult(ctx, pBack, HitMeta{}, sampleResult(p.Path), nil)
	if err != nil || !o.Revived || o.Repeat || o.HitID != op.HitID || len(o.Superseded) != 0 {
		t.Fatalf("p back to its first bytes: %+v, %v", o, err)
	}
	hs, err = d.Hits(ctx, Filter{})
	if err != nil || len(hs) != 2 {
		t.Errorf("Hits = %v, %v; want p's and q's hits", ids(hs), err)
	}
	if fs, _, _ := d.File(ctx, p.Path); fs.State != StateAnalysed || fs.HitID != op.HitID {
		t.Errorf("p's file row %+v", fs)
	}
}

// TestRevertedFileRevives: a file rewritten and then restored to its first
// bytes: its first hit is current again and supersedes the second.
func TestRevertedFileRevives(t *testing.T) {
	d := openTemp(t)
	ctx := context.Background()
	v1 := fileInfo("/export/a.csv", "v1", t0)
	v2 := fileInfo(v1.Path, "v2", t0.Add(time.Minute))
	o1, err := d.RecordResult(ctx, v1, HitMeta{}, sampleResult(v1.Path), nil)
	if err != nil {
		t.Fatal(err)
	}
	o2, err := d.RecordResult(ctx, v2, HitMeta{}, sampleResult(v1.Path), nil)
	if err != nil || len(o2.Superseded) != 1 {
		t.Fatalf("v2: %+v, %v", o2, err)
	}
	o3, err := d.RecordResult(ctx, fileInfo(v1.Path, "v1", t0.Add(2*time.Minute)), HitMeta{}, sampleResult(v1.Path), nil)
	if err != nil || !o3.Revived || o3.HitID != o1.HitID || len(o3.Superseded) != 1 || o3.Superseded[0].HitID != o2.HitID {
		t.Fatalf("back to v1: %+v, %v", o3, err)
	}
	all, err := d.Hits(ctx, Filter{WithSuperseded: true})
	if err != nil || len(all) != 2 {
		t.Fatalf("%v, %v", ids(all), err)
	}
	for _, h := range all {
		want := int64(0)
		if h.ID == o2.HitID {
			want = o1.HitID
		}
		if h.SupersededBy != want {
			t.Errorf("hit %d superseded by %d, want %d", h.ID, h.SupersededBy, want)
		}
	}
}
