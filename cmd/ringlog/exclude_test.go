package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/ringlog/ringlog/pipeline/check"
)

// TestExcludeCommand: 'exclude' leaves a hit out of the statistics (by id
// or SHA-256 prefix), every output says so, and '--undo' brings it back.
func TestExcludeCommand(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	dbPath := filepath.Join(dir, "history.db")
	c := chain{m: [3]float64{1.0, 0.8, 0.6}, k: [3]float64{2.2e5, 1.8e5, 1.5e5}, alpha: 4, beta: 2.5e-5}
	start := time.Date(2024, 6, 3, 8, 0, 0, 0, time.UTC)
	files := chainHits(t, dir, "x", c, 6, 7, start)
	args := append([]string{"ingest", "--db", dbPath, "--prototype", "frame", "--revision", "A", "--quiet"}, files...)
	if out, errOut, code := cli(t, args...); code != 0 {
		t.Fatalf("ingest: exit %d: %s %s", code, out, errOut)
	}
	out, _, _ := cli(t, "history", "--db", dbPath, "--json")
	hs := jsonLines(t, out)
	if len(hs) != 6 {
		t.Fatalf("history: %d hits", len(hs))
	}
	for _, h := range hs {
		if v, ok := h["excluded"]; !ok || v != nil {
			t.Fatalf("history --json before exclude: excluded %v (present %v), want null", v, ok)
		}
	}
	// stats --json: n of the first mode and what was left out.
	stats := func() (n float64, used float64, excluded []any, byHand []any) {
		t.Helper()
		out, errOut, code := cli(t, "stats", "--db", dbPath, "--prototype", "frame", "--json")
		if code != 0 {
			t.Fatalf("stats: exit %d: %s", code, errOut)
		}
		rs := jsonLines(t, out)[0]
		m := rs["modes"].([]any)[0].(map[string]any)
		return m["damping_ratio"].(map[string]any)["n"].(float64), rs["hits_used"].(float64), rs["excluded"].([]any), rs["excluded_by_hand"].([]any)
	}
	// byCode finds the exclusion of a code.
	byCode := func(ex []any, code string) map[string]any {
		for _, x := range ex {
			if m := x.(map[string]any); m["code"] == code {
				return m
			}
		}
		return nil
	}
	n0, used0, ex0, bh0 := stats()
	if n0 < 4 || used0 != n0 || byCode(ex0, "excluded_by_hand") != nil || len(bh0) != 0 {
		t.Fatalf("stats before exclude: n %g, used %g, excluded %v, by hand %v", n0, used0, ex0, bh0)
	}
	// Hits that count (the synthetic record may get a rejected one).
	var ok []map[string]any
	for _, h := range hs {
		if h["verdict"] != "rejected" {
			ok = append(ok, h)
		}
	}

	// By id, and by a prefix of the SHA-256.
	id0 := jsonNumber(t, ok[0]["id"])
	sha1 := ok[1]["sha256"].(string)
	if out, errOut, code := cli(t, "exclude", "--db", dbPath, "--why", "hammer tip loose", idString(id0), sha1[:10]); code != 0 ||
		strings.Count(out, "excluded from every statistic") != 2 {
		t.Fatalf("exclude: exit %d: %s %s", code, out, errOut)
	}
	n1, used1, ex1, bh1 := stats()
	if n1 != n0-2 || used1 != used0-2 {
		t.Errorf("stats after excluding 2 hits: n %g, hits used %g; before %g, %g", n1, used1, n0, used0)
	}
	if x := byCode(ex1, "excluded_by_hand"); x == nil || x["count"].(float64) != 2 || x["what"] != "hit" || len(ex1) != len(ex0)+1 {
		t.Errorf("stats excluded: %v", ex1)
	}
	if len(bh1) != 2 || bh1[0].(map[string]any)["why"] != "hammer tip loose" || bh1[0].(map[string]any)["by"] != osUser() {
		t.Errorf("stats excluded_by_hand: %v", bh1)
	}
	if out, _, _ := cli(t, "stats", "--db", dbPath, "--prototype", "frame"); !strings.Contains(out, "left out: 2 hit(s) excluded by hand (excluded_by_hand)") ||
		!strings.Contains(out, "hammer tip loose") {
		t.Errorf("stats human output does not say what was left out:\n%s", out)
	}
	// history shows the exclusion.
	out, _, _ = cli(t, "history", "--db", dbPath, "--json")
	var h0 struct {
		Excluded *struct {
			Why, By string
			At      time.Time
		} `json:"excluded"`
	}
	var line string
	for _, l := range strings.Split(out, "\n") {
		if strings.Contains(l, ok[0]["sha256"].(string)) {
			line = l
		}
	}
	if err := json.Unmarshal([]byte(line), &h0); err != nil || h0.Excluded == nil ||
		h0.Excluded.Why != "hammer tip loose" || h0.Excluded.By != osUser() || time.Since(h0.Excluded.At) > time.Hour {
		t.Errorf("history --json of an excluded hit: %+v, %v", h0.Excluded, err)
	}
	if out, _, _ := cli(t, "history", "--db", dbPath); strings.Count(out, "excluded by hand by "+osUser()) != 2 {
		t.Errorf("history does not show the 2 exclusions:\n%s", out)
	}
	// The export's provenance, trend, rayleigh and compare say it too.
	if out, _, _ := cli(t, "export", "--db", dbPath, "--prototype", "frame", "--format", "json"); !strings.Contains(out, `"excluded_by_hand":[{"hit_id":`) {
		t.Errorf("export json lacks the hand exclusion:\n%s", out)
	}
	if out, _, _ := cli(t, "export", "--db", dbPath, "--prototype", "frame", "--format", "csv", "--with-provenance"); !strings.Contains(out, "excluded by hand: hit") {
		t.Errorf("export csv lacks the hand exclusion:\n%s", out)
	}
	for _, cmd := range [][]string{{"trend", "--json"}, {"rayleigh", "--json"}} {
		out, _, _ := cli(t, append([]string{cmd[0], "--db", dbPath, "--prototype", "frame"}, cmd[1:]...)...)
		if !strings.Contains(out, `"excluded_by_hand":[{`) || !strings.Contains(out, `"code":"excluded_by_hand"`) {
			t.Errorf("%s lacks the exclusion:\n%s", cmd[0], out)
		}
	}
	// The daily page lists the hit excluded by hand with the reason.
	page := filepath.Join(dir, "day.html")
	out, errOut, code := cli(t, "report", "daily", "--db", dbPath, "--day", start.Local().Format("2006-01-02"), "--out", page)
	if code != 0 {
		t.Fatalf("report daily: exit %d: %s", code, errOut)
	}
	if !strings.Contains(out, "left out of the statistics: "+strconv.Itoa(2+len(hs)-len(ok))+" hits") {
		t.Errorf("report daily does not count what was left out:\n%s", out)
	}
	if b, _ := os.ReadFile(page); !strings.Contains(string(b), "Excluded by hand") || !strings.Contains(string(b), "hammer tip loose") {
		t.Errorf("the daily page does not list the hits excluded by hand")
	}

	// Already excluded: kept, said so. Unknown and too short references,
	// a missing --why: errors, nothing changed.
	if out, _, code := cli(t, "exclude", "--db", dbPath, "--why", "again", idString(id0)); code != 0 || !strings.Contains(out, "already excluded") {
		t.Errorf("exclude twice: exit %d: %s", code, out)
	}
	for _, c := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{"--why", "x", "ffffffffff"}, exitFailure, "no hit has this id"},
		{[]string{"--why", "x", "ab"}, exitFailure, "at least 4 hex digits"},
		{[]string{"--why", "x", idString(jsonNumber(t, ok[2]["id"])), "99999"}, exitFailure, "99999"},
		{[]string{idString(id0)}, exitUsage, "--why"},
		{[]string{"--why", "x"}, exitUsage, "HIT"},
		{[]string{"--undo", "--why", "x", "1"}, exitUsage, "exclude each other"},
	} {
		_, errOut, code := cli(t, append([]string{"exclude", "--db", dbPath}, c.args...)...)
		if code != c.code || !strings.Contains(errOut, c.want) {
			t.Errorf("exclude %v: exit %d, %q; want exit %d naming %q", c.args, code, errOut, c.code, c.want)
		}
	}
	if _, errOut, code := cli(t, "exclude", "--db", filepath.Join(dir, "none.db"), "--why", "x", "1"); code != exitFailure || !strings.Contains(errOut, "does not exist") {
		t.Errorf("exclude on a missing database: exit %d, %s", code, errOut)
	}
	if _, err := os.Stat(filepath.Join(dir, "none.db")); err == nil {
		t.Error("exclude created a database")
	}
	// The third hit was not excluded by the failed call naming it with 99999.
	if n, _, _, _ := stats(); n != n0-2 {
		t.Errorf("a failed exclude changed the statistics: n %g", n)
	}

	// --undo brings both back.
	if out, errOut, code := cli(t, "exclude", "--undo", "--db", dbPath, idString(id0), sha1[:8]); code != 0 || strings.Count(out, "counts again") != 2 {
		t.Fatalf("exclude --undo: exit %d: %s %s", code, out, errOut)
	}
	if n, used, ex, bh := stats(); n != n0 || used != used0 || len(ex) != len(ex0) || len(bh) != 0 {
		t.Errorf("stats after undo: n %g, used %g, excluded %v, by hand %v", n, used, ex, bh)
	}
	if _, errOut, code := cli(t, "exclude", "--undo", "--db", dbPath, idString(id0)); code != exitFailure || !strings.Contains(errOut, "not excluded") {
		t.Errorf("undo of a hit not excluded: exit %d, %s", code, errOut)
	}
}

// TestRulesShowEffect: 'ringlog rules' says of every reason code whether
// it doubts the values or informs, in both outputs.
func TestRulesShowEffect(t *testing.T) {
	out, _, code := cli(t, "rules", "--json")
	if code != 0 {
		t.Fatalf("rules --json: exit %d", code)
	}
	seen := map[string]string{}
	for _, r := range jsonLines(t, out) {
		seen[r["code"].(string)] = r["effect"].(string)
	}
	for _, r := range check.Describe() {
		if e := seen[r.Code]; e != string(check.Effect(r.Code)) || (e != "doubts" && e != "informs") {
			t.Errorf("rules --json: %s has effect %q", r.Code, e)
		}
	}
	if seen["beating_modes"] != "doubts" || seen["mode_limit"] != "informs" || seen[reasonFutureHitTime] != "informs" {
		t.Errorf("rules --json effects: %v", seen)
	}
	out, _, _ = cli(t, "rules")
	for _, l := range strings.Split(out, "\n") {
		if f := strings.Fields(l); len(f) > 2 && f[0] == "mode_limit" && f[2] != "informs" {
			t.Errorf("rules: %q", l)
		}
	}
	if !strings.Contains(out, "effect: doubts") {
		t.Errorf("rules does not explain the effect:\n%s", out)
	}
}

func jsonNumber(t *testing.T, v any) int64 {
	t.Helper()
	f, ok := v.(float64)
	if !ok {
		t.Fatalf("%v is not a number", v)
	}
	return int64(f)
}

func idString(id int64) string { return strconv.FormatInt(id, 10) }

// TestWithFlagged: synth-history flags about 4 % of its hits with a
// beating_modes flag that names no mode (db/synthetic.go): stats leaves
// every mode of those hits out and says so; --with-flagged counts them.
func TestWithFlagged(t *testing.T) {
	t.Parallel()
	dbPath := filepath.Join(t.TempDir(), "synth.db")
	if _, errOut, code := cli(t, "synth-history", "--db", dbPath, "--hits", "400", "--revisions", "A", "--end", "2025-06-30"); code != 0 {
		t.Fatalf("synth-history: exit %d: %s", code, errOut)
	}
	stats := func(extra ...string) (n, beating, modes float64) {
		t.Helper()
		args := append([]string{"stats", "--db", dbPath, "--synthetic", "--prototype", "synthetic-frame", "--json"}, extra...)
		out, errOut, code := cli(t, args...)
		if code != 0 {
			t.Fatalf("stats %v: exit %d: %s", extra, code, errOut)
		}
		rs := jsonLines(t, out)[0]
		n = rs["modes"].([]any)[0].(map[string]any)["damping_ratio"].(map[string]any)["n"].(float64)
		modes = float64(len(rs["modes"].([]any)))
		for _, x := range rs["excluded"].([]any) {
			if m := x.(map[string]any); m["code"] == "beating_modes" {
				if m["what"] != "mode" {
					t.Errorf("beating_modes left out as %v", m["what"])
				}
				beating = m["count"].(float64)
			}
		}
		return n, beating, modes
	}
	n, beating, modes := stats()
	nAll, beatingAll, _ := stats("--with-flagged")
	// Each flagged hit has every mode (synth-history never drops a mode
	// of a flagged hit), so the first mode gains one value per flagged
	// hit: the modes left out over the modes per hit.
	if beating == 0 || beatingAll != 0 || nAll-n != beating/modes {
		t.Errorf("n %g with %g modes left out for beating_modes; --with-flagged: n %g, %g left out", n, beating, nAll, beatingAll)
	}
}
