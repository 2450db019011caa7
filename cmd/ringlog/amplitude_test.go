package main

import (
	"path/filepath"
	"strings"
	"testing"
)

// analyze shows a mode's damping against amplitude, in both outputs, on
// the field corpus's cubic-damping recording (pipeline/synth/field: a
// time-domain model whose 95 Hz mode's damping doubles at the start of
// the decay, 2.4 % falling to 1.2 %).
func TestAnalyzeAmplitudeCurve(t *testing.T) {
	t.Parallel()
	file := filepath.Join("..", "..", "testdata", "field", "cubic-damping-spoiled.csv")
	out, _, _ := cli(t, "analyze", file)
	for _, want := range []string{"damping ratio against amplitude", "one mode whose decay is not exponential", "amplitude_damping"} {
		if !strings.Contains(out, want) {
			t.Errorf("analyze output lacks %q:\n%s", want, out)
		}
	}
	out, _, _ = cli(t, "analyze", "--json", file)
	r := jsonLines(t, out)[0]
	ms, _ := r["modes"].([]any)
	if len(ms) == 0 {
		t.Fatalf("no modes: %v", r)
	}
	m := ms[0].(map[string]any)
	bins, _ := m["amplitude_damping"].([]any)
	if len(bins) < 3 || number(t, m["merged_poles"], "merged_poles") < 2 {
		t.Fatalf("95 Hz mode: %d amplitude bins, merged_poles %v", len(bins), m["merged_poles"])
	}
	first, last := bins[0].(map[string]any), bins[len(bins)-1].(map[string]any)
	if !(number(t, first["amplitude"], "amplitude") > number(t, last["amplitude"], "amplitude")) {
		t.Errorf("bins not largest amplitude first: %v ... %v", first, last)
	}
	// the damping at the largest amplitude is above the 1.2 % the mode
	// keeps at small amplitude (the recording's truth)
	if z := number(t, first["damping_ratio"], "damping_ratio"); !(z > 0.014) {
		t.Errorf("damping at the largest amplitude %.4f, want well above 0.012", z)
	}
	if _, ok := r["peak_force"]; !ok {
		t.Errorf("no peak_force key: %v", r)
	}
}
