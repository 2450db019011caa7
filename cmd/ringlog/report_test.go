package main

// End-to-end tests of the history reports (stats, compare, trend, rayleigh,
// export): hits simulated from a structure with known Rayleigh damping,
// ingested through the real pipeline in-process, then reported.

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"math"
	"math/rand/v2"
	"path/filepath"
	"sort"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/mat"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/read"
	"github.com/ringlog/ringlog/pipeline/synth"
)

// chain is a 3-degree-of-freedom spring-mass chain fixed at one end:
// masses m (kg), springs k (N/m), spring i joining mass i-1 (or the ground)
// to mass i. Its damping is C = alpha M + beta K, so every mode's damping
// ratio is exactly alpha/(2 w) + beta w/2 (modal orthogonality; Chopra,
// Dynamics of Structures).
type chain struct {
	m, k        [3]float64
	alpha, beta float64
}

// modes returns the natural frequencies (Hz, ascending) and damping ratios
// of the chain: the eigenvalues w^2 of M^-1/2 K M^-1/2 (gonum EigenSym).
func (c chain) modes(t *testing.T) (f, z [3]float64) {
	t.Helper()
	k := mat.NewSymDense(3, []float64{
		c.k[0] + c.k[1], -c.k[1], 0,
		-c.k[1], c.k[1] + c.k[2], -c.k[2],
		0, -c.k[2], c.k[2],
	})
	a := mat.NewSymDense(3, nil)
	for i := range 3 {
		for j := range 3 {
			a.SetSym(i, j, k.At(i, j)/math.Sqrt(c.m[i]*c.m[j]))
		}
	}
	var es mat.EigenSym
	if !es.Factorize(a, false) {
		t.Fatal("eigen-decomposition failed")
	}
	ev := es.Values(nil)
	sort.Float64s(ev)
	for i, l := range ev {
		w := math.Sqrt(l)
		f[i] = w / (2 * math.Pi)
		z[i] = c.alpha/(2*w) + c.beta*w/2
	}
	return f, z
}

// chainHits writes n hit files of the chain into dir: the three modes'
// free decays from pipeline/synth (the closed-form generator) with
// amplitudes and phases varying from hit to hit, 30 dB peak SNR, a 1 ms
// hammer pulse, 1 s at 2048 Hz, one hour apart from start.
func chainHits(t *testing.T, dir, prefix string, c chain, n int, seed uint64, start time.Time) []string {
	t.Helper()
	f, z := c.modes(t)
	r := rand.New(rand.NewPCG(seed, 99))
	var paths []string
	for i := range n {
		var ms []synth.Mode
		for j, amp := range []float64{10, 6, 4} {
			ms = append(ms, synth.Mode{FrequencyHz: f[j], DampingRatio: z[j], Amplitude: amp * (0.8 + 0.4*r.Float64()), Phase: r.Float64() * 2 * math.Pi})
		}
		const rate, dur, snrDB = 2048, 1.0, 30
		h := synth.Hit{SampleRate: rate, Duration: dur, PreTrigger: 0.02, Modes: ms, NoiseSD: synth.NoiseForSNR(ms, snrDB),
			Seed: seed*1000 + uint64(i), PulseWidth: 0.001, PulsePeak: 200}
		rec := &pipeline.Recording{
			Meta: map[string]string{"hit_time": start.Add(time.Duration(i) * time.Hour).Format(time.RFC3339)},
			Channels: []pipeline.Channel{
				{Name: "force", Unit: "N", Role: pipeline.RoleForce, SampleRate: rate, Samples: h.Force()},
				{Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: rate, Samples: h.Response()},
			},
		}
		var buf bytes.Buffer
		if err := read.WriteCSV(&buf, rec, read.WriteOptions{Digits: 7}); err != nil {
			t.Fatal(err)
		}
		p := filepath.Join(dir, fmt.Sprintf("%s-%02d.csv", prefix, i))
		writeFile(t, p, buf.Bytes())
		paths = append(paths, p)
	}
	return paths
}

func ci95(t *testing.T, m map[string]any, key string) [2]float64 {
	t.Helper()
	v, ok := m[key].([]any)
	if !ok || len(v) != 2 {
		t.Fatalf("%q is %v, want [low, high]", key, m[key])
	}
	return [2]float64{number(t, v[0], key), number(t, v[1], key)}
}

// TestReportsEndToEnd ingests two revisions of a chain with known Rayleigh
// damping and checks every report command against that truth.
func TestReportsEndToEnd(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	dbPath := filepath.Join(dir, "history.db")
	// Revision A: alpha = 4 1/s, beta = 2.5e-5 s. Modes near 38, 105 and
	// 160 Hz with damping ratios of about 1.1 to 1.5 %.
	a := chain{m: [3]float64{1.0, 0.8, 0.6}, k: [3]float64{2.2e5, 1.8e5, 1.5e5}, alpha: 4, beta: 2.5e-5}
	// Revision B: a stiffer, better damped joint (alpha and beta up 40 %).
	b := a
	b.alpha, b.beta = 1.4*a.alpha, 1.4*a.beta
	start := time.Date(2024, 6, 3, 8, 0, 0, 0, time.UTC)
	fa := chainHits(t, dir, "a", a, 14, 1, start)
	fb := chainHits(t, dir, "b", b, 8, 2, start.Add(30*24*time.Hour))
	freqs, zetas := a.modes(t)
	t.Logf("revision A: modes %.2f Hz, damping ratios %.4f", freqs, zetas)

	for _, c := range []struct {
		rev, bay string
		files    []string
	}{{"A", "1", fa}, {"B", "2", fb}} {
		args := append([]string{"ingest", "--db", dbPath, "--prototype", "frame", "--revision", c.rev, "--bay", c.bay, "--quiet"}, c.files...)
		if out, errOut, code := cli(t, args...); code != 0 {
			t.Fatalf("ingest: exit %d: %s %s", code, out, errOut)
		}
	}

	// rayleigh --json: the contract keys, and alpha, beta of revision A
	// inside their 95 % intervals.
	out, errOut, code := cli(t, "rayleigh", "--db", dbPath, "--prototype", "frame", "--revision", "A", "--json")
	if code != 0 {
		t.Fatalf("rayleigh: exit %d: %s", code, errOut)
	}
	lines := jsonLines(t, out)
	if len(lines) != 1 {
		t.Fatalf("rayleigh --json for one revision: %d lines:\n%s", len(lines), out)
	}
	r := lines[0]
	alpha, beta := number(t, r["alpha"], "alpha"), number(t, r["beta"], "beta")
	ac, bc := ci95(t, r, "alpha_ci95"), ci95(t, r, "beta_ci95")
	t.Logf("alpha %.4g [%.4g, %.4g] (true %g), beta %.4g [%.4g, %.4g] (true %g); Monte Carlo %v %v",
		alpha, ac[0], ac[1], a.alpha, beta, bc[0], bc[1], a.beta, r["mc_alpha_ci95"], r["mc_beta_ci95"])
	if !(ac[0] <= a.alpha && a.alpha <= ac[1]) {
		t.Errorf("true alpha %g outside the 95 %% interval [%g, %g] (fit %g)", a.alpha, ac[0], ac[1], alpha)
	}
	if !(bc[0] <= a.beta && a.beta <= bc[1]) {
		t.Errorf("true beta %g outside the 95 %% interval [%g, %g] (fit %g)", a.beta, bc[0], bc[1], beta)
	}
	if n := number(t, r["n_hits"], "n_hits"); n < 12 || n > 14 {
		t.Errorf("n_hits %g, want the 14 hits of A (a few may be rejected)", n)
	}
	modes, _ := r["modes"].([]any)
	if len(modes) != 3 {
		t.Fatalf("modes %v, want 3", r["modes"])
	}
	for i, x := range modes {
		m := x.(map[string]any)
		if _, ok := m["label"].(string); !ok {
			t.Errorf("mode %d has no label: %v", i, m)
		}
		f := number(t, m["frequency_hz"], "frequency_hz")
		z := number(t, m["damping_ratio"], "damping_ratio")
		fz := number(t, m["fitted_damping_ratio"], "fitted_damping_ratio")
		// The chain's own modes, found again through the pipeline: the
		// frequency to 0.5 %, the damping to 10 % (common practice for
		// impact-test damping with 40 dB noise).
		if math.Abs(f-freqs[i]) > 0.005*freqs[i] || math.Abs(z-zetas[i]) > 0.1*zetas[i] || math.Abs(fz-zetas[i]) > 0.1*zetas[i] {
			t.Errorf("mode %d: %.3f Hz zeta %.5f fitted %.5f; the chain has %.3f Hz zeta %.5f", i, f, z, fz, freqs[i], zetas[i])
		}
	}
	cautions, _ := r["cautions"].([]any)
	joined := fmt.Sprint(cautions...)
	for _, want := range []string{"unconservative", "rigid-body motion", "stiffness-only", "engineer of record"} {
		if !strings.Contains(joined, want) {
			t.Errorf("cautions lack %q: %v", want, cautions)
		}
	}
	if so, ok := r["stiffness_only"].(map[string]any); !ok || number(t, so["alpha"], "stiffness-only alpha") != 0 {
		t.Errorf("stiffness_only %v, want a fit with alpha 0", r["stiffness_only"])
	}
	if band := ci95(t, r, "band_hz"); !(band[0] <= freqs[0]*1.01 && band[1] >= freqs[2]*0.99) {
		t.Errorf("band %v: the true Rayleigh curve fits every mode, the band should span %.1f to %.1f Hz", band, freqs[0], freqs[2])
	}

	// --stiffness-only and --modes.
	out, errOut, code = cli(t, "rayleigh", "--db", dbPath, "--prototype", "frame", "--revision", "A", "--modes", "m1,m3", "--stiffness-only", "--json")
	if code != 0 {
		t.Fatalf("rayleigh --stiffness-only: exit %d: %s", code, errOut)
	}
	so := jsonLines(t, out)[0]
	if number(t, so["alpha"], "alpha") != 0 || so["method"] != "stiffness_only" || len(so["modes"].([]any)) != 2 {
		t.Errorf("stiffness-only over m1, m3: %v", so)
	}
	if _, errOut, code = cli(t, "rayleigh", "--db", dbPath, "--prototype", "frame", "--modes", "m9"); code != exitUsage || !strings.Contains(errOut, "m1 (") {
		t.Errorf("unknown mode label: exit %d, %q; want 2 and the modes listed", code, errOut)
	}
	// The readable table carries the cautions too.
	if out, _, code = cli(t, "rayleigh", "--db", dbPath, "--prototype", "frame", "--revision", "A"); code != 0 || !strings.Contains(out, "rigid-body") || !strings.Contains(out, "alpha =") {
		t.Errorf("rayleigh table: exit %d\n%s", code, out)
	}

	// stats --json: one object per revision, three modes each.
	out, errOut, code = cli(t, "stats", "--db", dbPath, "--prototype", "frame", "--json")
	if code != 0 {
		t.Fatalf("stats: exit %d: %s", code, errOut)
	}
	st := jsonLines(t, out)
	if len(st) != 2 || st[0]["revision"] != "A" || st[1]["revision"] != "B" {
		t.Fatalf("stats --json: %d lines", len(st))
	}
	for _, s := range st {
		ms, _ := s["modes"].([]any)
		if len(ms) != 3 {
			t.Errorf("revision %v: %d modes, want 3", s["revision"], len(ms))
		}
		for _, x := range ms {
			m := x.(map[string]any)
			d := m["damping_ratio"].(map[string]any)
			n := number(t, d["n"], "n")
			bci := d["bootstrap_ci95"].([]any)
			if (n >= 10) != (bci[0] != nil) {
				t.Errorf("mode %v: n %g but bootstrap interval %v", m["label"], n, bci)
			}
		}
	}
	if _, errOut, code = cli(t, "stats", "--db", dbPath, "--prototype", "nosuch"); code != 0 || !strings.Contains(errOut, "no hits match") {
		t.Errorf("stats of an unknown prototype: exit %d, %q", code, errOut)
	}
	out, _, code = cli(t, "stats", "--db", dbPath, "--prototype", "frame", "--mode", "m2", "--csv")
	rows, err := csv.NewReader(strings.NewReader(out)).ReadAll()
	if code != 0 || err != nil || len(rows) != 3 || rows[1][2] != "m2" || rows[0][6] != "damping_ratio_mean" {
		t.Errorf("stats --mode m2 --csv: exit %d, %v:\n%s", code, err, out)
	}
	// The shared filter: two --mode and two --revision keep both; --bay
	// (every hit of revision A is at bay 1, of B at bay 2) and --since
	// select hits.
	out, _, code = cli(t, "stats", "--db", dbPath, "--prototype", "frame", "--mode", "m1", "--mode", "m3", "--revision", "A", "--revision", "B", "--csv")
	rows, err = csv.NewReader(strings.NewReader(out)).ReadAll()
	if code != 0 || err != nil || len(rows) != 5 || rows[1][1] != "A" || rows[1][2] != "m1" || rows[2][2] != "m3" || rows[4][1] != "B" {
		t.Errorf("stats with two --mode and two --revision: exit %d, %v:\n%s", code, err, out)
	}
	for _, c := range []struct {
		args []string
		revs string // revisions of the rows, in order
	}{
		{[]string{"--bay", "2"}, "BBB"},
		{[]string{"--since", start.Add(20 * 24 * time.Hour).Format(time.RFC3339)}, "BBB"},
		{[]string{"--until", start.Add(20 * 24 * time.Hour).Format(time.RFC3339)}, "AAA"},
		{[]string{"--bay", "1", "--revision", "B"}, ""},
	} {
		args := append([]string{"stats", "--db", dbPath, "--prototype", "frame", "--csv"}, c.args...)
		out, errOut, code := cli(t, args...)
		rows, _ := csv.NewReader(strings.NewReader(out)).ReadAll()
		got := ""
		for _, r := range rows[min(1, len(rows)):] {
			got += r[1]
		}
		if code != 0 || got != c.revs || (c.revs == "" && !strings.Contains(errOut, "no hits match")) {
			t.Errorf("stats %v: exit %d, revisions %q, want %q\n%s%s", c.args, code, got, c.revs, out, errOut)
		}
	}

	// compare: B is damped more than A; the ratio of geometric means
	// should be near the true 1.4 at each mode and its interval hold it.
	out, errOut, code = cli(t, "compare", "--db", dbPath, "--prototype", "frame", "--revision", "A", "--revision", "B", "--json")
	if code != 0 {
		t.Fatalf("compare: exit %d: %s", code, errOut)
	}
	cmp := jsonLines(t, out)[0]
	cms, _ := cmp["modes"].([]any)
	if len(cms) != 3 {
		t.Fatalf("compare: %d modes: %s", len(cms), out)
	}
	for _, x := range cms {
		c := x.(map[string]any)
		ratio := number(t, c["damping_ratio_ratio"], "ratio")
		rc := ci95(t, c, "damping_ratio_ratio_ci95")
		s, _ := c["sentence"].(string)
		if !(rc[0] <= 1.4 && 1.4 <= rc[1]) || !strings.Contains(s, "Revision B damps mode") || !strings.Contains(s, "more than A") {
			t.Errorf("mode %v: ratio %.3f [%.3f, %.3f] (true 1.4): %q", c["label"], ratio, rc[0], rc[1], s)
		}
	}
	if _, _, code = cli(t, "compare", "--db", dbPath, "--prototype", "frame", "--revision", "A"); code != exitUsage {
		t.Errorf("compare with one revision: exit %d, want 2", code)
	}

	// trend: the damping of A does not drift; no warning.
	out, errOut, code = cli(t, "trend", "--db", dbPath, "--prototype", "frame", "--revision", "A", "--json")
	if code != 0 {
		t.Fatalf("trend: exit %d: %s", code, errOut)
	}
	tr := jsonLines(t, out)[0]
	if w, _ := tr["warnings"].([]any); len(w) != 0 {
		t.Errorf("trend warns of drift where there is none: %v", w)
	}
	if tm, _ := tr["modes"].([]any); len(tm) != 3 || number(t, tm[0].(map[string]any)["span_days"], "span_days") < 0.5 {
		t.Errorf("trend modes: %v", tr["modes"])
	}
	// Every revision, one block each.
	if _, errOut, code = cli(t, "trend", "--db", dbPath, "--prototype", "frame"); code != 0 {
		t.Errorf("trend over every revision: exit %d %s", code, errOut)
	}

	// export: CSV with the comment header and coefficient rows, JSON
	// with provenance.
	out, errOut, code = cli(t, "export", "--db", dbPath, "--prototype", "frame", "--revision", "A", "--format", "csv", "--with-provenance")
	if code != 0 {
		t.Fatalf("export csv: exit %d: %s", code, errOut)
	}
	for _, want := range []string{"# format: ringlog-damping-export 1", "# caution: ", "rigid-body", "sha256", "\nA,rayleigh_alpha,alpha,1/s,", "\nA,rayleigh_beta,beta,s,", "\nA,stiffness_only_beta,beta,s,"} {
		if !strings.Contains(out, want) {
			t.Errorf("export csv lacks %q:\n%s", want, tail(out, 3000))
		}
	}
	cr := csv.NewReader(strings.NewReader(out))
	cr.Comment = '#'
	if rows, err := cr.ReadAll(); err != nil || len(rows) != 1+3+3 {
		t.Errorf("export csv: %d rows, %v; want header, 3 modes, 3 coefficients", len(rows), err)
	}
	out, errOut, code = cli(t, "export", "--db", dbPath, "--prototype", "frame", "--format", "json")
	if code != 0 {
		t.Fatalf("export json: exit %d: %s", code, errOut)
	}
	exs := jsonLines(t, out)
	if len(exs) != 2 {
		t.Fatalf("export json: %d lines, want one per revision", len(exs))
	}
	prov := exs[0]["provenance"].(map[string]any)
	hits, _ := prov["hits"].([]any)
	vers, _ := prov["analysis_versions"].([]any)
	if len(hits) < 12 || len(vers) != 1 || vers[0] != pipeline.AnalysisVersion {
		t.Errorf("provenance: %d hits, versions %v", len(hits), vers)
	}
	if ray, ok := exs[0]["rayleigh"].(map[string]any); !ok || number(t, ray["alpha"], "alpha") != alpha {
		t.Errorf("export rayleigh %v, want the same alpha %g as 'rayleigh'", exs[0]["rayleigh"], alpha)
	}
	if _, _, code = cli(t, "export", "--db", dbPath, "--prototype", "frame", "--format", "xml"); code != exitUsage {
		t.Errorf("export --format xml: exit %d, want 2", code)
	}

	// --config: the database and the expected modes of the prototype; the
	// third expected mode is 20 % off, so the 130 Hz mode is unmatched.
	cfg := filepath.Join(dir, "ringlog.toml")
	writeFile(t, cfg, []byte(fmt.Sprintf(`database = %q

[[prototype]]
name = "frame"

[[prototype.mode]]
label = "bounce"
frequency_hz = %.1f
tolerance = 0.05

[[prototype.mode]]
label = "sway"
frequency_hz = %.1f

[[prototype.mode]]
label = "twist"
frequency_hz = %.1f
tolerance = 0.05
`, dbPath, freqs[0], freqs[1], 1.2*freqs[2])))
	out, errOut, code = cli(t, "stats", "--config", cfg, "--prototype", "frame", "--revision", "A", "--json")
	if code != 0 {
		t.Fatalf("stats --config: exit %d: %s", code, errOut)
	}
	s := jsonLines(t, out)[0]
	var labels []string
	for _, x := range s["modes"].([]any) {
		m := x.(map[string]any)
		labels = append(labels, m["label"].(string))
		if m["label_source"] != "config" {
			t.Errorf("mode %v: label source %v, want config", m["label"], m["label_source"])
		}
	}
	if strings.Join(labels, ",") != "bounce,sway" {
		t.Errorf("labels %v, want bounce,sway", labels)
	}
	if un, _ := s["unmatched"].([]any); len(un) < 12 {
		t.Errorf("%d unmatched modes, want the 130 Hz mode of every hit kept as unmatched", len(un))
	}
	if out, _, code = cli(t, "stats", "--config", cfg, "--prototype", "frame", "--revision", "A"); code != 0 || !strings.Contains(out, "unmatched mode(s)") {
		t.Errorf("stats table does not list the unmatched modes (exit %d):\n%s", code, out)
	}
}

// TestReportUsage: the report commands' command-line errors exit 2, a
// missing database exits 1.
func TestReportUsage(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	missing := filepath.Join(dir, "none.db")
	for _, c := range []struct {
		args []string
		code int
	}{
		{[]string{"stats", "--db", missing}, exitUsage},
		{[]string{"stats", "--prototype", "p"}, exitUsage},
		{[]string{"stats", "--db", missing, "--prototype", "p", "--json", "--csv"}, exitUsage},
		{[]string{"stats", "--db", missing, "--prototype", "p", "--since", "yesterday"}, exitUsage},
		{[]string{"stats", "--db", missing, "--prototype", "p"}, exitFailure},
		{[]string{"compare", "--db", missing, "--prototype", "p", "--revision", "A", "--revision", "A"}, exitUsage},
		{[]string{"trend", "--db", missing, "--prototype", "p", "extra"}, exitUsage},
		{[]string{"rayleigh", "--db", missing, "--prototype", "p"}, exitFailure},
		{[]string{"export", "--db", missing, "--prototype", "p"}, exitUsage},
	} {
		if _, errOut, code := cli(t, c.args...); code != c.code {
			t.Errorf("%q: exit %d, want %d (%s)", c.args, code, c.code, errOut)
		}
	}
}
