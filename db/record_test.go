package db

import (
	"context"
	"errors"
	"fmt"
	"math"
	"reflect"
	"sync"
	"testing"
	"time"

	"github.com/ringlog/ringlog/pipeline"
)

func count(t *testing.T, d *DB, table string) int {
	t.Helper()
	var n int
	if err := d.r.QueryRow("SELECT count(*) FROM " + table).Scan(&n); err != nil {
		t.Fatal(err)
	}
	return n
}

func TestRecordResultRoundTrip(t *testing.T) {
	d := openTemp(t)
	ctx := context.Background()
	fi := fileInfo("/data/bay2/P7_revB_pt3_z_0001.csv", "hit one", t0)
	in := sampleResult(fi.Path)
	meta := HitMeta{Prototype: "P7", Revision: "B", Bay: "2", Point: "3", Direction: "+z",
		HitTime: t0.Add(-time.Minute), Extra: map[string]string{"window": "none"}}
	out, err := d.RecordResult(ctx, fi, meta, in, map[string]any{"min_cycles": 5})
	if err != nil {
		t.Fatal(err)
	}
	if out.Duplicate || out.Repeat || out.HitID == 0 || out.ResultID == 0 {
		t.Fatalf("outcome %+v", out)
	}
	hits, err := d.Hits(ctx, Filter{})
	if err != nil {
		t.Fatal(err)
	}
	if len(hits) != 1 {
		t.Fatalf("%d hits, want 1", len(hits))
	}
	h := hits[0]
	if !reflect.DeepEqual(h.Result, in) {
		t.Errorf("result does not round-trip:\n got %+v\nwant %+v", *h.Result, *in)
	}
	// The parts the test relies on, spelled out.
	if h.Result.Verdict != pipeline.Flagged || len(h.Result.Reasons) != 2 || *h.Result.Reasons[0].Mode != 2 ||
		h.Result.Reasons[1].Mode != nil || !h.Result.Modes[2].Dropped || h.Result.Modes[1].Label != "bending-1" ||
		h.Result.Modes[0].Estimates[2].Method != "envelope" {
		t.Errorf("result details lost: %+v", *h.Result)
	}
	if h.ID != out.HitID || h.ResultID != out.ResultID || h.Path != fi.Path || h.SHA256 != fi.SHA256 || len(h.ModeIDs) != 3 {
		t.Errorf("hit %+v", h)
	}
	if !h.Meta.HitTime.Equal(meta.HitTime) || !reflect.DeepEqual(h.Meta.Extra, meta.Extra) ||
		h.Meta.Prototype != "P7" || h.Meta.Revision != "B" || h.Meta.Bay != "2" || h.Meta.Point != "3" || h.Meta.Direction != "+z" {
		t.Errorf("meta %+v, want %+v", h.Meta, meta)
	}
	version, settings, err := d.Settings(ctx, h.AnalysisID)
	if err != nil || version != pipeline.AnalysisVersion || string(settings) != `{"min_cycles":5}` {
		t.Errorf("provenance: %q %s %v", version, settings, err)
	}
	fs, ok, err := d.File(ctx, fi.Path)
	if err != nil || !ok || fs.State != StateAnalysed || fs.HitID != out.HitID || !fs.MTime.Equal(t0) || fs.Size != fi.Size {
		t.Errorf("file row %+v ok=%v err=%v", fs, ok, err)
	}
}

func TestRecordResultNaNAndEmpty(t *testing.T) {
	d := openTemp(t)
	ctx := context.Background()
	in := &pipeline.Result{File: "/x.wav", Format: "wav", Channel: "ch1", SampleRate: 48000, NoiseRMS: math.NaN(),
		Modes: []pipeline.Mode{{FrequencyHz: 12, DampingRatio: 0.02, DampingRatioSD: math.NaN(),
			FrequencyCI95: [2]float64{math.Inf(-1), math.Inf(1)}}}}
	in.AddReason("no_decay", pipeline.SeverityReject, nil, "nothing decays")
	in.Decide()
	fi := fileInfo("/x.wav", "x", t0)
	// No hit time in the metadata: the file's modification time stands in.
	if _, err := d.RecordResult(ctx, fi, HitMeta{}, in, nil); err != nil {
		t.Fatal(err)
	}
	hits, err := d.Hits(ctx, Filter{})
	if err != nil || len(hits) != 1 {
		t.Fatalf("hits %v, %v", hits, err)
	}
	got := hits[0].Result
	m := got.Modes[0]
	if !math.IsNaN(got.NoiseRMS) || !math.IsNaN(m.DampingRatioSD) || !math.IsInf(m.FrequencyCI95[0], -1) ||
		!math.IsInf(m.FrequencyCI95[1], 1) || m.FrequencyHz != 12 {
		t.Errorf("NaN/Inf not kept: noise %v, mode %+v", got.NoiseRMS, m)
	}
	if got.Verdict != pipeline.Rejected || got.Meta != nil || len(m.Estimates) != 0 || m.Estimates == nil {
		t.Errorf("result %+v", *got)
	}
	if !hits[0].Meta.HitTime.Equal(t0) {
		t.Errorf("hit time %v, want the file time %v", hits[0].Meta.HitTime, t0)
	}
}

func TestRecordResultRefusesBadInput(t *testing.T) {
	d := openTemp(t)
	ctx := context.Background()
	undecided := sampleResult("/a")
	undecided.Verdict = ""
	cases := map[string]struct {
		fi  FileInfo
		res *pipeline.Result
	}{
		"no verdict": {fileInfo("/a", "a", t0), undecided},
		"bad sha":    {FileInfo{Path: "/a", SHA256: "abc"}, sampleResult("/a")},
		"no result":  {fileInfo("/a", "a", t0), nil},
		"no path":    {fileInfo("", "a", t0), sampleResult("/a")},
	}
	for name, c := range cases {
		if _, err := d.RecordResult(ctx, c.fi, HitMeta{}, c.res, nil); err == nil {
			t.Errorf("%s: accepted", name)
		}
	}
	if n := count(t, d, "hits") + count(t, d, "files"); n != 0 {
		t.Errorf("bad input left %d rows", n)
	}
}

func TestDuplicateContent(t *testing.T) {
	d := openTemp(t)
	ctx := context.Background()
	first := fileInfo("/data/in/a.csv", "same bytes", t0)
	copyFi := fileInfo("/data/archive/a-copy.csv", "same bytes", t0.Add(time.Hour))
	o1, err := d.RecordResult(ctx, first, HitMeta{Prototype: "P1"}, sampleResult(first.Path), nil)
	if err != nil {
		t.Fatal(err)
	}
	o2, err := d.RecordResult(ctx, copyFi, HitMeta{Prototype: "P1"}, sampleResult(copyFi.Path), nil)
	if err != nil {
		t.Fatal(err)
	}
	if !o2.Duplicate || o2.HitID != o1.HitID || o2.ResultID != o1.ResultID {
		t.Errorf("copy: outcome %+v, want a duplicate of %+v", o2, o1)
	}
	// The same path and bytes again: idempotent.
	o3, err := d.RecordResult(ctx, first, HitMeta{Prototype: "P1"}, sampleResult(first.Path), nil)
	if err != nil {
		t.Fatal(err)
	}
	if !o3.Repeat || o3.Duplicate || o3.HitID != o1.HitID {
		t.Errorf("repeat: outcome %+v", o3)
	}
	o4, err := d.RecordResult(ctx, copyFi, HitMeta{}, sampleResult(copyFi.Path), nil)
	if err != nil || !o4.Duplicate || o4.HitID != o1.HitID {
		t.Errorf("repeat of the copy: %+v %v", o4, err)
	}
	for table, want := range map[string]int{"hits": 1, "files": 2, "results": 1, "modes": 3, "analyses": 1} {
		if n := count(t, d, table); n != want {
			t.Errorf("%s: %d rows, want %d", table, n, want)
		}
	}
	hits, err := d.Hits(ctx, Filter{})
	if err != nil || len(hits) != 1 || hits[0].Path != first.Path {
		t.Errorf("Hits = %+v, %v; want the one hit under the first path", hits, err)
	}
	fs, _, _ := d.File(ctx, copyFi.Path)
	if fs.State != StateDuplicate || fs.HitID != o1.HitID {
		t.Errorf("copy's file row %+v", fs)
	}
	sf, err := d.StoredFiles(ctx, Filter{Prototype: "P1"})
	if err != nil || len(sf) != 1 || sf[0].Path != first.Path || !reflect.DeepEqual(sf[0].Others, []string{copyFi.Path}) ||
		sf[0].SHA256 != first.SHA256 || sf[0].Meta.Prototype != "P1" {
		t.Errorf("StoredFiles = %+v, %v", sf, err)
	}
	st, err := d.Status(ctx)
	if err != nil || st.Files[StateAnalysed] != 1 || st.Files[StateDuplicate] != 1 || st.Hits != 1 {
		t.Errorf("status %+v %v", st, err)
	}
}

func TestRecordFailureRetriesThenFinal(t *testing.T) {
	d := openTemp(t)
	ctx := context.Background()
	fi := FileInfo{Path: "/data/bad.csv", Size: 100, MTime: t0}
	if err := d.MarkPending(ctx, fi); err != nil {
		t.Fatal(err)
	}
	st, err := d.Status(ctx)
	if err != nil || st.Pending != 1 || st.LastError != nil {
		t.Fatalf("after MarkPending: %+v %v", st, err)
	}
	for i := 1; i <= 2; i++ {
		if err := d.RecordFailure(ctx, fi, fmt.Errorf("line %d: not a number", i), false); err != nil {
			t.Fatal(err)
		}
		fs, _, _ := d.File(ctx, fi.Path)
		if fs.State != StatePending || fs.Attempts != i || fs.LastError != fmt.Sprintf("line %d: not a number", i) {
			t.Errorf("after failure %d: %+v", i, fs)
		}
		if known, err := d.Known(ctx, fi.Path, fi.Size, fi.MTime); err != nil || known {
			t.Errorf("after retryable failure %d: Known = %v, %v", i, known, err)
		}
	}
	pend, err := d.PendingFiles(ctx)
	if err != nil || len(pend) != 1 || pend[0].Attempts != 2 {
		t.Errorf("PendingFiles = %+v, %v", pend, err)
	}
	if err := d.RecordFailure(ctx, fi, errors.New("line 3: not a number"), true); err != nil {
		t.Fatal(err)
	}
	fs, _, _ := d.File(ctx, fi.Path)
	if fs.State != StateFailed || fs.Attempts != 3 {
		t.Errorf("after final failure: %+v", fs)
	}
	if known, _ := d.Known(ctx, fi.Path, fi.Size, fi.MTime); !known {
		t.Error("a finally failed file is not Known")
	}
	// The file changes: it is new work, with a fresh attempt count.
	if known, _ := d.Known(ctx, fi.Path, fi.Size, fi.MTime.Add(time.Second)); known {
		t.Error("a changed file is Known")
	}
	changed := FileInfo{Path: fi.Path, Size: 120, MTime: t0.Add(time.Second)}
	if err := d.MarkPending(ctx, changed); err != nil {
		t.Fatal(err)
	}
	fs, _, _ = d.File(ctx, fi.Path)
	if fs.State != StatePending || fs.Attempts != 0 || fs.LastError != "" || fs.Size != 120 {
		t.Errorf("after the file changed: %+v", fs)
	}
	st, err = d.Status(ctx)
	if err != nil || st.LastError != nil || st.Pending != 1 {
		t.Errorf("status after change %+v, %v", st, err)
	}
	if err := d.RecordFailure(ctx, changed, errors.New("truncated last line"), false); err != nil {
		t.Fatal(err)
	}
	st, err = d.Status(ctx)
	if err != nil || st.LastError == nil || st.LastError.Path != fi.Path || st.LastError.Message != "truncated last line" ||
		st.LastError.Final || st.LastError.Attempts != 1 {
		t.Errorf("status last error %+v, %v", st.LastError, err)
	}
	// A later success clears the error.
	ok := fileInfo(fi.Path, "good now", changed.MTime)
	ok.Size = changed.Size
	if _, err := d.RecordResult(ctx, ok, HitMeta{}, sampleResult(fi.Path), nil); err != nil {
		t.Fatal(err)
	}
	fs, _, _ = d.File(ctx, fi.Path)
	if fs.State != StateAnalysed || fs.LastError != "" {
		t.Errorf("after success: %+v", fs)
	}
}

func TestKnownAndKnownSet(t *testing.T) {
	d := openTemp(t)
	ctx := context.Background()
	a := fileInfo("/d/a.csv", "a", t0)
	b := FileInfo{Path: "/d/b.csv", Size: 3, MTime: t0}
	if _, err := d.RecordResult(ctx, a, HitMeta{}, sampleResult(a.Path), nil); err != nil {
		t.Fatal(err)
	}
	if err := d.MarkPending(ctx, b); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		path  string
		size  int64
		mtime time.Time
		want  bool
	}{
		{a.Path, a.Size, a.MTime, true},
		{a.Path, a.Size + 1, a.MTime, false},
		{a.Path, a.Size, a.MTime.Add(time.Nanosecond), false},
		{b.Path, b.Size, b.MTime, false}, // pending is not final
		{"/d/never.csv", 1, t0, false},
	} {
		got, err := d.Known(ctx, c.path, c.size, c.mtime)
		if err != nil || got != c.want {
			t.Errorf("Known(%s, %d, %v) = %v, %v; want %v", c.path, c.size, c.mtime, got, err, c.want)
		}
	}
	set, err := d.KnownSet(ctx)
	if err != nil || len(set) != 2 {
		t.Fatalf("KnownSet = %v, %v", set, err)
	}
	if s := set[a.Path]; !s.Known(a.Size, a.MTime) || s.State != StateAnalysed {
		t.Errorf("stamp of a: %+v", s)
	}
	if s := set[b.Path]; s.Known(b.Size, b.MTime) || s.State != StatePending || !s.Matches(b.Size, b.MTime) {
		t.Errorf("stamp of b: %+v", s)
	}
}

func TestSupersedeKeepsOldResult(t *testing.T) {
	d := openTemp(t)
	ctx := context.Background()
	fi := fileInfo("/d/a.csv", "a", t0)
	old := sampleResult(fi.Path)
	o, err := d.RecordResult(ctx, fi, HitMeta{Prototype: "P"}, old, map[string]int{"min_cycles": 5})
	if err != nil {
		t.Fatal(err)
	}
	// Reanalysis with stricter settings: the dropped mode is gone and the hit is accepted.
	newer := sampleResult(fi.Path)
	newer.Modes = newer.Modes[:2]
	newer.Reasons = nil
	newer.Decide()
	if err := d.Supersede(ctx, o.HitID, newer, map[string]int{"min_cycles": 8}); err != nil {
		t.Fatal(err)
	}
	hits, err := d.Hits(ctx, Filter{})
	if err != nil || len(hits) != 1 {
		t.Fatalf("hits %v %v", hits, err)
	}
	got := hits[0].Result
	if got.Verdict != pipeline.Accepted || len(got.Modes) != 2 || len(got.Reasons) != 0 || hits[0].ResultID == o.ResultID {
		t.Errorf("current result after Supersede: %+v", *got)
	}
	rs, err := d.Results(ctx, o.HitID)
	if err != nil || len(rs) != 2 {
		t.Fatalf("Results = %+v, %v", rs, err)
	}
	if !rs[0].Superseded || rs[0].ID != o.ResultID || rs[0].Verdict != pipeline.Flagged || rs[1].Superseded ||
		rs[0].AnalysisID == rs[1].AnalysisID {
		t.Errorf("provenance %+v", rs)
	}
	_, s0, _ := d.Settings(ctx, rs[0].AnalysisID)
	_, s1, _ := d.Settings(ctx, rs[1].AnalysisID)
	if string(s0) != `{"min_cycles":5}` || string(s1) != `{"min_cycles":8}` {
		t.Errorf("settings %s, %s", s0, s1)
	}
	// The old result's modes and reasons are kept: 3 + 2 modes.
	if n := count(t, d, "modes"); n != 5 {
		t.Errorf("%d modes stored, want 5", n)
	}
	if n := count(t, d, "reasons"); n != 2 {
		t.Errorf("%d reasons stored, want 2 (the superseded result's)", n)
	}
	st, _ := d.Status(ctx)
	if st.Verdicts[pipeline.Accepted] != 1 || st.Verdicts[pipeline.Flagged] != 0 {
		t.Errorf("verdict counts after Supersede: %v", st.Verdicts)
	}
	if err := d.Supersede(ctx, 999, newer, nil); !errors.Is(err, ErrNotFound) {
		t.Errorf("Supersede of a missing hit: %v", err)
	}
}

func TestHitsFilter(t *testing.T) {
	d := openTemp(t)
	ctx := context.Background()
	type spec struct {
		proto, rev, bay string
		at              time.Time
		verdict         pipeline.Verdict
	}
	specs := []spec{
		{"P1", "A", "1", t0, pipeline.Accepted},
		{"P1", "A", "2", t0.Add(time.Hour), pipeline.Rejected},
		{"P1", "B", "1", t0.Add(2 * time.Hour), pipeline.Accepted},
		{"P2", "A", "1", t0.Add(3 * time.Hour), pipeline.Flagged},
	}
	for i, s := range specs {
		path := fmt.Sprintf("/d/%d.csv", i)
		res := sampleResult(path)
		res.Verdict = s.verdict
		res.Modes[1].Label = ""
		if _, err := d.RecordResult(ctx, fileInfo(path, path, t0), HitMeta{Prototype: s.proto, Revision: s.rev, Bay: s.bay, HitTime: s.at}, res, nil); err != nil {
			t.Fatal(err)
		}
	}
	all, err := d.Hits(ctx, Filter{})
	if err != nil || len(all) != 4 {
		t.Fatalf("all hits: %d, %v", len(all), err)
	}
	// Label the second mode of hit 2 (P1 rev B).
	if err := d.SetModeLabel(ctx, all[2].ModeIDs[1], "torsion-1"); err != nil {
		t.Fatal(err)
	}
	if err := d.SetModeLabel(ctx, 123456, "x"); !errors.Is(err, ErrNotFound) {
		t.Errorf("SetModeLabel of a missing mode: %v", err)
	}
	for _, c := range []struct {
		name string
		f    Filter
		want []int // indices into specs, in time order
	}{
		{"prototype", Filter{Prototype: "P1"}, []int{0, 1, 2}},
		{"revision", Filter{Prototype: "P1", Revision: "A"}, []int{0, 1}},
		{"bay", Filter{Bay: "1"}, []int{0, 2, 3}},
		{"since", Filter{Since: t0.Add(time.Hour)}, []int{1, 2, 3}},
		{"until", Filter{Until: t0.Add(time.Hour)}, []int{0}},
		{"window", Filter{Since: t0.Add(30 * time.Minute), Until: t0.Add(150 * time.Minute)}, []int{1, 2}},
		{"verdicts", Filter{Verdicts: []pipeline.Verdict{pipeline.Accepted, pipeline.Flagged}}, []int{0, 2, 3}},
		{"revisions", Filter{Revisions: []string{"B", "A"}}, []int{0, 1, 2, 3}},
		{"revisions and prototype", Filter{Prototype: "P1", Revisions: []string{"B", "Z"}}, []int{2}},
		{"label", Filter{ModeLabels: []string{"torsion-1"}}, []int{2}},
		{"labels", Filter{ModeLabels: []string{"nothing", "torsion-1"}}, []int{2}},
		{"limit", Filter{Limit: 2}, []int{0, 1}},
		{"none", Filter{Prototype: "P9"}, nil},
	} {
		hits, err := d.Hits(ctx, c.f)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		var got []int
		for _, h := range hits {
			for i := range specs {
				if h.ID == all[i].ID {
					got = append(got, i)
				}
			}
		}
		if !reflect.DeepEqual(got, c.want) {
			t.Errorf("%s: hits %v, want %v", c.name, got, c.want)
		}
	}
	labelled, _ := d.Hits(ctx, Filter{ModeLabels: []string{"torsion-1"}})
	if len(labelled) == 1 && labelled[0].Result.Modes[1].Label != "torsion-1" {
		t.Errorf("label not read back: %+v", labelled[0].Result.Modes[1])
	}
	if err := d.SetModeLabel(ctx, all[2].ModeIDs[1], ""); err != nil {
		t.Fatal(err)
	}
	if h, _ := d.Hits(ctx, Filter{ModeLabels: []string{"torsion-1"}}); len(h) != 0 {
		t.Error("cleared label still matches")
	}
}

func TestStatus(t *testing.T) {
	d := openTemp(t)
	ctx := context.Background()
	st, err := d.Status(ctx)
	if err != nil || st.Hits != 0 || st.LastHit != nil || st.LastError != nil || st.Schema != SchemaVersion() {
		t.Fatalf("empty status %+v, %v", st, err)
	}
	a := fileInfo("/d/a.csv", "a", t0)
	b := fileInfo("/d/b.csv", "b", t0)
	ra := sampleResult(a.Path)
	rb := sampleResult(b.Path)
	rb.AddReason("clipped", pipeline.SeverityReject, nil, "clipped at 5 V")
	rb.Decide()
	if _, err := d.RecordResult(ctx, a, HitMeta{HitTime: t0}, ra, nil); err != nil {
		t.Fatal(err)
	}
	if _, err := d.RecordResult(ctx, b, HitMeta{HitTime: t0.Add(-time.Hour)}, rb, nil); err != nil {
		t.Fatal(err)
	}
	if err := d.MarkPending(ctx, FileInfo{Path: "/d/c.csv", Size: 1, MTime: t0}); err != nil {
		t.Fatal(err)
	}
	if err := d.RecordFailure(ctx, FileInfo{Path: "/d/e.csv", Size: 1, MTime: t0}, errors.New("empty file"), true); err != nil {
		t.Fatal(err)
	}
	st, err = d.Status(ctx)
	if err != nil {
		t.Fatal(err)
	}
	want := map[State]int{StateAnalysed: 2, StatePending: 1, StateFailed: 1}
	if !reflect.DeepEqual(st.Files, want) || st.Pending != 1 || st.Hits != 2 ||
		!reflect.DeepEqual(st.Verdicts, map[pipeline.Verdict]int{pipeline.Flagged: 1, pipeline.Rejected: 1}) {
		t.Errorf("status counts %+v", st)
	}
	// The last hit is the last stored, not the latest hit time.
	if st.LastHit == nil || st.LastHit.Path != b.Path || st.LastHit.Verdict != pipeline.Rejected {
		t.Errorf("last hit %+v", st.LastHit)
	}
	if st.LastError == nil || st.LastError.Path != "/d/e.csv" || st.LastError.Message != "empty file" || !st.LastError.Final {
		t.Errorf("last error %+v", st.LastError)
	}
}

// TestConcurrentWriters records from several goroutines at once, with
// readers running beside them: the single writer connection must queue the
// writers, so none may fail with SQLITE_BUSY ("database is locked").
func TestConcurrentWriters(t *testing.T) {
	d := openTemp(t)
	ctx := context.Background()
	const writers, each = 8, 15
	var wg sync.WaitGroup
	errs := make(chan error, writers*each*3)
	stop := make(chan struct{})
	for g := 0; g < writers; g++ {
		wg.Add(1)
		go func(g int) {
			defer wg.Done()
			for i := 0; i < each; i++ {
				path := fmt.Sprintf("/d/w%d/%03d.csv", g, i)
				fi := fileInfo(path, path, t0)
				if err := d.MarkPending(ctx, fi); err != nil {
					errs <- err
				}
				if _, err := d.RecordResult(ctx, fi, HitMeta{Prototype: "P"}, sampleResult(path), nil); err != nil {
					errs <- err
				}
				// Every writer also records the same shared content once: a race for the same hit.
				if i == 0 {
					shared := fileInfo(fmt.Sprintf("/d/shared-%d.csv", g), "shared", t0)
					if _, err := d.RecordResult(ctx, shared, HitMeta{}, sampleResult(shared.Path), nil); err != nil {
						errs <- err
					}
				}
			}
		}(g)
	}
	var rg sync.WaitGroup
	for r := 0; r < 2; r++ {
		rg.Add(1)
		go func() {
			defer rg.Done()
			for {
				select {
				case <-stop:
					return
				default:
				}
				if _, err := d.Hits(ctx, Filter{Prototype: "P", Limit: 20}); err != nil {
					errs <- err
				}
				if _, err := d.Status(ctx); err != nil {
					errs <- err
				}
				time.Sleep(5 * time.Millisecond)
			}
		}()
	}
	wg.Wait()
	close(stop)
	rg.Wait()
	close(errs)
	for err := range errs {
		t.Error(err)
	}
	if n := count(t, d, "hits"); n != writers*each+1 {
		t.Errorf("%d hits, want %d", n, writers*each+1)
	}
	if n := count(t, d, "files"); n != writers*each+writers {
		t.Errorf("%d files, want %d", n, writers*each+writers)
	}
	st, _ := d.Status(ctx)
	if st.Files[StateDuplicate] != writers-1 {
		t.Errorf("%d duplicates of the shared content, want %d", st.Files[StateDuplicate], writers-1)
	}
}

// TestVanished: a file marked pending and deleted before it was read
// leaves no pending row behind (status would show it in the queue for
// ever); a pending re-read of a recorded version goes back to analysed.
func TestVanished(t *testing.T) {
	ctx := context.Background()
	db := openTemp(t)
	now := time.Now()
	gone := fileInfo("/export/gone.csv", "a", now)
	if err := db.MarkPending(ctx, gone); err != nil {
		t.Fatal(err)
	}
	kept := fileInfo("/export/kept.csv", "b", now)
	if _, err := db.RecordResult(ctx, kept, HitMeta{}, sampleResult(kept.Path), nil); err != nil {
		t.Fatal(err)
	}
	if err := db.MarkPending(ctx, kept); err != nil {
		t.Fatal(err)
	}
	for _, p := range []string{gone.Path, kept.Path} {
		if err := db.Vanished(ctx, p); err != nil {
			t.Fatal(err)
		}
	}
	st, err := db.Status(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if st.Pending != 0 || st.Files[StateAnalysed] != 1 {
		t.Fatalf("after Vanished: pending %d, analysed %d; want 0 and 1", st.Pending, st.Files[StateAnalysed])
	}
	if _, ok, _ := db.File(ctx, gone.Path); ok {
		t.Error("row of the vanished, never-recorded file is still there")
	}
}

// TestFarFutureFilter: a filter date beyond what int64 nanoseconds hold
// (year 2262) is clamped, not wrapped into the past.
func TestFarFutureFilter(t *testing.T) {
	ctx := context.Background()
	db := openTemp(t)
	fi := fileInfo("/export/a.csv", "a", time.Now())
	if _, err := db.RecordResult(ctx, fi, HitMeta{HitTime: time.Now()}, sampleResult(fi.Path), nil); err != nil {
		t.Fatal(err)
	}
	hits, err := db.Hits(ctx, Filter{Since: time.Date(2999, 1, 1, 0, 0, 0, 0, time.UTC)})
	if err != nil {
		t.Fatal(err)
	}
	if len(hits) != 0 {
		t.Fatalf("--since 2999 matched %d hits", len(hits))
	}
}
