package report

import (
	"fmt"
	"math"
	"strings"
	"testing"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/check"
)

// campaign is an invented campaign of revision "A": n hits with modes near
// 52, 171 and 410 Hz, jittered by up to +/- 1 %.
func campaign(n int) []db.Hit {
	var hits []db.Hit
	for i := range n {
		j := 1 + 0.01*math.Sin(float64(7*i+1))
		hits = append(hits, hit(int64(i+1), "A", t0.Add(time.Duration(i)*time.Hour), pipeline.Accepted,
			mode(52*j, 0.012), mode(171/j, 0.008), mode(410*j, 0.006)))
	}
	return hits
}

func labelsOf(id *Identified) []string {
	var out []string
	for _, l := range id.Labels {
		out = append(out, l.Label)
	}
	return out
}

// TestIdentifyClusters: without expected modes the frequencies cluster into
// m1, m2, m3 in frequency order; a stray mode found once is kept as
// unmatched; rejected hits and dropped modes are counted by reason code.
func TestIdentifyClusters(t *testing.T) {
	hits := campaign(10)
	// A stray mode in one hit.
	hits[3].Result.Modes = append(hits[3].Result.Modes, mode(300, 0.02))
	// A dropped mode with its reason.
	hits[4].Result.Modes[2].Dropped = true
	hits[4].Result.Verdict = pipeline.Flagged
	hits[4].Result.Reasons = []pipeline.Reason{{Code: "short_decay", Severity: pipeline.SeverityDrop, Mode: pipeline.ModeRef(2)}}
	// A rejected hit.
	rej := hit(50, "A", t0, pipeline.Rejected, mode(52, 0.5))
	rej.Result.Reasons = []pipeline.Reason{{Code: "clipped", Severity: pipeline.SeverityReject}, {Code: "clipped", Severity: pipeline.SeverityReject}}
	hits = append(hits, rej)

	id := Identify(hits, IdentifyOptions{})
	if got := strings.Join(labelsOf(id), ","); got != "m1,m2,m3" {
		t.Fatalf("labels %s, want m1,m2,m3", got)
	}
	for i, want := range []float64{52, 171, 410} {
		l := id.Labels[i]
		nearRel(t, l.Label+" median", l.FrequencyHz, want, 0.011)
		if l.Source != SourceCluster {
			t.Errorf("%s source %s", l.Label, l.Source)
		}
	}
	if n := len(id.Select("A", "m3")); n != 9 {
		t.Errorf("m3 has %d hits, want 9 (one dropped)", n)
	}
	un := id.Unmatched("A")
	if len(un) != 1 || un[0].FrequencyHz != 300 || un[0].HitID != 4 {
		t.Errorf("unmatched %+v, want the 300 Hz mode of hit 4", un)
	}
	want := map[string]int{"hit/clipped": 1, "mode/short_decay": 1}
	got := map[string]int{}
	for _, e := range id.Excluded["A"] {
		got[e.What+"/"+e.Code] = e.Count
	}
	if len(got) != len(want) || got["hit/clipped"] != 1 || got["mode/short_decay"] != 1 {
		t.Errorf("excluded %v, want %v", got, want)
	}
	if name := id.Labels[1].Name(); !strings.HasPrefix(name, "m2 (17") || !strings.HasSuffix(name, " Hz)") {
		t.Errorf("name %q, want like \"m2 (171 Hz)\"", name)
	}

	// The statistics list the unmatched mode and the exclusions.
	st := Stats(id)
	if len(st) != 1 || len(st[0].Modes) != 3 || len(st[0].Unmatched) != 1 || st[0].HitsSeen != 11 || st[0].HitsUsed != 10 {
		t.Errorf("stats: %d revisions, %+v", len(st), st)
	}
}

// TestIdentifyChain: a few stray modes between two modes, each less than
// the cluster gap from the next, do not merge the two modes into one.
func TestIdentifyChain(t *testing.T) {
	var hits []db.Hit
	strays := []float64{104, 108, 112.5, 117, 121.7}
	for i := range 10 {
		j := 1 + 0.005*math.Sin(float64(3*i+2))
		ms := []pipeline.Mode{mode(100*j, 0.01), mode(125/j, 0.01)}
		if i < len(strays) {
			ms = append(ms, mode(strays[i], 0.01))
		}
		hits = append(hits, hit(int64(i+1), "A", t0, pipeline.Accepted, ms...))
	}
	id := Identify(hits, IdentifyOptions{})
	if got := strings.Join(labelsOf(id), ","); got != "m1,m2" {
		t.Fatalf("labels %s, want m1,m2", got)
	}
	nearRel(t, "m1", id.Labels[0].FrequencyHz, 100, 0.006)
	nearRel(t, "m2", id.Labels[1].FrequencyHz, 125, 0.006)
	if n := len(id.Unmatched("A")); n != len(strays) {
		t.Errorf("%d unmatched, want the %d strays", n, len(strays))
	}
	for _, l := range []string{"m1", "m2"} {
		if n := len(id.Select("A", l)); n != 10 {
			t.Errorf("%s: %d hits, want 10", l, n)
		}
	}
}

// TestIdentifyExpected: configured expected modes label the nearest mode
// within tolerance, once per hit; stored labels win; a mode outside every
// tolerance is unmatched.
func TestIdentifyExpected(t *testing.T) {
	hits := campaign(4)
	// Stored label on hit 1's second mode.
	hits[0].Result.Modes[1].Label = "sway"
	// Two modes near 171 Hz in hit 2: the nearer gets the label.
	hits[1].Result.Modes = append(hits[1].Result.Modes, mode(176, 0.01))
	exp := []Expected{{Label: "bounce", FrequencyHz: 52, Tolerance: 0.05}, {Label: "bend", FrequencyHz: 170}}
	id := Identify(hits, IdentifyOptions{Expected: exp})
	if got := strings.Join(labelsOf(id), ","); got != "bounce,bend,sway" && got != "bounce,sway,bend" {
		t.Fatalf("labels %s", got)
	}
	if o := id.Obs[1]; o.Label != "sway" || o.Source != SourceStored {
		t.Errorf("stored label lost: %+v", o)
	}
	if n := len(id.Select("A", "bend")); n != 3 {
		t.Errorf("bend on %d hits, want 3 (hit 1 keeps its stored label)", n)
	}
	for _, o := range id.Select("A", "bend") {
		if o.FrequencyHz > 175 {
			t.Errorf("the farther mode %g Hz got the label", o.FrequencyHz)
		}
	}
	// 410 Hz is expected nowhere; 176 Hz lost to the nearer mode.
	un := id.Unmatched("A")
	if len(un) != 5 {
		t.Errorf("%d unmatched, want 4 at 410 Hz and the 176 Hz mode: %+v", len(un), un)
	}
	b, _ := id.Label("bend")
	if b.NominalHz != 170 || b.Tolerance != DefaultTolerance || b.Source != SourceConfig {
		t.Errorf("bend: %+v", b)
	}
}

// TestIdentifyWhatCounts: a mode named by a doubting flag, every mode of
// a hit with a doubting flag that names no mode, and every mode of a hit
// excluded by hand are left out and counted by reason; an informing flag
// leaves the values in; WithFlagged counts the doubted modes again but
// never the hits excluded by hand.
func TestIdentifyWhatCounts(t *testing.T) {
	hits := campaign(10)
	flag := func(h *db.Hit, code string, m *int) {
		h.Result.Verdict = pipeline.Flagged
		h.Result.Reasons = append(h.Result.Reasons, pipeline.Reason{Code: code, Severity: pipeline.SeverityFlag, Mode: m})
	}
	flag(&hits[1], check.CodeBeatingModes, pipeline.ModeRef(1)) // doubts mode 1 (m2) only
	flag(&hits[2], check.CodeTransient, nil)                    // doubts every mode of hit 2
	flag(&hits[3], check.CodeModeLimit, nil)                    // informs: all count
	flag(&hits[4], check.CodeAmplitudeDamping, pipeline.ModeRef(0))
	flag(&hits[5], check.CodeEstimatesApart, pipeline.ModeRef(2)) // doubts m3, then beating names it too:
	flag(&hits[5], check.CodeBeatingModes, pipeline.ModeRef(2))   // counted once, under the first
	at := t0.Add(48 * time.Hour)
	hits[6].Excluded = &db.HandExclusion{HitID: hits[6].ID, Why: "sensor cable loose", By: "anna", At: at}

	count := func(id *Identified) map[string]int {
		got := map[string]int{}
		for _, e := range id.Excluded["A"] {
			got[e.What+"/"+e.Code] = e.Count
		}
		return got
	}
	perLabel := func(id *Identified) string {
		return fmt.Sprintf("%d,%d,%d", len(id.Select("A", "m1")), len(id.Select("A", "m2")), len(id.Select("A", "m3")))
	}

	id := Identify(hits, IdentifyOptions{})
	// 10 hits: hit 6 out; m1 loses hit 2; m2 loses hits 1, 2; m3 loses 2, 5.
	if got := perLabel(id); got != "8,7,7" {
		t.Errorf("modes counted per label %s, want 8,7,7", got)
	}
	want := map[string]int{"hit/excluded_by_hand": 1, "mode/beating_modes": 1, "mode/transient_in_decay": 3, "mode/estimates_disagree": 1}
	if got := count(id); fmt.Sprint(got) != fmt.Sprint(want) {
		t.Errorf("left out %v, want %v", got, want)
	}
	if bh := id.ByHand["A"]; len(bh) != 1 || bh[0].HitID != hits[6].ID || bh[0].Why != "sensor cable loose" || bh[0].By != "anna" || !bh[0].At.Equal(at) {
		t.Errorf("by hand: %+v", bh)
	}
	st := Stats(id)
	if st[0].HitsSeen != 10 || st[0].HitsUsed != 8 || len(st[0].ExcludedByHand) != 1 {
		t.Errorf("stats: seen %d, used %d, by hand %+v", st[0].HitsSeen, st[0].HitsUsed, st[0].ExcludedByHand)
	}

	wf := Identify(hits, IdentifyOptions{WithFlagged: true})
	if got := perLabel(wf); got != "9,9,9" {
		t.Errorf("with flagged: modes counted per label %s, want 9,9,9", got)
	}
	if got := count(wf); fmt.Sprint(got) != fmt.Sprint(map[string]int{"hit/excluded_by_hand": 1}) {
		t.Errorf("with flagged: left out %v", got)
	}
}
