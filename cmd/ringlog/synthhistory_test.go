package main

import (
	"path/filepath"
	"strings"
	"testing"
)

// TestSynthHistoryOnlyWithFlag: synth-history fills a database that the
// history commands then read only with --synthetic; without it they find
// no hits, and the status counts none.
func TestSynthHistoryOnlyWithFlag(t *testing.T) {
	dbPath := filepath.Join(t.TempDir(), "synthetic.db")
	if o, e, code := cli(t, "synth-history", "--db", dbPath, "--hits", "120", "--end", "2026-06-30"); code != 0 || !strings.Contains(o, "120 synthetic hit(s)") {
		t.Fatalf("synth-history: exit %d\n%s%s", code, o, e)
	}
	if o, e, code := cli(t, "stats", "--db", dbPath, "--prototype", "synthetic-frame"); code != 0 || !strings.Contains(e, "no hits") || o != "" {
		t.Errorf("stats without --synthetic: exit %d\n%s%s", code, o, e)
	}
	o, e, code := cli(t, "stats", "--db", dbPath, "--prototype", "synthetic-frame", "--synthetic", "--json")
	if code != 0 || len(jsonLines(t, o)) != 2 {
		t.Errorf("stats --synthetic: exit %d, want one line per revision A, B\n%s%s", code, o, e)
	}
	o, e, code = cli(t, "history", "--db", dbPath, "--synthetic", "--json")
	if lines := jsonLines(t, o); code != 0 || len(lines) != 120 || !strings.HasPrefix(lines[0]["file"].(string), "synthetic:") {
		t.Errorf("history --synthetic: exit %d, %d lines\n%s", code, len(lines), e)
	}
	for _, args := range [][]string{
		{"trend", "--db", dbPath, "--prototype", "synthetic-frame", "--synthetic"},
		{"compare", "--db", dbPath, "--prototype", "synthetic-frame", "--revision", "A", "--revision", "B", "--synthetic"},
		{"report", "daily", "--db", dbPath, "--day", "2026-06-30", "--out", filepath.Join(t.TempDir(), "d.html"), "--synthetic"},
	} {
		if o, e, code := cli(t, args...); code != 0 || strings.Contains(e, "no hits") {
			t.Errorf("%s: exit %d\n%s%s", strings.Join(args[:2], " "), code, o, e)
		}
	}
	if o, _, _ := cli(t, "status", "--db", dbPath, "--json"); !strings.Contains(o, `"hits":0`) && !strings.Contains(o, `"hits": 0`) {
		t.Errorf("status counts synthetic hits: %s", o)
	}
}
