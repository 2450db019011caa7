package live

import (
	"bufio"
	"context"
	"encoding/json"
	"net"
	"net/http"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/report/page"
)

// TestPageShowsLastHit: the page shows the last hit's verdict in words,
// the deciding reason with what to do, the modes, the tally and the list
// of recent hits, and links to the day's report and the comparison.
func TestPageShowsLastHit(t *testing.T) {
	f := newFixture(t)
	for i := range 6 {
		f.record(t, hitSpec{name: "s1_" + string(rune('a'+i)) + ".csv", prototype: "bracket", revision: "S1", seed: uint64(10 + i)})
	}
	f.record(t, hitSpec{name: "s2_a.csv", prototype: "bracket", revision: "S2", seed: 30})
	f.record(t, hitSpec{name: "s2_double.csv", prototype: "bracket", revision: "S2", spoil: "double", seed: 31})
	s := f.server(t, Options{})
	w := get(t, s.Handler(), "GET", "/")
	if w.Code != 200 {
		t.Fatalf("GET / = %d: %s", w.Code, w.Body)
	}
	body := w.Body.String()
	for _, want := range []string{
		"REJECTED", "This hit does not count: strike again.", "s2_double.csv",
		adviceByCode["double_strike"].What, adviceByCode["double_strike"].Do,
		`class="verdict rejected"`,
	} {
		if !strings.Contains(body, want) {
			t.Errorf("page lacks %q", want)
		}
	}
	// The modes of a rejected hit are named after the campaign's modes.
	if !strings.Contains(body, `<td class="lab">sway`) && !strings.Contains(body, `<td class="lab">twist`) {
		t.Errorf("the modes of the last hit carry no label:\n%s", body)
	}
	// The tally: S1 six accepted, S2 one accepted and one rejected (the
	// clean synthetic hits are accepted by the real pipeline).
	if !strings.Contains(body, `<td>bracket</td><td>S1</td><td class="n">6</td><td class="n">0</td><td class="n">0</td><td class="n">6</td>`) {
		t.Errorf("page lacks the S1 tally row:\n%s", body)
	}
	if !strings.Contains(body, `href="compare?a=S1&amp;b=S2&amp;prototype=bracket"`) {
		t.Errorf("page lacks the comparison link")
	}
	if !strings.Contains(body, `href="daily?day=`+time.Now().Format("2006-01-02")+`"`) {
		t.Errorf("page lacks the link to today's report")
	}
	if n := strings.Count(body, `class="tag `); n != 8 {
		t.Errorf("recent hits: %d rows, want 8", n)
	}
}

// TestBands: once a revision has minBandHits earlier hits, each mode is
// set against its campaign band, and a hit far outside is called so.
func TestBands(t *testing.T) {
	f := newFixture(t)
	for i := range 6 {
		f.record(t, hitSpec{name: "b" + string(rune('a'+i)) + ".csv", prototype: "bracket", revision: "S1", seed: uint64(40 + i)})
	}
	s := f.server(t, Options{})
	body := get(t, s.Handler(), "GET", "/").Body.String()
	if strings.Count(body, `<svg class="band"`) != 4 {
		t.Errorf("want 4 band drawings (2 modes x frequency and damping), got %d", strings.Count(body, `<svg class="band"`))
	}
	if !strings.Contains(body, "inside the band") {
		t.Errorf("a hit like the others is not inside its bands")
	}
	// A value far above: the band rule itself.
	b := band([]float64{1, 1.1, 0.9, 1.05, 0.95}, 3, [2]float64{2.8, 3.2}, page.Hz, " Hz")
	if b.Inside || b.Judgement != "above the band" {
		t.Errorf("3 against a band around 1: %+v", b)
	}
	if b := band([]float64{1, 1.1, 0.9, 1.05, 0.95}, 1.02, [2]float64{0.98, 1.06}, page.Hz, " Hz"); !b.Inside {
		t.Errorf("1.02 against a band around 1: %+v", b)
	}
}

// TestDeciding: a rejecting reason decides over flags; a flag decides a
// flagged hit; an accepted hit has none.
func TestDeciding(t *testing.T) {
	res := &pipeline.Result{Verdict: pipeline.Rejected, Reasons: []pipeline.Reason{
		{Code: "estimates_disagree", Severity: pipeline.SeverityFlag}, {Code: "clipped", Severity: pipeline.SeverityReject}}}
	if r, ok := deciding(res); !ok || r.Code != "clipped" {
		t.Errorf("deciding = %v %v, want clipped", r, ok)
	}
	res.Verdict, res.Reasons = pipeline.Flagged, res.Reasons[:1]
	if r, ok := deciding(res); !ok || r.Code != "estimates_disagree" {
		t.Errorf("deciding = %v %v, want estimates_disagree", r, ok)
	}
	res.Verdict, res.Reasons = pipeline.Accepted, nil
	if _, ok := deciding(res); ok {
		t.Error("an accepted hit has a deciding reason")
	}
	if a := adviceFor(pipeline.Reason{Code: "some_new_rule", Message: "m"}); a.What != "m" {
		t.Errorf("unknown code: %+v", a)
	}
}

// TestEscaping: file names and metadata are text on the page, never
// markup, in the page, the event stream and the JSON.
func TestEscaping(t *testing.T) {
	f := newFixture(t)
	f.record(t, hitSpec{name: `x"><img src=y onerror=alert(1)>.csv`, prototype: "<script>alert(1)</script>", revision: "R&D", seed: 3})
	s := f.server(t, Options{})
	body := get(t, s.Handler(), "GET", "/").Body.String()
	for _, bad := range []string{"<script>alert", "<img src=y", `"><img`} {
		if strings.Contains(body, bad) {
			t.Errorf("page holds unescaped %q", bad)
		}
	}
	if !strings.Contains(body, "&lt;script&gt;alert(1)&lt;/script&gt;") || !strings.Contains(body, "R&amp;D") {
		t.Errorf("page does not show the escaped prototype and revision")
	}
	if strings.Count(body, "<script") != 1 {
		t.Errorf("page has %d script elements, want 1 (its own)", strings.Count(body, "<script"))
	}
	w := get(t, s.Handler(), "GET", "/api/last")
	var m map[string]any
	if err := json.Unmarshal(w.Body.Bytes(), &m); err != nil {
		t.Fatal(err)
	}
	if m["prototype"] != "<script>alert(1)</script>" {
		t.Errorf("JSON prototype = %v", m["prototype"])
	}
	if ct := w.Header().Get("Content-Type"); ct != "application/json" {
		t.Errorf("JSON served as %q", ct)
	}
}

// TestAPI: /api/last is the last hit shaped by HitJSON with its id,
// /api/hits?since=ID the hits after that id, /api/status the status.
func TestAPI(t *testing.T) {
	f := newFixture(t)
	s := f.server(t, Options{})
	if w := get(t, s.Handler(), "GET", "/api/last"); w.Code != 404 {
		t.Errorf("/api/last on an empty history = %d", w.Code)
	}
	var ids []int64
	for i := range 3 {
		ids = append(ids, f.record(t, hitSpec{name: "api" + string(rune('a'+i)) + ".csv", prototype: "bracket", revision: "S1", seed: uint64(50 + i)}))
	}
	var last map[string]any
	w := get(t, s.Handler(), "GET", "/api/last")
	if err := json.Unmarshal(w.Body.Bytes(), &last); err != nil || w.Code != 200 {
		t.Fatalf("/api/last = %d %s", w.Code, w.Body)
	}
	if last["id"] != float64(ids[2]) || !strings.HasSuffix(last["file"].(string), "apic.csv") || last["verdict"] != "accepted" {
		t.Errorf("/api/last = %v", last)
	}
	for _, k := range []string{"file", "sha256", "verdict", "prototype", "revision", "modes", "reasons"} {
		if _, ok := last[k]; !ok {
			t.Errorf("/api/last lacks %q", k)
		}
	}
	var after []map[string]any
	w = get(t, s.Handler(), "GET", "/api/hits?since="+itoa(ids[0]))
	if err := json.Unmarshal(w.Body.Bytes(), &after); err != nil {
		t.Fatalf("/api/hits: %v %s", err, w.Body)
	}
	if len(after) != 2 || after[0]["id"] != float64(ids[1]) || after[1]["id"] != float64(ids[2]) {
		t.Errorf("/api/hits?since=%d = %v", ids[0], after)
	}
	w = get(t, s.Handler(), "GET", "/api/hits?since="+itoa(ids[2]))
	if strings.TrimSpace(w.Body.String()) != "[]" {
		t.Errorf("/api/hits after the last = %s", w.Body)
	}
	for _, bad := range []string{"abc", "-1", "1e3", "99999999999999999999"} {
		if w := get(t, s.Handler(), "GET", "/api/hits?since="+bad); w.Code != 400 {
			t.Errorf("/api/hits?since=%s = %d, want 400", bad, w.Code)
		}
	}
	w = get(t, s.Handler(), "GET", "/api/status")
	if !strings.Contains(w.Body.String(), `"hits":3`) {
		t.Errorf("/api/status = %s", w.Body)
	}
}

func itoa(n int64) string { return strconv.FormatInt(n, 10) }

// TestEventsPushNewHit: an open event stream receives the new main part
// after a hit is recorded and Notify is called, without asking again.
func TestEventsPushNewHit(t *testing.T) {
	f := newFixture(t)
	f.record(t, hitSpec{name: "first.csv", prototype: "bracket", revision: "S1", seed: 60})
	s := f.server(t, Options{})
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- s.Serve(ctx, ln) }()
	defer func() {
		cancel()
		if err := <-done; err != nil {
			t.Errorf("Serve: %v", err)
		}
	}()
	resp, err := http.Get("http://" + ln.Addr().String() + "/events")
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	if ct := resp.Header.Get("Content-Type"); !strings.HasPrefix(ct, "text/event-stream") {
		t.Fatalf("events served as %q", ct)
	}
	events := make(chan string, 4)
	go func() {
		sc := bufio.NewScanner(resp.Body)
		sc.Buffer(make([]byte, 1<<20), 1<<20)
		var ev strings.Builder
		for sc.Scan() {
			line := sc.Text()
			if line == "" {
				if ev.Len() > 0 {
					events <- ev.String()
					ev.Reset()
				}
				continue
			}
			ev.WriteString(line + "\n")
		}
		close(events)
	}()
	next := func() string {
		for {
			select {
			case e, ok := <-events:
				if !ok {
					t.Fatal("the stream ended")
				}
				if strings.HasPrefix(e, "event: hit") {
					return e
				}
			case <-time.After(10 * time.Second):
				t.Fatal("no event within 10 s")
			}
		}
	}
	if e := next(); !strings.Contains(e, "first.csv") {
		t.Errorf("first event lacks the last hit: %.300s", e)
	}
	id := f.record(t, hitSpec{name: "second_double.csv", prototype: "bracket", revision: "S1", spoil: "double", seed: 61})
	s.Notify()
	e := next()
	if !strings.Contains(e, "second_double.csv") || !strings.Contains(e, "REJECTED") || !strings.Contains(e, "id: "+itoa(id)) {
		t.Errorf("event after the new hit: %.400s", e)
	}
}
