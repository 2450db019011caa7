package main

import (
	"fmt"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// modeLabels returns the label of every mode of every hit of
// 'history --json' output.
func modeLabels(t *testing.T, out string) []string {
	t.Helper()
	var labels []string
	for _, h := range jsonLines(t, out) {
		for _, m := range h["modes"].([]any) {
			l, _ := m.(map[string]any)["label"].(string)
			labels = append(labels, l)
		}
	}
	return labels
}

// TestHistoryReanalyzeLabels: hits ingested without a configuration carry
// no labels; history --config shows the configuration's labels, reanalyze
// --config stores them, and a later reanalyze without a configuration
// keeps them.
func TestHistoryReanalyzeLabels(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	dbPath := filepath.Join(dir, "history.db")
	c := chain{m: [3]float64{1.0, 0.8, 0.6}, k: [3]float64{2.2e5, 1.8e5, 1.5e5}, alpha: 4, beta: 2.5e-5}
	freqs, _ := c.modes(t)
	files := chainHits(t, dir, "h", c, 2, 7, time.Date(2024, 6, 3, 8, 0, 0, 0, time.UTC))
	if _, errOut, code := cli(t, append([]string{"ingest", "--db", dbPath, "--prototype", "frame", "--quiet"}, files...)...); code != 0 {
		t.Fatalf("ingest: exit %d: %s", code, errOut)
	}
	cfg := filepath.Join(dir, "ringlog.toml")
	writeFile(t, cfg, []byte(fmt.Sprintf(`database = %q

[[prototype]]
name = "frame"

[[prototype.mode]]
label = "bounce"
frequency_hz = %.2f

[[prototype.mode]]
label = "sway"
frequency_hz = %.2f
`, dbPath, freqs[0], freqs[1])))
	count := func(labels []string, l string) int {
		n := 0
		for _, x := range labels {
			if x == l {
				n++
			}
		}
		return n
	}
	history := func(args ...string) (string, []string) {
		t.Helper()
		out, errOut, code := cli(t, append([]string{"history", "--json"}, args...)...)
		if code != 0 {
			t.Fatalf("history %v: exit %d: %s", args, code, errOut)
		}
		human, errOut, code := cli(t, append([]string{"history"}, args...)...)
		if code != 0 {
			t.Fatalf("history %v: exit %d: %s", args, code, errOut)
		}
		return human, modeLabels(t, out)
	}
	if _, labels := history("--db", dbPath); count(labels, "bounce")+count(labels, "sway") != 0 {
		t.Fatalf("labels %v before any configuration", labels)
	}
	human, labels := history("--config", cfg)
	if count(labels, "bounce") != 2 || count(labels, "sway") != 2 || !strings.Contains(human, "bounce") {
		t.Errorf("history --config: labels %v, want bounce and sway on each of 2 hits:\n%s", labels, human)
	}
	if _, errOut, code := cli(t, "reanalyze", "--config", cfg); code != 0 {
		t.Fatalf("reanalyze --config: exit %d: %s", code, errOut)
	}
	if _, labels = history("--db", dbPath); count(labels, "bounce") != 2 || count(labels, "sway") != 2 {
		t.Errorf("after reanalyze --config: stored labels %v, want bounce and sway on each hit", labels)
	}
	if _, errOut, code := cli(t, "reanalyze", "--db", dbPath); code != 0 {
		t.Fatalf("reanalyze: exit %d: %s", code, errOut)
	}
	if _, labels = history("--db", dbPath); count(labels, "bounce") != 2 || count(labels, "sway") != 2 {
		t.Errorf("after reanalyze without a configuration: labels %v, want them kept", labels)
	}
}
