package report

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"math"
	"strings"
	"testing"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
)

// rayleighCampaign is an invented campaign of revision "A" whose three
// modes have the damping of alpha = 3 1/s, beta = 4e-5 s, scattered by
// +/- 3 %.
func rayleighCampaign(n int) []db.Hit {
	var hits []db.Hit
	for i := range n {
		var ms []pipeline.Mode
		for k, f := range []float64{48, 133, 262} {
			z := RayleighDamping(3, 4e-5, 2*math.Pi*f) * (1 + 0.03*math.Sin(float64(5*i+k)))
			ms = append(ms, mode(f*(1+0.002*math.Cos(float64(i+k))), z))
		}
		hits = append(hits, hit(int64(i+1), "A", t0.Add(time.Duration(i)*time.Hour), pipeline.Accepted, ms...))
	}
	return hits
}

// TestExport: the CSV reads back as a table after its "# " header, with
// a row per mode and per coefficient; the JSON carries the provenance.
func TestExport(t *testing.T) {
	hits := rayleighCampaign(12)
	rej := hit(99, "A", t0, pipeline.Rejected)
	rej.Result.Reasons = []pipeline.Reason{{Code: "double_strike", Severity: pipeline.SeverityReject}}
	hits = append(hits, rej)
	st := Stats(Identify(hits, IdentifyOptions{}))
	ex := BuildExport(st[0], ExportOptions{Tool: "ringlog test", GeneratedAt: t0})
	if ex.Rayleigh == nil || ex.StiffnessOnly == nil || ex.RayleighNote != "" {
		t.Fatalf("no fit: %q", ex.RayleighNote)
	}
	// The invented scatter is symmetric about the curve: the fit lands
	// near the coefficients the campaign was made from (within 10 %).
	nearRel(t, "alpha", ex.Rayleigh.Alpha, 3, 0.1)
	nearRel(t, "beta", ex.Rayleigh.Beta, 4e-5, 0.1)
	if len(ex.Provenance.Hits) != 12 || len(ex.Provenance.AnalysisVersions) != 1 || len(ex.Provenance.Excluded) != 1 {
		t.Errorf("provenance %+v", ex.Provenance)
	}

	var buf bytes.Buffer
	if err := WriteExportCSV(&buf, []Export{ex}, ExportCSVOptions{WithProvenance: true}); err != nil {
		t.Fatal(err)
	}
	text := buf.String()
	for _, want := range []string{"# format: " + ExportFormat, "# tool: ringlog test", "# caution: Mass-proportional damping",
		"excluded 1 hit(s): double_strike", "# revision A hit: id 1 sha256 " + hits[0].SHA256} {
		if !strings.Contains(text, want) {
			t.Errorf("CSV lacks %q", want)
		}
	}
	r := csv.NewReader(strings.NewReader(text))
	r.Comment = '#'
	rows, err := r.ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != 1+3+3 || strings.Join(rows[0], ",") != strings.Join(ExportCSVHeader, ",") {
		t.Fatalf("%d rows, header %v", len(rows), rows[0])
	}
	if rows[4][1] != "rayleigh_alpha" || rows[4][3] != "1/s" || rows[5][1] != "rayleigh_beta" || rows[5][3] != "s" || rows[6][1] != "stiffness_only_beta" {
		t.Errorf("coefficient rows %v", rows[4:])
	}

	buf.Reset()
	if err := WriteExportJSON(&buf, []Export{ex}); err != nil {
		t.Fatal(err)
	}
	var back map[string]any
	if err := json.Unmarshal(buf.Bytes(), &back); err != nil {
		t.Fatalf("%v: %s", err, buf.String())
	}
	for _, k := range []string{"format", "prototype", "revision", "units", "modes", "rayleigh", "stiffness_only", "provenance", "cautions"} {
		if _, ok := back[k]; !ok {
			t.Errorf("export JSON lacks %q", k)
		}
	}

	// One mode only: no Rayleigh fit, said so, the stiffness-only fit given.
	one := Stats(Identify(campaign(5)[:0], IdentifyOptions{}))
	if len(one) != 0 {
		t.Fatalf("no hits gave %d revisions", len(one))
	}
	var single []db.Hit
	for i := range 4 {
		single = append(single, hit(int64(i+1), "A", t0, pipeline.Accepted, mode(80+float64(i)*0.1, 0.01)))
	}
	ex = BuildExport(Stats(Identify(single, IdentifyOptions{}))[0], ExportOptions{})
	if ex.Rayleigh != nil || ex.StiffnessOnly == nil || !strings.Contains(ex.RayleighNote, "one mode") {
		t.Errorf("one mode: rayleigh %v note %q", ex.Rayleigh, ex.RayleighNote)
	}
}

// TestJSONOutputs: every report the commands print encodes (no key twice,
// NaN as null) and parses back.
func TestJSONOutputs(t *testing.T) {
	hits := rayleighCampaign(12)
	for i := range 6 {
		h := hit(int64(100+i), "B", t0.Add(48*time.Hour), pipeline.Accepted, mode(48, 0.02), mode(133, 0.02))
		hits = append(hits, h)
	}
	id := Identify(hits, IdentifyOptions{})
	st := Stats(id)
	rep, err := RayleighFor(st[0], nil, RayleighOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for name, v := range map[string]any{
		"stats": st[0], "compare": Compare(id, "A", "B"), "trend": Trends(id)[0], "rayleigh": rep,
		"export": BuildExport(st[1], ExportOptions{}),
	} {
		b, err := JSON(v)
		if err != nil {
			t.Errorf("%s: %v", name, err)
			continue
		}
		var back any
		if err := json.Unmarshal(b, &back); err != nil {
			t.Errorf("%s: %v", name, err)
		}
	}
	b, _ := JSON(rep)
	var r map[string]any
	json.Unmarshal(b, &r)
	for _, k := range []string{"alpha", "beta", "alpha_ci95", "beta_ci95", "modes", "n_hits", "cautions", "stiffness_only", "band_hz", "mc_alpha_ci95", "mc_beta_ci95"} {
		if _, ok := r[k]; !ok {
			t.Errorf("rayleigh JSON lacks %q", k)
		}
	}
	m := r["modes"].([]any)[0].(map[string]any)
	for _, k := range []string{"label", "frequency_hz", "damping_ratio", "fitted_damping_ratio"} {
		if _, ok := m[k]; !ok {
			t.Errorf("rayleigh JSON mode lacks %q", k)
		}
	}
}

// TestSafeCSVCell: the cells a spreadsheet would evaluate get a leading
// single quote, plain numbers (negative ones too) do not (the OWASP advice
// on CSV injection: prefix cells beginning with =, +, -, @, tab or
// carriage return with a single quote).
func TestSafeCSVCell(t *testing.T) {
	for in, want := range map[string]string{
		"=cmd|' /C calc'!A0": "'=cmd|' /C calc'!A0",
		"+1+2":               "'+1+2",
		"-2+3":               "'-2+3",
		"@SUM(A1:A2)":        "'@SUM(A1:A2)",
		"\t=1":               "'\t=1",
		"\r=1":               "'\r=1",
		"-inf":               "'-inf",
		"-0x1p3":             "'-0x1p3",
		"-0.0125":            "-0.0125",
		"+3":                 "+3",
		"-1e-05":             "-1e-05",
		"-0,5":               "-0,5",
		"frame, rev 2":       "frame, rev 2",
		"":                   "",
		"a=b":                "a=b",
	} {
		if got := SafeCSVCell(in); got != want {
			t.Errorf("SafeCSVCell(%q) = %q, want %q", in, got, want)
		}
	}
	var buf bytes.Buffer
	cw := NewCSVWriter(&buf, CSVOptions{DecimalComma: true})
	cw.Write([]string{"=a;b", cw.Num(-0.25), cw.Num(math.NaN()), cw.Num(1234567)})
	if err := cw.Flush(); err != nil {
		t.Fatal(err)
	}
	if got, want := buf.String(), "\"'=a;b\";-0,25;;1,23457e+06\n"; got != want {
		t.Errorf("decimal comma row %q, want %q", got, want)
	}
}
