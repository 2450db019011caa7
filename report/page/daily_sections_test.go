package page

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
)

// reasonHit is a hit of the day with two modes and these reasons, its
// verdict decided by pipeline.Result.Decide.
func reasonHit(id int64, at time.Time, reasons ...pipeline.Reason) db.Hit {
	res := &pipeline.Result{File: fmt.Sprintf("/export/h%d.csv", id), Modes: []pipeline.Mode{
		{FrequencyHz: 40, DampingRatio: 0.01}, {FrequencyHz: 120, DampingRatio: 0.02}}}
	res.Reasons = reasons
	res.Decide()
	return db.Hit{ID: id, Path: res.File, Meta: db.HitMeta{Prototype: "frame", Revision: "A", HitTime: at}, Result: res}
}

func reason(code string, sev pipeline.Severity, mode *int) pipeline.Reason {
	return pipeline.Reason{Code: code, Severity: sev, Mode: mode, Message: code + " here"}
}

// TestDailyDecidingReasons: the summary of spoiled hits counts each hit
// once, under the reason that decided its verdict; side flags are shown
// apart. The expected counts follow from the rule of decisive, applied by
// hand to each hit below.
func TestDailyDecidingReasons(t *testing.T) {
	day := time.Date(2025, 6, 3, 0, 0, 0, 0, time.UTC)
	at := day.Add(10 * time.Hour)
	flag, drop, rej := pipeline.SeverityFlag, pipeline.SeverityDrop, pipeline.SeverityReject
	var hits []db.Hit
	// Three rejected hits; stored order puts pre_ringing before clipped,
	// the rules run clipped first: clipped decides.
	for i := range 3 {
		hits = append(hits, reasonHit(int64(i+1), at, reason("estimates_disagree", flag, pipeline.ModeRef(0)),
			reason("pre_ringing", rej, nil), reason("clipped", rej, nil)))
	}
	hits = append(hits,
		// flagged: a dropped mode decides over a flag
		reasonHit(4, at, reason("estimates_disagree", flag, pipeline.ModeRef(0)), reason("short_decay", drop, pipeline.ModeRef(1))),
		// flagged by the one flag it carries
		reasonHit(5, at, reason("estimates_disagree", flag, pipeline.ModeRef(1))),
		// flagged by two flags: the first in rule order decides
		reasonHit(6, at, reason("estimates_disagree", flag, pipeline.ModeRef(0)), reason("beating_modes", flag, pipeline.ModeRef(0))),
		// rejected because every mode was dropped: the first drop in rule order
		reasonHit(7, at, reason("estimates_disagree", flag, pipeline.ModeRef(0)), reason("short_decay", drop, pipeline.ModeRef(1)),
			reason("under_excited", drop, pipeline.ModeRef(0))),
		reasonHit(8, at), // accepted
	)
	if v := hits[6].Result.Verdict; v != pipeline.Rejected {
		t.Fatalf("hit 7 is %s, want rejected (every mode dropped)", v)
	}
	decided := map[int64]string{1: "clipped", 2: "clipped", 3: "clipped", 4: "short_decay", 5: "estimates_disagree",
		6: "beating_modes", 7: "under_excited"}
	for _, h := range hits {
		d, got := decisive(h.Result), ""
		if d >= 0 {
			got = h.Result.Reasons[d].Code
		}
		if got != decided[h.ID] {
			t.Errorf("hit %d (%s): decided by %q, want %q", h.ID, h.Result.Verdict, got, decided[h.ID])
		}
	}
	rows := reasonRows(hits)
	dec, side := decisiveRows(rows), sideRows(rows)
	type count struct {
		code string
		n    int
	}
	var gotDec, gotSide []count
	total := 0
	for _, r := range dec {
		gotDec = append(gotDec, count{r.Code, r.Decided})
		total += r.Decided
	}
	for _, r := range side {
		gotSide = append(gotSide, count{r.Code, r.Side})
	}
	wantDec := []count{{"clipped", 3}, {"beating_modes", 1}, {"estimates_disagree", 1}, {"short_decay", 1}, {"under_excited", 1}}
	wantSide := []count{{"estimates_disagree", 6}, {"pre_ringing", 3}, {"short_decay", 1}}
	if fmt.Sprint(gotDec) != fmt.Sprint(wantDec) || total != 7 {
		t.Errorf("deciding reasons %v (total %d), want %v (one per spoiled hit, 7)", gotDec, total, wantDec)
	}
	if fmt.Sprint(gotSide) != fmt.Sprint(wantSide) {
		t.Errorf("side reasons %v, want %v", gotSide, wantSide)
	}
	if dec[0].DecidedRejected != 3 || dec[0].DecidedFlagged != 0 {
		t.Errorf("clipped decided %d rejected, %d flagged; want 3, 0", dec[0].DecidedRejected, dec[0].DecidedFlagged)
	}

	var buf bytes.Buffer
	if _, err := Daily(context.Background(), &buf, memSource{hits: hits}, DailyOptions{Day: day}); err != nil {
		t.Fatal(err)
	}
	page := buf.String()
	top := regexp.MustCompile(`(?s)<ol class="top">(.*?)</ol>`).FindStringSubmatch(page)
	if top == nil {
		t.Fatal("no summary of spoiled hits on the page")
	}
	items := regexp.MustCompile(`<span class="count">(\d+)</span> × <code>([a-z_]+)</code>`).FindAllStringSubmatch(top[1], -1)
	if len(items) != 3 || items[0][1] != "3" || items[0][2] != "clipped" {
		t.Errorf("summary ranks %v, want clipped first with 3 hits", items)
	}
	if !strings.Contains(page, "Also flagged, beside the deciding reason: <code>estimates_disagree</code> on 6 hits, <code>pre_ringing</code> on 3 hits") {
		t.Error("the side flags are not listed apart under the summary")
	}
	if !strings.Contains(page, `id="decided"`) || !strings.Contains(page, "<h3>Also flagged</h3>") {
		t.Error("no section of deciding reasons with its side-flag table")
	}
}

// TestDailySupersededAndFailed: the day's superseded hits and failed
// files have their sections, on a real history; an error text is clipped
// and escaped.
func TestDailySupersededAndFailed(t *testing.T) {
	ctx := context.Background()
	store, err := db.Open(ctx, filepath.Join(t.TempDir(), "h.db"))
	if err != nil {
		t.Fatal(err)
	}
	defer store.Close()
	now := time.Now()
	sha := func(s string) string { h := sha256.Sum256([]byte(s)); return hex.EncodeToString(h[:]) }
	path := "/export/frame_0007.csv"
	res := func() *pipeline.Result {
		r := &pipeline.Result{File: path, Format: "csv", Modes: []pipeline.Mode{{FrequencyHz: 40, DampingRatio: 0.01}}}
		r.Decide()
		return r
	}
	meta := db.HitMeta{Prototype: "frame", Revision: "A", HitTime: now.Add(-time.Minute)}
	v1 := db.FileInfo{Path: path, Size: 5, MTime: now.Add(-time.Minute), SHA256: sha("first")}
	v2 := db.FileInfo{Path: path, Size: 9, MTime: now, SHA256: sha("first and more")}
	for _, fi := range []db.FileInfo{v1, v2} {
		if _, err := store.RecordResult(ctx, fi, meta, res(), nil); err != nil {
			t.Fatal(err)
		}
	}
	long := "line 3: not a number: <script>" + strings.Repeat("x", 5000)
	bad := db.FileInfo{Path: "/export/frame_0008.csv", Size: 10, MTime: now}
	if err := store.RecordFailure(ctx, bad, errors.New(long), true); err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	sum, err := Daily(ctx, &buf, store, DailyOptions{Day: now})
	if err != nil {
		t.Fatal(err)
	}
	page := buf.String()
	if sum.Hits != 1 || sum.Superseded != 1 || sum.Failed != 1 {
		t.Errorf("summary %+v; want 1 hit, 1 superseded, 1 failed", sum)
	}
	sec := regexp.MustCompile(`(?s)<section id="superseded">(.*?)</section>`).FindStringSubmatch(page)
	if sec == nil || !strings.Contains(sec[1], "frame_0007.csv") || !strings.Contains(sec[1], v1.SHA256[:12]) ||
		!strings.Contains(sec[1], v2.SHA256[:12]) {
		t.Errorf("no superseded section naming the file and both hashes")
	}
	sec = regexp.MustCompile(`(?s)<section id="failed">(.*?)</section>`).FindStringSubmatch(page)
	if sec == nil || !strings.Contains(sec[1], "frame_0008.csv") || !strings.Contains(sec[1], "line 3: not a number: &lt;script&gt;") {
		t.Fatalf("no failed section naming the file and its error")
	}
	if strings.Contains(sec[1], strings.Repeat("x", maxFailedError)) || !strings.Contains(sec[1], "bytes)") {
		t.Error("the error text is not clipped")
	}
	for _, p := range selfContained(page) {
		t.Errorf("page is not self-contained: %s", p)
	}
	// Another day has neither section.
	buf.Reset()
	if _, err := Daily(ctx, &buf, store, DailyOptions{Day: now.AddDate(0, 0, -3)}); err != nil {
		t.Fatal(err)
	}
	if strings.Contains(buf.String(), `id="superseded"`) || strings.Contains(buf.String(), `id="failed"`) {
		t.Error("another day lists this day's superseded hit or failed file")
	}
}
