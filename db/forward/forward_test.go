package forward

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"path/filepath"
	"reflect"
	"sync"
	"testing"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/db/pgtest"
	"github.com/ringlog/ringlog/pipeline"
)

var t0 = time.Date(2026, 3, 2, 9, 0, 0, 0, time.UTC)

func shaOf(s string) string {
	h := sha256.Sum256([]byte(s))
	return hex.EncodeToString(h[:])
}

// result is a plausible two-mode result (invented numbers, for storage
// tests only).
func result(file string, i int) *pipeline.Result {
	f := 40 + float64(i%50)
	r := &pipeline.Result{
		File: file, Format: "csv", Channel: "acc1", ForceChannel: "hammer",
		SampleRate: 10240, DurationS: 2, NoiseRMS: 0.001, WindowTauS: 0.5,
		Meta:            map[string]string{"operator": "op7"},
		AnalysisVersion: pipeline.AnalysisVersion,
		Modes: []pipeline.Mode{
			{FrequencyHz: f, FrequencyCI95: [2]float64{f - 0.01, f + 0.01}, DampingRatio: 0.012,
				DampingRatioCI: [2]float64{0.011, 0.013}, DampingRatioSD: 0.0005, Amplitude: 1, EnergyShare: 0.7,
				Cycles: 40, DecaySNRdB: 45, Spread: 0.02, Label: "bending-1",
				Estimates: []pipeline.Estimate{{Method: "nls", FrequencyHz: f, DampingRatio: 0.012}, {Method: "logdec", FrequencyHz: f, DampingRatio: 0.0125}}},
			{FrequencyHz: 3 * f, FrequencyCI95: [2]float64{3*f - 0.02, 3*f + 0.02}, DampingRatio: 0.006,
				DampingRatioCI: [2]float64{0.005, 0.007}, DampingRatioSD: 0.0003, Amplitude: 0.3, EnergyShare: 0.2,
				Cycles: 60, DecaySNRdB: 38, Spread: 0.03, Dropped: i%3 == 0,
				Estimates: []pipeline.Estimate{{Method: "nls", FrequencyHz: 3 * f, DampingRatio: 0.006}}},
		},
	}
	r.AddReason("beating", pipeline.SeverityFlag, pipeline.ModeRef(1), "close modes")
	r.Decide()
	return r
}

func openSpool(t testing.TB) *db.DB {
	t.Helper()
	s, err := db.OpenWith(context.Background(), filepath.Join(t.TempDir(), "ringlog-spool.db"), db.Options{Spool: true})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { s.Close() })
	return s
}

// record stores n results in the spool, named from prefix, content from
// contentPrefix (the same content under two prefixes is one hit).
func record(t testing.TB, s *db.DB, prefix, contentPrefix string, from, n int, meta db.HitMeta) {
	t.Helper()
	ctx := context.Background()
	for i := from; i < from+n; i++ {
		p := fmt.Sprintf("/export/%s%04d.csv", prefix, i)
		c := fmt.Sprintf("%s-%d", contentPrefix, i)
		fi := db.FileInfo{Path: p, Size: int64(len(c)), MTime: t0.Add(time.Duration(i) * time.Second), SHA256: shaOf(c)}
		m := meta
		m.HitTime = fi.MTime
		if _, err := s.RecordResult(ctx, fi, m, result(p, i), map[string]any{"thresholds": "default"}); err != nil {
			t.Fatal(err)
		}
	}
}

func newForwarder(t testing.TB, spool *db.DB, target, bay string) *Forwarder {
	t.Helper()
	f, err := New(Config{Spool: spool, Target: target, Bay: bay, MinRetry: 50 * time.Millisecond, MaxRetry: 400 * time.Millisecond, Poll: 100 * time.Millisecond})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { f.Close() })
	return f
}

func openCentral(t testing.TB, u string) *db.DB {
	t.Helper()
	c, err := db.Open(context.Background(), u)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { c.Close() })
	return c
}

// comparable strips what legitimately differs between the spool and the
// central history: database ids, the path (prefixed centrally), the
// recording time (the server's clock).
func comparable(hs []db.Hit) []db.Hit {
	out := make([]db.Hit, len(hs))
	for i, h := range hs {
		h.ID, h.AnalysisID, h.ResultID, h.ModeIDs, h.Path, h.IngestedAt = 0, 0, 0, nil, "", time.Time{}
		h.Meta.HitTime = h.Meta.HitTime.UTC()
		out[i] = h
	}
	return out
}

func TestForwardRoundTrip(t *testing.T) {
	u := pgtest.URL(t)
	ctx := context.Background()
	spool := openSpool(t)
	record(t, spool, "a", "a", 0, 5, db.HitMeta{Prototype: "P1", Revision: "B"})
	// a duplicate (same bytes, another name) and a file given up
	dupe := db.FileInfo{Path: "/export/copy.csv", Size: 3, MTime: t0, SHA256: shaOf("a-2")}
	if _, err := spool.RecordResult(ctx, dupe, db.HitMeta{}, result(dupe.Path, 2), nil); err != nil {
		t.Fatal(err)
	}
	bad := db.FileInfo{Path: "/export/broken.csv", Size: 10, MTime: t0}
	if err := spool.RecordFailure(ctx, bad, errors.New("line 3: not a number"), true); err != nil {
		t.Fatal(err)
	}
	if st, err := spool.ForwardStatus(ctx); err != nil || st.Backlog != 7 || !st.Spool {
		t.Fatalf("backlog before forwarding = %+v, %v; want 7", st, err)
	}

	f := newForwarder(t, spool, u, "bay-2")
	n, err := f.Flush(ctx)
	if err != nil || n != 7 {
		t.Fatalf("Flush = %d, %v; want 7", n, err)
	}
	st, err := spool.ForwardStatus(ctx)
	if err != nil || st.Backlog != 0 || st.Forwarded != 7 || st.LastOK.IsZero() {
		t.Errorf("status after forwarding = %+v, %v", st, err)
	}

	central := openCentral(t, u)
	local, err := spool.Hits(ctx, db.Filter{})
	if err != nil {
		t.Fatal(err)
	}
	remote, err := central.Hits(ctx, db.Filter{})
	if err != nil {
		t.Fatal(err)
	}
	for i := range local {
		local[i].Meta.Bay = "bay-2" // filled in from the forwarding bay
	}
	if !reflect.DeepEqual(comparable(local), comparable(remote)) {
		t.Errorf("central hits differ from the spool's:\nspool   %+v\ncentral %+v", comparable(local)[0], comparable(remote)[0])
	}
	if len(remote) != 5 || remote[0].Path != "bay-2:/export/a0000.csv" {
		t.Errorf("central: %d hits, first path %q", len(remote), remote[0].Path)
	}
	cst, err := central.Status(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if cst.Files[db.StateDuplicate] != 1 || cst.Files[db.StateFailed] != 1 || cst.Hits != 5 {
		t.Errorf("central status %+v", cst)
	}
	if fs, ok, err := central.File(ctx, "bay-2:/export/broken.csv"); err != nil || !ok || fs.LastError != "line 3: not a number" || fs.Attempts != 1 {
		t.Errorf("central row of the failed file: %+v %v %v", fs, ok, err)
	}
	// Recording times are the server's.
	if d := time.Since(remote[0].IngestedAt); d < -time.Minute || d > time.Minute {
		t.Errorf("central ingested_at %v is not the server's now", remote[0].IngestedAt)
	}
}

// TestForwardAgainAfterCrash: a daemon killed after the central commit
// and before the outbox was cleared sends the batch again; nothing is
// doubled.
func TestForwardAgainAfterCrash(t *testing.T) {
	u := pgtest.URL(t)
	ctx := context.Background()
	spool := openSpool(t)
	record(t, spool, "a", "a", 0, 20, db.HitMeta{Prototype: "P1"})
	if err := spool.RecordFailure(ctx, db.FileInfo{Path: "/export/bad.csv", Size: 1, MTime: t0}, errors.New("empty"), true); err != nil {
		t.Fatal(err)
	}
	central := openCentral(t, u)
	batch, err := spool.Outbox(ctx, 100)
	if err != nil || len(batch) != 21 {
		t.Fatalf("outbox = %d entries, %v", len(batch), err)
	}
	for i := range batch {
		batch[i].File.Path = CentralPath("bay-2", batch[i].File.Path)
		batch[i].Meta.Bay = "bay-2"
	}
	if _, err := central.Receive(ctx, batch); err != nil { // the commit before the crash
		t.Fatal(err)
	}
	f := newForwarder(t, spool, u, "bay-2")
	if n, err := f.Flush(ctx); err != nil || n != 21 {
		t.Fatalf("Flush after the crash = %d, %v", n, err)
	}
	st, err := central.Status(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if st.Hits != 20 || st.Files[db.StateAnalysed] != 20 || st.Files[db.StateDuplicate] != 0 || st.Files[db.StateFailed] != 1 {
		t.Errorf("central after a repeated batch: %+v; want 20 hits, 20 analysed files, 1 failed", st)
	}
	if fs, _, _ := central.File(ctx, "bay-2:/export/bad.csv"); fs.Attempts != 1 {
		t.Errorf("failed file attempts = %d after a repeat, want 1", fs.Attempts)
	}
}

// TestTwoBaysAtOnce: two bays forward into one central history at the
// same moment; the same bytes recorded on both (a file copied between
// bays) become one hit and one duplicate.
func TestTwoBaysAtOnce(t *testing.T) {
	u := pgtest.URL(t)
	ctx := context.Background()
	s2, s3 := openSpool(t), openSpool(t)
	record(t, s2, "h", "bay2", 0, 150, db.HitMeta{Prototype: "P1"})
	record(t, s3, "h", "bay3", 0, 150, db.HitMeta{Prototype: "P1"})
	record(t, s2, "shared", "shared", 0, 30, db.HitMeta{Prototype: "P1"})
	record(t, s3, "shared", "shared", 0, 30, db.HitMeta{Prototype: "P1"})
	f2 := newForwarder(t, s2, u, "bay-2")
	f3 := newForwarder(t, s3, u, "bay-3")
	f2.cfg.Batch, f3.cfg.Batch = 10, 10 // many interleaved transactions
	var wg sync.WaitGroup
	errs := make([]error, 2)
	for i, f := range []*Forwarder{f2, f3} {
		wg.Add(1)
		go func() {
			defer wg.Done()
			_, errs[i] = f.Flush(ctx)
		}()
	}
	wg.Wait()
	if err := errors.Join(errs...); err != nil {
		t.Fatal(err)
	}
	central := openCentral(t, u)
	st, err := central.Status(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if st.Hits != 330 || st.Files[db.StateAnalysed] != 330 || st.Files[db.StateDuplicate] != 30 {
		t.Errorf("central: %+v; want 330 hits, 330 analysed files, 30 duplicates", st)
	}
	for _, bay := range []string{"bay-2", "bay-3"} {
		hs, err := central.Hits(ctx, db.Filter{Bay: bay})
		if err != nil {
			t.Fatal(err)
		}
		if len(hs) < 150 || len(hs) > 180 {
			t.Errorf("%s: %d hits, want 150 to 180", bay, len(hs))
		}
	}
}

// TestClockOff: a bay whose clock runs three hours ahead of the server.
// Its hit times are its own (they are the recorder's), the central
// recording times are the server's, and forwarding keeps the bay's order.
func TestClockOff(t *testing.T) {
	u := pgtest.URL(t)
	ctx := context.Background()
	spool := openSpool(t)
	ahead := time.Now().Add(3 * time.Hour)
	for i := 0; i < 5; i++ {
		c := fmt.Sprintf("ahead-%d", i)
		p := fmt.Sprintf("/export/ahead%d.csv", i)
		fi := db.FileInfo{Path: p, Size: int64(len(c)), MTime: ahead.Add(time.Duration(i) * time.Second), SHA256: shaOf(c)}
		if _, err := spool.RecordResult(ctx, fi, db.HitMeta{Prototype: "P1"}, result(p, i), nil); err != nil {
			t.Fatal(err)
		}
	}
	f := newForwarder(t, spool, u, "bay-4")
	if _, err := f.Flush(ctx); err != nil {
		t.Fatal(err)
	}
	central := openCentral(t, u)
	hs, err := central.Hits(ctx, db.Filter{})
	if err != nil || len(hs) != 5 {
		t.Fatalf("central hits: %d, %v", len(hs), err)
	}
	for i, h := range hs {
		if d := h.Meta.HitTime.Sub(ahead); d < time.Duration(i)*time.Second-time.Millisecond || d > time.Duration(i)*time.Second+time.Millisecond {
			t.Errorf("hit %d: hit time %v, want the bay's %v", i, h.Meta.HitTime, ahead.Add(time.Duration(i)*time.Second))
		}
		if d := time.Since(h.IngestedAt); d < -time.Minute || d > time.Minute {
			t.Errorf("hit %d: central recording time %v is not the server's now", i, h.IngestedAt)
		}
		if i > 0 && h.ID < hs[i-1].ID {
			t.Errorf("hit %d stored before hit %d", i, i-1)
		}
	}
	st, _ := central.Status(ctx)
	if st.LastHit == nil || st.LastHit.Path != "bay-4:/export/ahead4.csv" {
		t.Errorf("last hit = %+v, want the last one forwarded", st.LastHit)
	}
}

// TestServerStoppedMidBurst stops the PostgreSQL server hard while a bay
// forwards a burst, keeps recording while it is away, and starts it again:
// the forwarder reports the outage in the spool, catches up by itself, and
// the central history ends with every hit exactly once, in order.
func TestServerStoppedMidBurst(t *testing.T) {
	if testing.Short() {
		t.Skip("starts and stops a PostgreSQL server")
	}
	cl := pgtest.NewCluster(t)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	spool := openSpool(t)
	f := newForwarder(t, spool, cl.URL(), "bay-2")
	f.cfg.Batch = 5
	done := make(chan struct{})
	go func() { defer close(done); f.Run(ctx) }()
	backlog := func() db.ForwardStatus {
		st, err := spool.ForwardStatus(ctx)
		if err != nil {
			t.Fatal(err)
		}
		return st
	}
	waitFor := func(what string, ok func(db.ForwardStatus) bool) db.ForwardStatus {
		deadline := time.Now().Add(60 * time.Second)
		for {
			st := backlog()
			if ok(st) {
				return st
			}
			if time.Now().After(deadline) {
				t.Fatalf("timed out waiting for %s: %+v", what, st)
			}
			time.Sleep(20 * time.Millisecond)
		}
	}
	for i := 0; i < 300; i += 10 {
		record(t, spool, "b", "b", i, 10, db.HitMeta{Prototype: "P1"})
		f.Kick()
		if i == 100 {
			waitFor("some forwarded", func(st db.ForwardStatus) bool { return st.Forwarded > 0 })
			cl.Kill() // mid-burst
		}
	}
	st := waitFor("the outage noted", func(st db.ForwardStatus) bool { return st.LastError != "" })
	if st.Backlog == 0 {
		t.Fatalf("nothing waiting while the server is down: %+v", st)
	}
	t.Logf("server down: %d waiting, last error %q", st.Backlog, st.LastError)
	cl.Start()
	st = waitFor("the backlog forwarded", func(st db.ForwardStatus) bool { return st.Backlog == 0 && st.LastError == "" })
	cancel()
	<-done
	central := openCentral(t, cl.URL())
	hs, err := central.Hits(context.Background(), db.Filter{})
	if err != nil {
		t.Fatal(err)
	}
	if len(hs) != 300 {
		t.Fatalf("central has %d hits, want 300", len(hs))
	}
	for i := 1; i < len(hs); i++ {
		if hs[i].ID <= hs[i-1].ID { // hits ordered by hit time, which follows the recording order
			t.Fatalf("hit %s stored before %s", hs[i].Path, hs[i-1].Path)
		}
	}
}

// TestForwardSupersede: a file changed after it was recorded supersedes
// its earlier hit in the central history too, whether the two versions
// travel in one batch or two, and a batch sent again leaves the newer
// version current.
func TestForwardSupersede(t *testing.T) {
	u := pgtest.URL(t)
	ctx := context.Background()
	spool := openSpool(t)
	rec := func(content string, mtime time.Time) db.Outcome {
		t.Helper()
		fi := db.FileInfo{Path: "/export/p.csv", Size: int64(len(content)), MTime: mtime, SHA256: shaOf(content)}
		o, err := spool.RecordResult(ctx, fi, db.HitMeta{Prototype: "P1", HitTime: mtime}, result(fi.Path, 1), nil)
		if err != nil {
			t.Fatal(err)
		}
		return o
	}
	rec("first part", t0)
	f := newForwarder(t, spool, u, "bay-2")
	if n, err := f.Flush(ctx); err != nil || n != 1 {
		t.Fatalf("Flush = %d, %v", n, err)
	}
	rec("first part and more", t0.Add(time.Minute))
	rec("first part and more still", t0.Add(2*time.Minute))
	batch, err := spool.Outbox(ctx, 100)
	if err != nil || len(batch) != 2 {
		t.Fatalf("outbox: %d entries, %v; want the two later versions", len(batch), err)
	}
	if n, err := f.Flush(ctx); err != nil || n != 2 {
		t.Fatalf("Flush = %d, %v", n, err)
	}
	central := openCentral(t, u)
	check := func(when string) {
		t.Helper()
		hs, err := central.Hits(ctx, db.Filter{})
		if err != nil {
			t.Fatal(err)
		}
		if len(hs) != 1 || hs[0].SHA256 != shaOf("first part and more still") || hs[0].Path != "bay-2:/export/p.csv" {
			t.Fatalf("%s: central current hits %d (%+v), want the last version only", when, len(hs), hs)
		}
		all, err := central.Hits(ctx, db.Filter{WithSuperseded: true})
		if err != nil || len(all) != 3 {
			t.Fatalf("%s: %d hits with the superseded, %v; want 3", when, len(all), err)
		}
		for _, h := range all {
			if (h.ID == hs[0].ID) != (h.SupersededBy == 0) {
				t.Errorf("%s: hit %d superseded by %d", when, h.ID, h.SupersededBy)
			}
		}
		if st, err := central.Status(ctx); err != nil || st.Hits != 1 {
			t.Errorf("%s: central status %+v, %v", when, st, err)
		}
	}
	check("after forwarding")
	// A crash after the central commit sends the batch again.
	for i := range batch {
		batch[i].File.Path = CentralPath("bay-2", batch[i].File.Path)
		batch[i].Meta.Bay = "bay-2"
	}
	if _, err := central.Receive(ctx, batch); err != nil {
		t.Fatal(err)
	}
	check("after a repeated batch")
}
