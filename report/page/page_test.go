package page

import (
	"bytes"
	"context"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"regexp"
	"runtime"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/plot/plotter"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/read"
	"github.com/ringlog/ringlog/pipeline/synth"
)

// selfContained checks that a page references nothing outside itself:
// no script, no external URL, no embedded font, no src or link other than
// in-page anchors. It returns the problems found.
func selfContained(page string) []string {
	var bad []string
	low := strings.ToLower(page)
	for _, s := range []string{"<script", "http://", "https://", "@import", "@font-face", "url(", "<link", "<iframe", "<object", "<embed", "<img", "javascript:"} {
		if strings.Contains(low, s) {
			bad = append(bad, fmt.Sprintf("contains %q", s))
		}
	}
	// Attributes that load or link, inside real tags (text is escaped, so
	// a "<" always opens a tag).
	for _, m := range regexp.MustCompile(`(?i)<[a-z][^>]*?\s(src|href|xlink:href|srcset|action)\s*=\s*"([^"]*)"`).FindAllStringSubmatch(page, -1) {
		if !strings.EqualFold(m[1], "href") || !strings.HasPrefix(m[2], "#") {
			bad = append(bad, fmt.Sprintf("%s=%q", m[1], m[2]))
		}
	}
	return bad
}

// TestDailyBigDay renders the day of 200 hits of the benchmark and checks
// the contract of the page: under 3 MB, self-contained, no script, the
// counts of the day as the history holds them, every flagged or rejected
// hit listed with its decay plot, unique element ids.
func TestDailyBigDay(t *testing.T) {
	b := theBigDay(t)
	var buf bytes.Buffer
	sum, err := Daily(context.Background(), &buf, b.store, DailyOptions{Day: b.day, Expected: fixtureExpected, Generator: "ringlog test"})
	if err != nil {
		t.Fatal(err)
	}
	page := buf.String()
	const limit = 3 << 20 // the size target for a day of 200 hits
	if buf.Len() >= limit || sum.Bytes != int64(buf.Len()) {
		t.Errorf("page is %d bytes (summary says %d), want under %d", buf.Len(), sum.Bytes, limit)
	}
	t.Logf("a day of %d hits: %d bytes, %d decay plots", sum.Hits, buf.Len(), sum.Plotted)
	for _, p := range selfContained(page) {
		t.Errorf("page is not self-contained: %s", p)
	}
	// The counts as the history holds them, counted here from its rows.
	since, until := DayBounds(b.day)
	hits, err := b.store.Hits(context.Background(), db.Filter{Since: since, Until: until})
	if err != nil {
		t.Fatal(err)
	}
	count := map[pipeline.Verdict]int{}
	for _, h := range hits {
		count[h.Result.Verdict]++
	}
	if sum.Hits != 200 || sum.Hits != len(hits) || sum.Accepted != count[pipeline.Accepted] ||
		sum.Flagged != count[pipeline.Flagged] || sum.Rejected != count[pipeline.Rejected] {
		t.Errorf("summary %+v, history %v of %d hits", sum, count, len(hits))
	}
	spoiled := count[pipeline.Flagged] + count[pipeline.Rejected]
	if spoiled < 20 {
		t.Errorf("only %d flagged or rejected hits: the benchmark day should have about 30", spoiled)
	}
	if sum.Plotted != spoiled || sum.Unplotted != 0 {
		t.Errorf("%d decay plots, %d unplotted, want one for each of the %d flagged or rejected hits", sum.Plotted, sum.Unplotted, spoiled)
	}
	for _, h := range hits {
		if h.Result.Verdict != pipeline.Accepted && !strings.Contains(page, filepath.Base(h.Path)) {
			t.Errorf("%s (%s) is not on the page", filepath.Base(h.Path), h.Result.Verdict)
		}
	}
	// The cautions of DESIGN.md section 8, and a print layout for A4 and
	// Letter alike (margins, no figure split across pages).
	for _, want := range []string{"Wednesday 12 March 2025", ">200<", "sway (38 Hz)", "twist (141 Hz)", "plate (415", // the median of the modes that count
		"Rayleigh coefficients of mixer-frame", "unconservative", "rigid-body motion", "engineer of record", "safety rules",
		"@page{margin:", "@media print{", "figure,.card", "break-inside:avoid"} {
		if !strings.Contains(page, want) {
			t.Errorf("page lacks %q", want)
		}
	}
	// 3 modes x (damping, frequency) + Rayleigh of A and B + the decays
	// + 3 modes' damping against the excitation level.
	if n := strings.Count(page, "<svg"); n != 6+2+sum.Plotted+3 {
		t.Errorf("%d plots, want %d", n, 6+2+sum.Plotted+3)
	}
	if n := strings.Count(page, "Damping against the excitation level"); n != 1 {
		t.Errorf("the damping-against-level section appears %d times, want once (one prototype)", n)
	}
	ids := map[string]int{}
	for _, m := range regexp.MustCompile(`\sid="([^"]*)"`).FindAllStringSubmatch(page, -1) {
		ids[m[1]]++
		if ids[m[1]] == 2 {
			t.Errorf("id %q used twice", m[1])
		}
	}
}

// evilName is a file path that would run a script if it were not
// escaped: "<script>alert(1)<" is a folder (a name cannot hold "/"), and
// evilBase a file name with markup.
const (
	evilName = "<script>alert(1)</script>.csv"
	evilBase = "<img src=x onerror=alert(2)>.csv"
)

// TestEscaping puts markup into a file name, the prototype, the revision
// and the bay, and checks that both pages show it as text, in HTML and in
// the SVG plots.
func TestEscaping(t *testing.T) {
	if runtime.GOOS == "windows" {
		t.Skip("a file name with < and > cannot be created on Windows")
	}
	dir := t.TempDir()
	day := time.Date(2025, 4, 2, 9, 0, 0, 0, time.UTC)
	r := rand.New(rand.NewPCG(1, 2))
	plan := planDay(day, 6, 2, r) // hits 2, 4, 6 spoiled
	plan[1].name = evilName
	plan[1].bay = `bay "9" & <i>co</i>`
	plan[3].name = evilBase
	store := buildHistory(t, dir, "<b>frame</b>", plan)
	defer store.Close()
	var buf bytes.Buffer
	if _, err := Daily(context.Background(), &buf, store, DailyOptions{Day: day, Database: "<db>.sqlite"}); err != nil {
		t.Fatal(err)
	}
	daily := buf.String()
	buf.Reset()
	if _, err := Compare(context.Background(), &buf, store, CompareOptions{Prototype: "<b>frame</b>", RevisionA: "A", RevisionB: "B"}); err != nil {
		t.Fatal(err)
	}
	compare := buf.String()
	for name, page := range map[string]string{"daily": daily, "compare": compare} {
		for _, p := range selfContained(page) {
			t.Errorf("%s page: %s", name, p)
		}
		if strings.Contains(page, "<b>frame") || strings.Contains(page, "<i>co") {
			t.Errorf("%s page: markup from the metadata is not escaped", name)
		}
		if !strings.Contains(page, "&lt;b&gt;frame&lt;/b&gt;") {
			t.Errorf("%s page: the prototype is not shown as text", name)
		}
	}
	// The file path in the path line; the file name as the card's title
	// and in the plot's label.
	if strings.Contains(daily, "<img") || strings.Contains(daily, "<script") {
		t.Error("the file names are not escaped")
	}
	if !strings.Contains(daily, "&lt;script&gt;alert(1)&lt;/script&gt;.csv") {
		t.Error("the path with markup is not shown as text")
	}
	if got := strings.Count(daily, "&lt;img src=x onerror=alert(2)&gt;.csv"); got < 3 {
		t.Errorf("the file name with markup is shown escaped %d times, want at least 3 (title, path, plot label)", got)
	}
	if !strings.Contains(daily, `aria-label="decay of &lt;img src=x onerror=alert(2)&gt;.csv"`) {
		t.Error("the plot's label does not carry the escaped file name")
	}
	if !strings.Contains(daily, "bay &#34;9&#34; &amp; &lt;i&gt;co&lt;/i&gt;") {
		t.Error("the bay is not shown as text")
	}
	if !strings.Contains(daily, "&lt;db&gt;.sqlite") {
		t.Error("the database path is not shown as text")
	}

	// The SVG file of one hit: the file name in its title.
	rec, err := read.File(filepath.Join(dir, evilBase), read.Options{})
	if err != nil {
		t.Fatal(err)
	}
	hits, err := store.Hits(context.Background(), db.Filter{})
	if err != nil {
		t.Fatal(err)
	}
	var res *pipeline.Result
	for _, h := range hits {
		if filepath.Base(h.Path) == evilBase {
			res = h.Result
		}
	}
	if res == nil {
		t.Fatal("the hit of the evil file is not in the history")
	}
	buf.Reset()
	if err := WriteHitSVG(&buf, rec, res); err != nil {
		t.Fatal(err)
	}
	svg := buf.String()
	if strings.Contains(svg, "<img") || !strings.Contains(svg, "&lt;img src=x onerror=alert(2)&gt;.csv") {
		t.Error("the SVG title does not show the file name as text")
	}
	wellFormed(t, svg)
	// The path given on a command line is the title as it is.
	res.File = evilName
	buf.Reset()
	if err := WriteHitSVG(&buf, rec, res); err != nil {
		t.Fatal(err)
	}
	svg = buf.String()
	if strings.Contains(svg, "<script") || !strings.Contains(svg, "&lt;script&gt;alert(1)&lt;/script&gt;.csv") {
		t.Error("the SVG title does not show the path as text")
	}
	wellFormed(t, svg)
}

// wellFormed parses an SVG document as XML to its end.
func wellFormed(t *testing.T, doc string) {
	t.Helper()
	d := xml.NewDecoder(strings.NewReader(doc))
	n := 0
	for {
		_, err := d.Token()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatalf("SVG is not well-formed XML after %d tokens: %v", n, err)
		}
		n++
	}
}

// TestDailyFileGoneOrChanged removes one spoiled hit's file and rewrites
// another: the page names each instead of plotting it.
func TestDailyFileGoneOrChanged(t *testing.T) {
	dir := t.TempDir()
	day := time.Date(2025, 4, 3, 9, 0, 0, 0, time.UTC)
	plan := planDay(day, 6, 2, rand.New(rand.NewPCG(5, 6))) // hits 2, 4, 6 spoiled
	store := buildHistory(t, dir, "frame", plan)
	defer store.Close()
	gone, changed := filepath.Join(dir, plan[1].name), filepath.Join(dir, plan[3].name)
	if err := os.Remove(gone); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(changed, []byte("time [s],accel\n0,1\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	sum, err := Daily(context.Background(), &buf, store, DailyOptions{Day: day})
	if err != nil {
		t.Fatal(err)
	}
	page := buf.String()
	if sum.Unplotted != 2 || sum.Plotted != sum.Flagged+sum.Rejected-2 {
		t.Errorf("%d plotted, %d unplotted of %d flagged and %d rejected; want all but 2 plotted", sum.Plotted, sum.Unplotted, sum.Flagged, sum.Rejected)
	}
	if !strings.Contains(page, "The file is no longer at "+gone) {
		t.Error("the page does not say that a file is gone")
	}
	if !strings.Contains(page, "The file at "+changed+" has changed since it was recorded") {
		t.Error("the page does not say that a file changed")
	}
}

// TestDailyEmptyDay: a day without hits gives a page that says so, with
// the cautions.
func TestDailyEmptyDay(t *testing.T) {
	var buf bytes.Buffer
	sum, err := Daily(context.Background(), &buf, memSource{}, DailyOptions{Day: time.Date(2025, 1, 6, 0, 0, 0, 0, time.UTC)})
	if err != nil {
		t.Fatal(err)
	}
	if sum.Hits != 0 || !strings.Contains(buf.String(), "No hit was recorded on this day.") || !strings.Contains(buf.String(), "engineer of record") {
		t.Errorf("empty day: %+v", sum)
	}
	if _, err := Daily(context.Background(), io.Discard, memSource{}, DailyOptions{}); err == nil {
		t.Error("no day: no error")
	}
}

// TestCompareNoHits: a revision without hits is an error that says which.
func TestCompareNoHits(t *testing.T) {
	b := theBigDay(t)
	_, err := Compare(context.Background(), io.Discard, b.store, CompareOptions{Prototype: "mixer-frame", RevisionA: "A", RevisionB: "C"})
	if !errors.Is(err, ErrNoHits) || !strings.Contains(err.Error(), "revision C") {
		t.Errorf("got %v, want ErrNoHits naming revision C", err)
	}
	_, err = Compare(context.Background(), io.Discard, b.store, CompareOptions{Prototype: "mixer-frame", RevisionA: "A", RevisionB: "A"})
	if err == nil {
		t.Error("the same revision twice: no error")
	}
}

// TestCompareBigDay: the fixture's revision B damps every mode more
// (generator: sway 1.2 -> 1.8 %, twist 0.8 -> 1.0 %, plate 1.5 -> 1.7 %),
// so the page shows a difference for each, with the ratio near the
// generator's.
func TestCompareBigDay(t *testing.T) {
	b := theBigDay(t)
	var buf bytes.Buffer
	sum, err := Compare(context.Background(), &buf, b.store, CompareOptions{Prototype: "mixer-frame", RevisionA: "A", RevisionB: "B", Expected: fixtureExpected("")})
	if err != nil {
		t.Fatal(err)
	}
	page := buf.String()
	if sum.Modes != 3 || sum.Shown != 3 {
		t.Errorf("%d modes compared, %d differ; want 3 and 3", sum.Modes, sum.Shown)
	}
	for _, p := range selfContained(page) {
		t.Errorf("page: %s", p)
	}
	for _, m := range fixtureModes {
		want := fmt.Sprintf("Revision B damps mode %s (", m.label)
		if !strings.Contains(page, want) {
			t.Errorf("page lacks the sentence %q...", want)
		}
	}
	// 3 strip plots and the ratio plot.
	if n := strings.Count(page, "<svg"); n != 4 {
		t.Errorf("%d plots, want 4", n)
	}
	if sum.Bytes != int64(buf.Len()) || buf.Len() > 1<<20 {
		t.Errorf("page of %d bytes (summary %d)", buf.Len(), sum.Bytes)
	}
}

// TestEnvelopeFit checks the amplitude fit behind the envelope on a decay
// of the closed-form generator pipeline/synth with the modes' true
// frequencies and damping ratios: the fitted initial amplitudes are the
// generator's within 1 % and the model follows the noiseless decay.
func TestEnvelopeFit(t *testing.T) {
	modes := []synth.Mode{{FrequencyHz: 40, DampingRatio: 0.02, Amplitude: 1, Phase: 0.3}, {FrequencyHz: 170, DampingRatio: 0.01, Amplitude: 0.4, Phase: 1.1}}
	h := synth.Hit{SampleRate: 2000, Duration: 2, PreTrigger: 0.1, Modes: modes, NoiseSD: 1e-4, Seed: 9}
	x := h.Response()
	rec := &pipeline.Recording{Path: "synth.csv", Channels: []pipeline.Channel{{Name: "accel", Role: pipeline.RoleResponse, SampleRate: 2000, Samples: x}}}
	res := &pipeline.Result{Channel: "accel", OnsetS: 0.1, TriggerS: 0.1}
	for _, m := range modes {
		res.Modes = append(res.Modes, pipeline.Mode{FrequencyHz: m.FrequencyHz, DampingRatio: m.DampingRatio})
	}
	tr, err := newTrace(rec, res)
	if err != nil {
		t.Fatal(err)
	}
	if !tr.fit() {
		t.Fatal("no fit")
	}
	for k, m := range modes {
		amp := math.Hypot(tr.coef[2*k], tr.coef[2*k+1])
		if math.Abs(amp-m.Amplitude) > 0.01*m.Amplitude {
			t.Errorf("mode %d: fitted amplitude %.4f, generator %.4f", k, amp, m.Amplitude)
		}
	}
	// The envelope at the onset is the sum of the amplitudes, and it
	// bounds the model.
	if e := tr.envelope(0.1); math.Abs(e-1.4) > 0.014 {
		t.Errorf("envelope at the onset %.4f, want 1.4", e)
	}
	model := tr.model()
	worst := 0.0
	for i, v := range model {
		worst = math.Max(worst, math.Abs(v-x[tr.onsetIndex()+i]))
		if e := tr.envelope(float64(tr.onsetIndex()+i) / tr.fs); math.Abs(v) > e*1.001+1e-3 {
			t.Fatalf("model %.4f above the envelope %.4f at sample %d", v, e, i)
		}
	}
	if worst > 6e-4 { // 6 noise standard deviations
		t.Errorf("model departs from the record by %.2g, want under 6e-4", worst)
	}
}

// TestEstimateOnset: with a force channel the onset is the end of the
// pulse; without, the response's peak.
func TestEstimateOnset(t *testing.T) {
	h := synth.Hit{SampleRate: 4000, Duration: 1, PreTrigger: 0.2, Modes: []synth.Mode{{FrequencyHz: 50, DampingRatio: 0.02, Amplitude: 1}},
		PulseWidth: 0.002, PulsePeak: 100, Seed: 1}
	force := &pipeline.Channel{Samples: h.Force()}
	trig, onset := estimateOnset(h.Response(), force)
	// The half-sine pulse starts at 0.2 s and lasts 2 ms (8 samples):
	// above 5 % of its peak from sample 800 to about 808.
	if trig < 799 || trig > 801 || onset < 806 || onset > 809 {
		t.Errorf("force: trigger %d, onset %d; want about 800 and 808", trig, onset)
	}
	_, onset = estimateOnset(h.Response(), nil)
	// A 50 Hz sine from 0.2 s peaks a quarter period later (sample 820).
	if onset < 815 || onset > 825 {
		t.Errorf("response only: onset %d, want about 820", onset)
	}
}

// TestMinMax: every column keeps its extremes in time order, so the
// reduced trace has the record's range and a bounded size.
func TestMinMax(t *testing.T) {
	x := make([]float64, 10007)
	for i := range x {
		x[i] = math.Sin(float64(i)*0.37) * math.Exp(-float64(i)/4000)
	}
	xy := minMax(x, 0, 1000, 100)
	if len(xy) != 200 {
		t.Fatalf("%d points, want 200", len(xy))
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for i, p := range xy {
		lo, hi = math.Min(lo, p.Y), math.Max(hi, p.Y)
		if i > 0 && p.X < xy[i-1].X {
			t.Fatalf("point %d goes back in time", i)
		}
	}
	wlo, whi := math.Inf(1), math.Inf(-1)
	for _, v := range x {
		wlo, whi = math.Min(wlo, v), math.Max(whi, v)
	}
	if lo != wlo || hi != whi {
		t.Errorf("range %g..%g, record %g..%g", lo, hi, wlo, whi)
	}
	if short := minMax(x[:50], 1, 10, 100); len(short) != 50 || short[1].X != 1.1 {
		t.Errorf("a short record is not kept whole: %d points", len(short))
	}
}

// TestTimeTicks: ticks fall on round local clock times inside the range.
func TestTimeTicks(t *testing.T) {
	loc := time.FixedZone("lab", 5*3600+1800)
	for _, c := range []struct {
		from, to time.Time
		step     time.Duration
		label    string
	}{
		{time.Date(2025, 3, 12, 7, 41, 0, 0, loc), time.Date(2025, 3, 12, 16, 5, 0, 0, loc), 2 * time.Hour, "08:00"},
		{time.Date(2025, 3, 12, 7, 41, 10, 0, loc), time.Date(2025, 3, 12, 7, 42, 40, 0, loc), 15 * time.Second, "07:41:15"},
		{time.Date(2025, 3, 2, 7, 0, 0, 0, loc), time.Date(2025, 3, 14, 7, 0, 0, 0, loc), 48 * time.Hour, "Mar 4"},
	} {
		ticks := timeTicks{loc: loc}.Ticks(float64(c.from.Unix()), float64(c.to.Unix()))
		if len(ticks) < 3 || len(ticks) > 7 {
			t.Errorf("%v..%v: %d ticks", c.from, c.to, len(ticks))
			continue
		}
		if ticks[0].Label != c.label {
			t.Errorf("%v..%v: first tick %q, want %q", c.from, c.to, ticks[0].Label, c.label)
		}
		for i := 1; i < len(ticks); i++ {
			if d := time.Duration(ticks[i].Value-ticks[i-1].Value) * time.Second; d != c.step {
				t.Errorf("%v..%v: step %v, want %v", c.from, c.to, d, c.step)
			}
		}
	}
}

// TestNiceTicks: steps of 1, 2 or 5 times a power of ten, labels with the
// decimals the step needs.
func TestNiceTicks(t *testing.T) {
	for _, c := range []struct {
		lo, hi float64
		want   string
	}{
		{0, 625, "0 100 200 300 400 500 600"},
		{0.58, 1.04, "0.6 0.7 0.8 0.9 1.0"},
		{-100, 5, "-100 -80 -60 -40 -20 0"},
		{140.2, 142.3, "140.5 141.0 141.5 142.0"},
	} {
		var got []string
		for _, tk := range (niceTicks{n: 5}).Ticks(c.lo, c.hi) {
			got = append(got, tk.Label)
		}
		if strings.Join(got, " ") != c.want {
			t.Errorf("%g..%g: %q, want %q", c.lo, c.hi, strings.Join(got, " "), c.want)
		}
	}
}

// TestDayBounds: a day is midnight to midnight in its location, 23 hours
// on the day clocks go forward (EU rule: last Sunday of March, 01:00 UTC).
func TestDayBounds(t *testing.T) {
	berlin, err := time.LoadLocation("Europe/Berlin")
	if err != nil {
		t.Skip("no time zone database:", err)
	}
	since, until := DayBounds(time.Date(2025, 3, 30, 14, 0, 0, 0, berlin))
	if since.Format(time.RFC3339) != "2025-03-30T00:00:00+01:00" || until.Sub(since) != 23*time.Hour {
		t.Errorf("30 March 2025 in Berlin: %v .. %v", since, until)
	}
}

// TestFormats: the number formats of the pages.
func TestFormats(t *testing.T) {
	for _, c := range []struct{ got, want string }{
		{Pct(0.01234), "1.23"}, {Pct(0.000953), "0.0953"}, {Pct(0.1234), "12.3"}, {Pct(math.NaN()), "–"},
		{PctInterval([2]float64{0.0098, 0.0125}), "0.98 – 1.25"},
		{Hz(46.5012), "46.50"}, {Hz(521.63), "521.6"}, {HzInterval([2]float64{140.92, 141.06}), "140.92 – 141.06"},
		{num(7.77e-6, 3), "7.77×10⁻⁶"}, {num(6.1, 3), "6.10"}, {num(9.9999e-6, 3), "1.00×10⁻⁵"}, {num(0, 3), "0"},
		{plural(1, "hit"), "1 hit"}, {plural(3, "hit"), "3 hits"},
	} {
		if c.got != c.want {
			t.Errorf("got %q, want %q", c.got, c.want)
		}
	}
}

// TestInline: a plot inlined in a page has no prolog, no namespace URI
// and no id, and keeps its size.
func TestInline(t *testing.T) {
	p := newPlot("x", "y")
	l, err := line(plotter.XYs{{X: 0, Y: 0}, {X: 1, Y: 1}}, inkColor, 1)
	if err != nil {
		t.Fatal(err)
	}
	p.Add(l)
	h, err := plotSVG(p, 200, 100, `a "quoted" <label>`)
	if err != nil {
		t.Fatal(err)
	}
	s := string(h)
	if !strings.HasPrefix(s, `<svg class="plot" viewBox="0 0 200 100" width="200pt" height="100pt" style="max-width:240pt" role="img" aria-label="a &#34;quoted&#34; &lt;label&gt;">`) {
		t.Errorf("root element: %.160s", s)
	}
	for _, bad := range []string{"<?xml", "xmlns", "http", " id=", "<!--"} {
		if strings.Contains(s, bad) {
			t.Errorf("inline SVG contains %q", bad)
		}
	}
	if !strings.Contains(s, "font-family:'Liberation Sans',Arial,Helvetica,sans-serif") {
		t.Error("the plot's text has no font fallbacks")
	}
	wellFormed(t, s)
}

// memSource is a history in memory.
type memSource struct{ hits []db.Hit }

func (m memSource) Hits(_ context.Context, f db.Filter) ([]db.Hit, error) {
	var out []db.Hit
	for _, h := range m.hits {
		t := h.Meta.HitTime
		if (f.Prototype == "" || h.Meta.Prototype == f.Prototype) && (f.Since.IsZero() || !t.Before(f.Since)) && (f.Until.IsZero() || t.Before(f.Until)) {
			out = append(out, h)
		}
	}
	return out, nil
}

func (m memSource) StoredFiles(context.Context, db.Filter) ([]db.StoredFile, error) { return nil, nil }

func (m memSource) SupersededBetween(context.Context, time.Time, time.Time) ([]db.SupersededHit, error) {
	return nil, nil
}

func (m memSource) FailedBetween(context.Context, time.Time, time.Time) ([]db.FailedFile, error) {
	return nil, nil
}
