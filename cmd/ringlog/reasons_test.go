package main

import (
	"path/filepath"
	"strings"
	"testing"
)

// TestReasonPrintedOnce: the field corpus's close-modes file has two
// beating modes; the rule keeps one reason per mode (the JSON, the stored
// truth, has both, each with its mode), while analyze and history print
// the reason once.
func TestReasonPrintedOnce(t *testing.T) {
	t.Parallel()
	file := filepath.Join("..", "..", "testdata", "field", "close-modes-spoiled.csv")
	out, errOut, code := cli(t, "analyze", "--json", file)
	if code != 0 {
		t.Fatalf("analyze --json: exit %d: %s", code, errOut)
	}
	var modes []any
	for _, r := range jsonLines(t, out)[0]["reasons"].([]any) {
		if r := r.(map[string]any); r["code"] == "beating_modes" {
			modes = append(modes, r["mode"])
		}
	}
	if len(modes) != 2 || modes[0] == modes[1] {
		t.Fatalf("analyze --json: beating_modes reasons for modes %v, want one for each of the two modes", modes)
	}
	out, errOut, code = cli(t, "analyze", file)
	if code != 0 || strings.Count(out, "beating_modes") != 1 {
		t.Errorf("analyze: exit %d, beating_modes %d times, want once:\n%s%s", code, strings.Count(out, "beating_modes"), out, errOut)
	}
	dbPath := filepath.Join(t.TempDir(), "h.db")
	if _, errOut, code = cli(t, "ingest", "--db", dbPath, "--prototype", "p", "--quiet", file); code != 0 {
		t.Fatalf("ingest: exit %d: %s", code, errOut)
	}
	out, errOut, code = cli(t, "history", "--db", dbPath)
	if code != 0 || strings.Count(out, "beating_modes") != 1 {
		t.Errorf("history: exit %d, beating_modes %d times, want once:\n%s%s", code, strings.Count(out, "beating_modes"), out, errOut)
	}
}
