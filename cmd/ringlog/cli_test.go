package main

// Contract tests of the one-shot commands, run in-process through run()
// with buffers for the streams. The exit statuses (0 ran, 1 a file or the
// database failed, 2 bad command line) and the JSON keys are documented in
// README.md; scripts rely on them.

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"github.com/ringlog/ringlog/db"
)

// cli runs one command line in-process.
func cli(t *testing.T, args ...string) (stdout, stderr string, code int) {
	t.Helper()
	var o, e bytes.Buffer
	code = run(context.Background(), &env{stdout: &o, stderr: &e, stdin: strings.NewReader("")}, args)
	return o.String(), e.String(), code
}

// jsonLines parses each non-empty line of s as a JSON object.
func jsonLines(t *testing.T, s string) []map[string]any {
	t.Helper()
	var out []map[string]any
	for _, l := range strings.Split(s, "\n") {
		if strings.TrimSpace(l) == "" {
			continue
		}
		var m map[string]any
		if err := json.Unmarshal([]byte(l), &m); err != nil {
			t.Fatalf("not a JSON object line: %q: %v", l, err)
		}
		out = append(out, m)
	}
	return out
}

// rulesFile is a committed test hit of testdata/rules (made by
// testdata/rules/gen.go with the closed-form generator pipeline/synth).
func rulesFile(name string) string { return filepath.Join(moduleRoot, "testdata", "rules", name) }

// copyTo copies src into dir under name and returns the new path.
func copyTo(t *testing.T, src, dir, name string) string {
	t.Helper()
	b, err := os.ReadFile(src)
	if err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(dir, name)
	writeFile(t, p, b)
	return p
}

func number(t *testing.T, v any, what string) float64 {
	t.Helper()
	f, ok := v.(float64)
	if !ok {
		t.Fatalf("%s: %v (%T) is not a number", what, v, v)
	}
	return f
}

// checkResultJSON checks the keys of one 'analyze --json' line and returns
// its modes' (frequency, damping ratio).
func checkResultJSON(t *testing.T, r map[string]any) [][2]float64 {
	t.Helper()
	if _, ok := r["file"].(string); !ok {
		t.Errorf("no \"file\" string in %v", r)
	}
	switch r["verdict"] {
	case "accepted", "flagged", "rejected":
	default:
		t.Errorf("verdict %v, want accepted, flagged or rejected", r["verdict"])
	}
	reasons, ok := r["reasons"].([]any)
	if !ok {
		t.Errorf("\"reasons\" is %T, want an array (empty when none)", r["reasons"])
	}
	for _, x := range reasons {
		rs, _ := x.(map[string]any)
		if _, ok := rs["code"].(string); !ok {
			t.Errorf("reason without code: %v", x)
		}
		if _, ok := rs["message"].(string); !ok {
			t.Errorf("reason without message: %v", x)
		}
	}
	modes, ok := r["modes"].([]any)
	if !ok {
		t.Fatalf("\"modes\" is %T, want an array", r["modes"])
	}
	var out [][2]float64
	for i, x := range modes {
		m, _ := x.(map[string]any)
		f := number(t, m["frequency_hz"], "frequency_hz")
		z := number(t, m["damping_ratio"], "damping_ratio")
		ci, _ := m["damping_ratio_ci95"].([]any)
		if len(ci) != 2 {
			t.Fatalf("mode %d: damping_ratio_ci95 %v, want [low, high]", i, m["damping_ratio_ci95"])
		}
		lo, hi := number(t, ci[0], "ci low"), number(t, ci[1], "ci high")
		if !(lo <= z && z <= hi) {
			t.Errorf("mode %d: damping ratio %g outside its interval [%g, %g]", i, z, lo, hi)
		}
		if !(z > 0 && z < 1) {
			t.Errorf("mode %d: damping ratio %g is not a fraction of critical", i, z)
		}
		if est, _ := m["estimates"].([]any); len(est) == 0 {
			t.Errorf("mode %d: no estimates", i)
		}
		if i > 0 && f < out[i-1][0] {
			t.Errorf("modes not ascending by frequency: %g Hz after %g Hz", f, out[i-1][0])
		}
		out = append(out, [2]float64{f, z})
	}
	return out
}

func TestAnalyzeJSON(t *testing.T) {
	t.Parallel()
	// Generator parameters from testdata/rules/README.md (closed-form
	// decays of pipeline/synth): good-ok.csv one mode at 60 Hz, damping
	// ratio 1 %; good-multi-ok.csv 45 Hz / 1.2 %, 210 Hz / 0.8 %,
	// 640 Hz / 0.5 %. Tolerances: 0.5 % on frequency, 10 % (relative) on
	// damping, loose against the 40 dB noise of the files.
	cases := []struct {
		file  string
		modes [][2]float64
	}{
		{"good-ok.csv", [][2]float64{{60, 0.01}}},
		{"good-multi-ok.csv", [][2]float64{{45, 0.012}, {210, 0.008}, {640, 0.005}}},
	}
	for _, c := range cases {
		out, errOut, code := cli(t, "analyze", "--json", rulesFile(c.file))
		if code != 0 {
			t.Fatalf("%s: exit %d, stderr %q", c.file, code, errOut)
		}
		lines := jsonLines(t, out)
		if len(lines) != 1 {
			t.Fatalf("%s: %d JSON lines, want 1", c.file, len(lines))
		}
		if lines[0]["file"] != rulesFile(c.file) {
			t.Errorf("file %v, want %s", lines[0]["file"], rulesFile(c.file))
		}
		got := checkResultJSON(t, lines[0])
		if len(got) != len(c.modes) {
			t.Fatalf("%s: %d modes %v, want %d", c.file, len(got), got, len(c.modes))
		}
		for i, w := range c.modes {
			if math.Abs(got[i][0]-w[0]) > 0.005*w[0] || math.Abs(got[i][1]-w[1]) > 0.1*w[1] {
				t.Errorf("%s mode %d: %.3f Hz, zeta %.5f; generator %.0f Hz, zeta %.4f", c.file, i, got[i][0], got[i][1], w[0], w[1])
			}
		}
	}
}

func TestAnalyzeBadFiles(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	missing := filepath.Join(dir, "missing.csv")
	corrupt := filepath.Join(dir, "corrupt.csv")
	writeFile(t, corrupt, []byte("time [s],accel\n0,1\n0.001,x\n"))
	good := rulesFile("good-ok.csv")

	for _, bad := range []string{missing, corrupt} {
		out, errOut, code := cli(t, "analyze", bad)
		if code != 1 || !strings.Contains(errOut, bad) || out != "" {
			t.Errorf("analyze %s: exit %d, stdout %q, stderr %q; want exit 1 and the file named on stderr", bad, code, out, errOut)
		}
		out, errOut, code = cli(t, "analyze", "--json", bad)
		lines := jsonLines(t, out)
		if code != 1 || !strings.Contains(errOut, bad) || len(lines) != 1 || lines[0]["file"] != bad ||
			!strings.Contains(lines[0]["error"].(string), bad) {
			t.Errorf("analyze --json %s: exit %d, stdout %q, stderr %q; want exit 1 and {\"file\",\"error\"}", bad, code, out, errOut)
		}
	}

	// Mixed: exit 1, every file reported, the good one analysed.
	out, errOut, code := cli(t, "analyze", "--json", missing, good, corrupt)
	if code != 1 {
		t.Errorf("mixed files: exit %d, want 1", code)
	}
	lines := jsonLines(t, out)
	if len(lines) != 3 {
		t.Fatalf("mixed files: %d lines, want 3:\n%s", len(lines), out)
	}
	if lines[1]["file"] != good || lines[1]["error"] != nil {
		t.Errorf("the good file's line: %v", lines[1])
	} else {
		checkResultJSON(t, lines[1])
	}
	if !strings.Contains(errOut, missing) || !strings.Contains(errOut, corrupt) || strings.Contains(errOut, good) {
		t.Errorf("stderr should name exactly the two bad files:\n%s", errOut)
	}
	// Text output too: the good file is printed.
	out, _, code = cli(t, "analyze", good, missing)
	if code != 1 || !strings.Contains(out, good) {
		t.Errorf("text output of mixed files: exit %d, stdout %q", code, out)
	}
}

func TestUsageErrors(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	dbPath := filepath.Join(dir, "h.db")
	good := rulesFile("good-ok.csv")
	for _, args := range [][]string{
		{},
		{"no-such-command"},
		{"analyze"},
		{"analyze", "--json"},
		{"analyze", "--no-such-flag", good},
		{"analyze", "--window-tau", "-1", good},
		{"analyze", "--window-tau", "abc", good},
		{"ingest", "--db", dbPath},
		{"ingest", good},
		{"history"},
		{"history", "--db", dbPath, "--since", "last tuesday"},
		{"history", "--db", dbPath, "--verdict", "great"},
		{"history", "--db", dbPath, "stray-argument"},
		{"status"},
		{"reanalyze"},
		{"watch"},
		{"watch", "--config"},
	} {
		out, errOut, code := cli(t, args...)
		if code != 2 || errOut == "" {
			t.Errorf("ringlog %q: exit %d, stderr %q; want 2 and a message", args, code, errOut)
		}
		if out != "" {
			t.Errorf("ringlog %q: stdout %q, want nothing", args, out)
		}
	}
	if fileExists(dbPath) {
		t.Errorf("a usage error created the database %s", dbPath)
	}
	for _, args := range [][]string{{"--help"}, {"analyze", "-h"}, {"version"}} {
		if _, _, code := cli(t, args...); code != 0 {
			t.Errorf("ringlog %q: exit %d, want 0", args, code)
		}
	}
}

func TestIngestAndHistory(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	dbPath := filepath.Join(dir, "history.db")
	a := copyTo(t, rulesFile("good-ok.csv"), dir, "a.csv")
	b := copyTo(t, rulesFile("good-multi-ok.csv"), dir, "b.csv")
	c := copyTo(t, rulesFile("several-modes-ok.csv"), dir, "c.csv")

	out, errOut, code := cli(t, "ingest", "--db", dbPath, "--prototype", "arm", "--revision", "A", a, b)
	if code != 0 {
		t.Fatalf("ingest: exit %d: %s", code, errOut)
	}
	if _, errOut, code = cli(t, "ingest", "--db", dbPath, "--prototype", "base", "--revision", "B", c); code != 0 {
		t.Fatalf("ingest: exit %d: %s", code, errOut)
	}
	all := func() []map[string]any {
		out, errOut, code := cli(t, "history", "--db", dbPath, "--json")
		if code != 0 {
			t.Fatalf("history: exit %d: %s", code, errOut)
		}
		return jsonLines(t, out)
	}
	before := all()
	if len(before) != 3 {
		t.Fatalf("%d hits after ingesting 3 files:\n%s", len(before), out)
	}

	// A second ingest of the same files records nothing new.
	out, errOut, code = cli(t, "ingest", "--db", dbPath, a, b, c)
	if code != 0 {
		t.Fatalf("second ingest: exit %d: %s", code, errOut)
	}
	if n := strings.Count(out, "already recorded"); n < 3 {
		t.Errorf("second ingest should say 'already recorded' for each file:\n%s", out)
	}
	after := all()
	if len(after) != 3 {
		t.Errorf("%d hits after the second ingest, want still 3", len(after))
	}
	// The same bytes under a new name: a duplicate, not a new hit.
	d := copyTo(t, a, dir, "copy-of-a.csv")
	if out, _, code = cli(t, "ingest", "--db", dbPath, d); code != 0 || !strings.Contains(out, "duplicate") {
		t.Errorf("ingest of a copy: exit %d, %q; want a duplicate", code, out)
	}
	if n := len(all()); n != 3 {
		t.Errorf("%d hits after ingesting a copy, want 3", n)
	}

	byFile := map[string]map[string]any{}
	for _, h := range after {
		for _, k := range []string{"file", "sha256", "verdict", "prototype", "revision", "modes"} {
			if _, ok := h[k]; !ok {
				t.Errorf("history --json line lacks %q: %v", k, h)
			}
		}
		byFile[h["file"].(string)] = h
	}
	for p, want := range map[string][2]string{a: {"arm", "A"}, b: {"arm", "A"}, c: {"base", "B"}} {
		h := byFile[p]
		if h == nil {
			t.Errorf("no hit for %s", p)
			continue
		}
		data, _ := os.ReadFile(p)
		if h["sha256"] != sha256Of(data) {
			t.Errorf("%s: sha256 %v, the bytes hash to %s", p, h["sha256"], sha256Of(data))
		}
		if h["prototype"] != want[0] || h["revision"] != want[1] {
			t.Errorf("%s: %v/%v, want %s/%s", p, h["prototype"], h["revision"], want[0], want[1])
		}
	}

	// Filters.
	files := func(args ...string) ([]string, string) {
		out, errOut, code := cli(t, append([]string{"history", "--db", dbPath, "--json"}, args...)...)
		if code != 0 {
			t.Fatalf("history %q: exit %d: %s", args, code, errOut)
		}
		var fs []string
		for _, h := range jsonLines(t, out) {
			fs = append(fs, h["file"].(string))
		}
		sort.Strings(fs)
		return fs, errOut
	}
	for _, f := range []struct {
		args []string
		want []string
	}{
		{[]string{"--prototype", "arm"}, []string{a, b}},
		{[]string{"--revision", "B"}, []string{c}},
		{[]string{"--prototype", "arm", "--revision", "A"}, []string{a, b}},
		{[]string{"--prototype", "arm", "--revision", "B"}, nil},
		{[]string{"--since", "2000-01-01"}, []string{a, b, c}},
		{[]string{"--until", "2000-01-01"}, nil},
		// Beyond the years int64 nanoseconds hold (1678-2262).
		{[]string{"--since", "2999-01-01"}, nil},
		{[]string{"--until", "2999-01-01"}, []string{a, b, c}},
		{[]string{"--since", "1600-01-01"}, []string{a, b, c}},
		{[]string{"--until", "1600-01-01"}, nil},
	} {
		got, errOut := files(f.args...)
		if strings.Join(got, "|") != strings.Join(f.want, "|") {
			t.Errorf("history %q: %v, want %v", f.args, got, f.want)
		}
		if len(f.want) == 0 && errOut == "" {
			t.Errorf("history %q: no hits and nothing said on stderr", f.args)
		}
	}
}

func TestReanalyzeKeepsOldResult(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	dbPath := filepath.Join(dir, "history.db")
	a := copyTo(t, rulesFile("good-ok.csv"), dir, "a.csv")
	if _, errOut, code := cli(t, "ingest", "--db", dbPath, a); code != 0 {
		t.Fatalf("ingest: exit %d: %s", code, errOut)
	}
	if out, errOut, code := cli(t, "reanalyze", "--db", dbPath); code != 0 || !strings.Contains(out, a) {
		t.Fatalf("reanalyze: exit %d, stdout %q, stderr %q", code, out, errOut)
	}
	ctx := context.Background()
	store, err := db.Open(ctx, dbPath)
	if err != nil {
		t.Fatal(err)
	}
	defer store.Close()
	hits, err := store.Hits(ctx, db.Filter{})
	if err != nil {
		t.Fatal(err)
	}
	if len(hits) != 1 {
		t.Fatalf("%d hits after reanalysis, want 1", len(hits))
	}
	res, err := store.Results(ctx, hits[0].ID)
	if err != nil {
		t.Fatal(err)
	}
	if len(res) != 2 || !res[0].Superseded || res[1].Superseded {
		t.Fatalf("results of the hit: %+v; want the old one superseded and the new one current", res)
	}
	if hits[0].ResultID != res[1].ID {
		t.Errorf("current result %d, want the new one %d", hits[0].ResultID, res[1].ID)
	}

	// A file changed since it was recorded keeps its old result: exit 1.
	writeFile(t, a, []byte("changed\n"))
	if _, errOut, code := cli(t, "reanalyze", "--db", dbPath); code != 1 || !strings.Contains(errOut, a) {
		t.Errorf("reanalyze of a changed file: exit %d, stderr %q; want 1 naming the file", code, errOut)
	}
	if res, _ := store.Results(ctx, hits[0].ID); len(res) != 2 {
		t.Errorf("%d results after a failed reanalysis, want still 2", len(res))
	}
}
