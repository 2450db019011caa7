package main

import (
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// keys checks that every key is present in m (null allowed) and returns
// m's objects under key sub (an object or a list of objects).
func keys(t *testing.T, what string, m map[string]any, list string) {
	t.Helper()
	for _, k := range strings.Fields(list) {
		if _, ok := m[k]; !ok {
			t.Errorf("%s: documented key %q missing (keys: %v)", what, k, mapKeys(m))
		}
	}
}

func mapKeys(m map[string]any) []string {
	var out []string
	for k := range m {
		out = append(out, k)
	}
	return out
}

// objects returns v as a list of objects: v itself when it is an object,
// its elements when it is a list; failing when there are none.
func objects(t *testing.T, what string, v any) []map[string]any {
	t.Helper()
	switch x := v.(type) {
	case map[string]any:
		return []map[string]any{x}
	case []any:
		var out []map[string]any
		for _, e := range x {
			if m, ok := e.(map[string]any); ok {
				out = append(out, m)
			}
		}
		if len(out) == 0 {
			t.Fatalf("%s: no objects in %v", what, v)
		}
		return out
	}
	t.Fatalf("%s: %v is neither an object nor a list", what, v)
	return nil
}

// TestJSONKeysAlwaysPresent decodes the JSON of history, stats, compare,
// trend, rayleigh, export and status into maps and checks that every key
// the README documents is there, null or [] when empty (a flag-free
// history: no constraint, no drift warning, no trend note, no Rayleigh
// note, stored labels absent, no point or direction).
func TestJSONKeysAlwaysPresent(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	dbPath := filepath.Join(dir, "history.db")
	a := chain{m: [3]float64{1.0, 0.8, 0.6}, k: [3]float64{2.2e5, 1.8e5, 1.5e5}, alpha: 4, beta: 2.5e-5}
	b := a
	b.alpha = 1.3 * a.alpha
	start := time.Date(2024, 6, 3, 8, 0, 0, 0, time.UTC)
	for i, c := range []chain{a, b} {
		rev := []string{"A", "B"}[i]
		files := chainHits(t, dir, rev, c, 5, uint64(20+i), start.Add(time.Duration(i)*48*time.Hour))
		if _, errOut, code := cli(t, append([]string{"ingest", "--db", dbPath, "--prototype", "frame", "--revision", rev, "--quiet"}, files...)...); code != 0 {
			t.Fatalf("ingest: exit %d: %s", code, errOut)
		}
	}
	// A hit with reasons that name a mode (beating_modes) for history.
	spoiled := filepath.Join("..", "..", "testdata", "field", "close-modes-spoiled.csv")
	if _, errOut, code := cli(t, "ingest", "--db", dbPath, "--prototype", "other", "--quiet", spoiled); code != 0 {
		t.Fatalf("ingest: exit %d: %s", code, errOut)
	}
	run := func(args ...string) []map[string]any {
		t.Helper()
		out, errOut, code := cli(t, args...)
		if code != 0 {
			t.Fatalf("%v: exit %d: %s", args, code, errOut)
		}
		lines := jsonLines(t, out)
		if len(lines) == 0 {
			t.Fatalf("%v: no JSON", args)
		}
		return lines
	}

	reasons := 0
	for _, h := range run("history", "--db", dbPath, "--json") {
		keys(t, "history", h, "id excluded file sha256 verdict prototype revision bay point direction hit_time ingested_at reasons modes channel analysis_version meta superseded")
		for _, r := range h["reasons"].([]any) {
			reasons++
			keys(t, "history reasons", r.(map[string]any), "code message severity mode")
		}
		for _, m := range objects(t, "history modes", h["modes"]) {
			keys(t, "history modes", m, "frequency_hz frequency_ci95 damping_ratio damping_ratio_ci95 damping_ratio_sd amplitude energy_share cycles snr_db estimator_spread dropped amplitude_damping merged_poles estimates label")
			for _, e := range objects(t, "history estimates", m["estimates"]) {
				keys(t, "history estimates", e, "method frequency_hz damping_ratio note")
			}
		}
	}
	if reasons == 0 {
		t.Error("history: no reasons to check")
	}

	for _, s := range run("stats", "--db", dbPath, "--prototype", "frame", "--json") {
		keys(t, "stats", s, "prototype revision hits_seen hits_used modes unmatched excluded excluded_by_hand damping_vs_level")
		for _, m := range objects(t, "stats modes", s["modes"]) {
			keys(t, "stats modes", m, "label label_source label_frequency_hz nominal_frequency_hz tolerance name damping_ratio frequency_hz hit_sd outliers")
			keys(t, "stats damping_ratio", m["damping_ratio"].(map[string]any), "n mean sd median min max cv mean_ci95 bootstrap_ci95 geometric_mean geometric_mean_ci95")
			keys(t, "stats frequency_hz", m["frequency_hz"].(map[string]any), "n mean sd median min max cv mean_ci95 bootstrap_ci95")
		}
		for _, l := range objects(t, "stats damping_vs_level", s["damping_vs_level"]) {
			keys(t, "stats damping_vs_level", l, "label name level n points groups exponent exponent_ci95 change_per_doubling change_per_doubling_ci95 level_span left_out verdict")
		}
	}

	c := run("compare", "--db", dbPath, "--prototype", "frame", "--revision", "A", "--revision", "B", "--json")[0]
	keys(t, "compare", c, "prototype revision_a revision_b modes excluded excluded_by_hand")
	for _, m := range objects(t, "compare modes", c["modes"]) {
		keys(t, "compare modes", m, "label name n_a n_b geometric_mean_a geometric_mean_b damping_ratio_ratio damping_ratio_ratio_ci95 p log_damping_welch frequency_shift_hz frequency_shift_ci95 frequency_p pooled_sd_log hits_needed difference_shown sentence frequency_sentence")
		keys(t, "compare log_damping_welch", m["log_damping_welch"].(map[string]any), "diff se dof t p ci95")
	}

	for _, r := range run("trend", "--db", dbPath, "--prototype", "frame", "--json") {
		keys(t, "trend", r, "prototype revision modes warnings excluded excluded_by_hand")
		for _, m := range objects(t, "trend modes", r["modes"]) {
			keys(t, "trend modes", m, "label name n start end span_days damping_ratio frequency_hz drift warning note")
			for _, q := range []string{"damping_ratio", "frequency_hz"} {
				keys(t, "trend "+q, m[q].(map[string]any), "median least_squares_per_day mann_kendall sen_slope_per_day sen relative_sen_slope_per_day relative_change")
			}
		}
	}

	rayleighKeys := "alpha beta alpha_ci95 beta_ci95 modes n_hits prototype revision method alpha_sd beta_sd cov_alpha_beta mc_alpha_ci95 mc_beta_ci95 mc_samples unconstrained constraint chi2 dof covariance_scale band_hz minimum_damping_ratio minimum_frequency_hz stiffness_only units warnings cautions excluded excluded_by_hand"
	for _, r := range run("rayleigh", "--db", dbPath, "--prototype", "frame", "--json") {
		keys(t, "rayleigh", r, rayleighKeys)
		for _, m := range objects(t, "rayleigh modes", r["modes"]) {
			keys(t, "rayleigh modes", m, "label frequency_hz damping_ratio fitted_damping_ratio name damping_ratio_sd scatter_sd n inside_scatter")
		}
	}

	for _, x := range run("export", "--db", dbPath, "--prototype", "frame", "--format", "json") {
		keys(t, "export", x, "format prototype revision generated_at tool units modes rayleigh stiffness_only rayleigh_note provenance cautions")
		for _, m := range objects(t, "export modes", x["modes"]) {
			keys(t, "export modes", m, "label name label_source n frequency_hz frequency_ci95 frequency_sd damping_ratio damping_ratio_ci95 damping_ratio_sd geometric_mean geometric_mean_ci95 bootstrap_ci95 fitted_damping_ratio")
		}
		keys(t, "export provenance", x["provenance"].(map[string]any), "hits analysis_versions excluded excluded_by_hand")
		for _, h := range objects(t, "export provenance hits", x["provenance"].(map[string]any)["hits"]) {
			keys(t, "export provenance hits", h, "id sha256 file prototype revision hit_time analysis_version verdict")
		}
	}

	st := run("status", "--db", dbPath, "--json")[0]
	keys(t, "status", st, "database pending files hits verdicts schema daemon_running daemon_pid daemon_since last_hit last_error folders")
}
