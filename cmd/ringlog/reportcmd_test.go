package main

// Tests of 'ringlog report daily|compare', 'analyze --plot', the daily
// report of 'ringlog demo' and the daemon's report schedule.

import (
	"context"
	"encoding/json"
	"encoding/xml"
	"errors"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/rs/zerolog"

	"github.com/ringlog/ringlog/db"
)

// TestReportCommands runs the demo in-process (12 hits), which must end by
// writing the daily report and printing its path, then writes both pages
// from its history and checks the usage errors.
func TestReportCommands(t *testing.T) {
	dir := t.TempDir()
	out, errOut, code := cli(t, "demo", "--dir", dir, "--hits", "12", "--interval", "50ms")
	if code != exitOK {
		t.Fatalf("demo: exit %d\n%s\n%s", code, out, errOut)
	}
	m := regexp.MustCompile(`daily report \((\d+) hits?, \d+ flagged, \d+ rejected; open it in a browser\):\n  (\S+ringlog-daily-(\d{4}-\d{2}-\d{2})\.html)\n`).FindStringSubmatch(out)
	if m == nil {
		t.Fatalf("demo does not print the daily report's path:\n%s", out)
	}
	demoPage, day := m[2], m[3]
	checkPage(t, demoPage, "<h1>", "gantry-arm", "engineer of record")

	dbPath := filepath.Join(dir, "history.db")
	// The demo's summary counts what stats counts (one rule everywhere).
	for _, rev := range []string{"R1", "R2"} {
		mm := regexp.MustCompile(`(?m)^  bending-1\s+` + rev + `\s+(\d+) `).FindStringSubmatch(out)
		if mm == nil {
			continue // the short demo may not reach this revision
		}
		js, _, code := cli(t, "stats", "--db", dbPath, "--prototype", "gantry-arm", "--revision", rev, "--json")
		var st struct {
			Modes []struct {
				Label        string `json:"label"`
				DampingRatio struct {
					N int `json:"n"`
				} `json:"damping_ratio"`
			} `json:"modes"`
		}
		if code != exitOK || json.Unmarshal([]byte(strings.SplitN(js, "\n", 2)[0]), &st) != nil {
			t.Fatalf("stats --json: exit %d: %s", code, js)
		}
		for _, md := range st.Modes {
			if md.Label == "bending-1" && strconv.Itoa(md.DampingRatio.N) != mm[1] {
				t.Errorf("demo summary counts %s hits of bending-1 in %s, stats %d", mm[1], rev, md.DampingRatio.N)
			}
		}
	}
	daily := filepath.Join(dir, "daily.html")
	out, errOut, code = cli(t, "report", "daily", "--db", dbPath, "--day", day, "--out", daily)
	if code != exitOK || !strings.Contains(out, "daily summary of "+day+": "+m[1]+" hit") || !strings.Contains(out, daily) {
		t.Fatalf("report daily: exit %d\n%s\n%s", code, out, errOut)
	}
	checkPage(t, daily, "Where each mode stands: gantry-arm", "bending-1")

	// With a configuration that names a report folder, the page goes there
	// under its default name.
	cfgPath := filepath.Join(dir, "ringlog.toml")
	f, err := os.OpenFile(cfgPath, os.O_APPEND|os.O_WRONLY, 0)
	if err != nil {
		t.Fatal(err)
	}
	io.WriteString(f, "\n[report]\nfolder = \"reports\"\n")
	f.Close()
	out, errOut, code = cli(t, "report", "daily", "--config", cfgPath, "--day", day)
	want := filepath.Join(dir, "reports", "ringlog-daily-"+day+".html")
	if code != exitOK || !strings.Contains(out, want) {
		t.Fatalf("report daily --config: exit %d\n%s\n%s", code, out, errOut)
	}
	checkPage(t, want, "gantry-arm")

	cmp := filepath.Join(dir, "compare.html")
	out, errOut, code = cli(t, "report", "compare", "--db", dbPath, "--prototype", "gantry-arm", "--revision", "R1", "--revision", "R2", "--out", cmp)
	if code != exitOK || !strings.Contains(out, "revision report of gantry-arm, R2 against R1") {
		t.Fatalf("report compare: exit %d\n%s\n%s", code, out, errOut)
	}
	checkPage(t, cmp, "gantry-arm: revision R2 against R1", "bending-1")

	for _, c := range []struct {
		args []string
		code int
		msg  string
	}{
		{[]string{"report"}, exitUsage, "name the page"},
		{[]string{"report", "weekly"}, exitUsage, `unknown page "weekly"`},
		{[]string{"report", "daily"}, exitUsage, "--db PATH or --config FILE is required"},
		{[]string{"report", "daily", "--db", dbPath, "--day", "2025-13-01"}, exitUsage, "write the day as YYYY-MM-DD"},
		{[]string{"report", "daily", "--db", filepath.Join(dir, "none.db")}, exitFailure, "does not exist"},
		{[]string{"report", "compare", "--db", dbPath, "--prototype", "gantry-arm", "--revision", "R1"}, exitUsage, "exactly twice"},
		{[]string{"report", "compare", "--db", dbPath, "--revision", "R1", "--revision", "R2"}, exitUsage, "--prototype P is required"},
		{[]string{"report", "compare", "--db", dbPath, "--prototype", "gantry-arm", "--revision", "R1", "--revision", "R9", "--out", filepath.Join(dir, "x.html")},
			exitFailure, "revision R9: no hits"},
	} {
		_, errOut, code := cli(t, c.args...)
		if code != c.code || !strings.Contains(errOut, c.msg) {
			t.Errorf("%v: exit %d, want %d with %q\n%s", c.args, code, c.code, c.msg, errOut)
		}
	}
	if fileExists(filepath.Join(dir, "x.html")) {
		t.Error("a failed revision report left a page behind")
	}
}

// checkPage reads a written page and checks that it is a whole,
// self-contained page with the given texts.
func checkPage(t *testing.T, path string, texts ...string) {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	s := string(b)
	if !strings.HasPrefix(s, "<!DOCTYPE html>") || !strings.HasSuffix(strings.TrimSpace(s), "</html>") {
		t.Errorf("%s is not a whole page", path)
	}
	for _, bad := range []string{"<script", "http://", "https://", "url("} {
		if strings.Contains(s, bad) {
			t.Errorf("%s contains %q", path, bad)
		}
	}
	for _, x := range texts {
		if !strings.Contains(s, x) {
			t.Errorf("%s lacks %q", path, x)
		}
	}
}

// TestAnalyzePlot: one file gives FILE.svg, several FILE-1.svg,
// FILE-2.svg in the order given; each a well-formed SVG naming its file.
func TestAnalyzePlot(t *testing.T) {
	dir := t.TempDir()
	one := filepath.Join(dir, "hit.svg")
	if _, errOut, code := cli(t, "analyze", "--plot", one, rulesFile("good-ok.csv")); code != exitOK {
		t.Fatalf("analyze --plot: exit %d\n%s", code, errOut)
	}
	checkSVG(t, one, "good-ok.csv: accepted")
	many := filepath.Join(dir, "many.svg")
	if _, errOut, code := cli(t, "analyze", rulesFile("good-ok.csv"), "--plot", many, rulesFile("clipping-bad.csv")); code != exitOK {
		t.Fatalf("analyze --plot with two files: exit %d\n%s", code, errOut)
	}
	checkSVG(t, filepath.Join(dir, "many-1.svg"), "good-ok.csv: accepted")
	checkSVG(t, filepath.Join(dir, "many-2.svg"), "clipping-bad.csv: rejected (clipped")
	if fileExists(many) {
		t.Error("with two files, FILE.svg itself was written")
	}
	if _, _, code := cli(t, "analyze", "--plot", filepath.Join(dir, "no", "such", "dir.svg"), rulesFile("good-ok.csv")); code != exitFailure {
		t.Errorf("a plot that cannot be written: exit %d, want %d", code, exitFailure)
	}
}

func checkSVG(t *testing.T, path, title string) {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	d := xml.NewDecoder(strings.NewReader(string(b)))
	root := ""
	for {
		tok, err := d.Token()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatalf("%s is not well-formed: %v", path, err)
		}
		if se, ok := tok.(xml.StartElement); ok && root == "" {
			root = se.Name.Local
		}
	}
	if root != "svg" || !strings.Contains(string(b), title) {
		t.Errorf("%s: root <%s>, title %q not found", path, root, title)
	}
}

// emptyHistory is an empty history.
type emptyHistory struct{}

func (emptyHistory) Hits(context.Context, db.Filter) ([]db.Hit, error) { return nil, nil }
func (emptyHistory) StoredFiles(context.Context, db.Filter) ([]db.StoredFile, error) {
	return nil, nil
}
func (emptyHistory) SupersededBetween(context.Context, time.Time, time.Time) ([]db.SupersededHit, error) {
	return nil, nil
}
func (emptyHistory) FailedBetween(context.Context, time.Time, time.Time) ([]db.FailedFile, error) {
	return nil, nil
}

// fakeClock runs the schedule in fast-forward: every wait advances the
// time at once; the run ends when the time passes stop.
type fakeClock struct {
	mu     sync.Mutex
	t      time.Time
	stop   time.Time
	cancel context.CancelFunc
}

func (c *fakeClock) clock() dailyClock {
	return dailyClock{
		now: func() time.Time { c.mu.Lock(); defer c.mu.Unlock(); return c.t },
		after: func(d time.Duration) <-chan time.Time {
			c.mu.Lock()
			defer c.mu.Unlock()
			ch := make(chan time.Time, 1)
			if c.t.Add(d).After(c.stop) {
				c.cancel() // and the channel never fires: the run ends
				return ch
			}
			c.t = c.t.Add(d)
			ch <- c.t
			return ch
		},
	}
}

// TestScheduleDaily runs the daemon's schedule on a fake clock with the
// report time 18:00: the previous day is caught up on start, the day is
// written at 18:00, an existing report is kept, and a report written
// before its day ended is completed.
func TestScheduleDaily(t *testing.T) {
	loc := time.FixedZone("lab", 3600)
	at := func(day, hour, minute int) time.Time { return time.Date(2025, 5, day, hour, minute, 0, 0, loc) }
	run := func(t *testing.T, folder string, from, to time.Time) {
		t.Helper()
		cfg := &Config{Database: filepath.Join(folder, "history.db"), Report: ReportConfig{Time: "18:00", Folder: folder}}
		ctx, cancel := context.WithCancel(context.Background())
		defer cancel()
		fc := &fakeClock{t: from, stop: to, cancel: cancel}
		runDaily(ctx, cfg, emptyHistory{}, zerolog.Nop(), fc.clock())
	}
	name := func(folder string, day int) string {
		return filepath.Join(folder, dailyName(at(day, 12, 0)))
	}

	t.Run("catch-up and report time", func(t *testing.T) {
		folder := t.TempDir()
		run(t, folder, at(6, 10, 0), at(6, 17, 59))
		if !fileExists(name(folder, 5)) {
			t.Error("the previous day was not caught up on start")
		}
		if fileExists(name(folder, 6)) {
			t.Error("the day was written before its report time")
		}
		run(t, folder, at(6, 17, 30), at(6, 18, 3))
		if !fileExists(name(folder, 6)) {
			t.Error("the day was not written at its report time")
		}
		b, _ := os.ReadFile(name(folder, 6))
		if !strings.Contains(string(b), "Tuesday 6 May 2025") {
			t.Error("the report of 6 May is not about 6 May")
		}
	})
	t.Run("started after the report time", func(t *testing.T) {
		folder := t.TempDir()
		run(t, folder, at(6, 19, 0), at(6, 19, 5))
		if !fileExists(name(folder, 5)) || !fileExists(name(folder, 6)) {
			t.Error("the missed report time was not caught up")
		}
	})
	t.Run("existing report kept", func(t *testing.T) {
		folder := t.TempDir()
		for _, d := range []int{5, 6} {
			writeFile(t, name(folder, d), []byte("keep"))
		}
		run(t, folder, at(6, 17, 0), at(6, 18, 30))
		for _, d := range []int{5, 6} {
			if b, _ := os.ReadFile(name(folder, d)); string(b) != "keep" {
				t.Errorf("the report of %d May was overwritten", d)
			}
		}
	})
	t.Run("incomplete report completed", func(t *testing.T) {
		folder := t.TempDir()
		p := name(folder, 5)
		writeFile(t, p, []byte("written at 18:00 on the 5th"))
		if err := os.Chtimes(p, at(5, 18, 0), at(5, 18, 0)); err != nil {
			t.Fatal(err)
		}
		run(t, folder, at(6, 9, 0), at(6, 9, 5))
		if b, _ := os.ReadFile(p); !strings.HasPrefix(string(b), "<!DOCTYPE html>") {
			t.Error("a report written before its day ended was not rewritten")
		}
	})
	t.Run("no report time", func(t *testing.T) {
		folder := t.TempDir()
		cfg := &Config{Database: filepath.Join(folder, "history.db")}
		runDaily(context.Background(), cfg, emptyHistory{}, zerolog.Nop(), realClock) // returns at once
		if entries, _ := os.ReadDir(folder); len(entries) > 0 {
			t.Error("a report was written without a report time")
		}
	})
}

// TestDaemonWritesDailyReport starts the daemon in-process with a report
// time of 00:00: on start it catches up yesterday's report and today's
// (the time has passed), into the configured folder, and stops cleanly.
func TestDaemonWritesDailyReport(t *testing.T) {
	dir := t.TempDir()
	export := filepath.Join(dir, "export")
	if err := os.MkdirAll(export, 0o755); err != nil {
		t.Fatal(err)
	}
	cfgPath := filepath.Join(dir, "ringlog.toml")
	writeFile(t, cfgPath, []byte(`database = "history.db"
log_file = "ringlog.log"
[[folder]]
path = "export"
prototype = "frame"
[report]
time = "00:00"
folder = "reports"
`))
	cfg, err := loadConfig(cfgPath)
	if err != nil {
		t.Fatal(err)
	}
	m := &Main{Config: cfg, Stderr: io.Discard}
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	if err := m.Open(ctx); err != nil {
		t.Fatal(err)
	}
	defer m.Close()
	done := make(chan error, 1)
	go func() { done <- m.Run(ctx) }()
	now := time.Now()
	want := []string{filepath.Join(dir, "reports", dailyName(now.AddDate(0, 0, -1))), filepath.Join(dir, "reports", dailyName(now))}
	deadline := time.Now().Add(waitLong)
	for time.Now().Before(deadline) && !(fileExists(want[0]) && fileExists(want[1])) {
		time.Sleep(50 * time.Millisecond)
	}
	cancel()
	select {
	case err := <-done:
		if err != nil {
			t.Errorf("daemon: %v", err)
		}
	case <-time.After(waitLong):
		t.Fatal("the daemon did not stop")
	}
	for _, p := range want {
		checkPage(t, p, "No hit was recorded on this day.")
	}
}
