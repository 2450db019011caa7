package report

import (
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
)

// TestDescribe uses the classic data set 2, 4, 4, 4, 5, 5, 7, 9 (population
// standard deviation 2, so sample SD 2 sqrt(8/7) = 2.1381; common textbook
// example) and a t table value t(0.975, 7) = 2.365.
func TestDescribe(t *testing.T) {
	s := Describe([]float64{2, 4, 4, 4, 5, 5, 7, 9})
	near(t, "mean", s.Mean, 5, 1e-12)
	near(t, "sd", s.SD, 2*math.Sqrt(8.0/7), 1e-12)
	near(t, "median", s.Median, 4.5, 0)
	near(t, "cv", s.CV, 2*math.Sqrt(8.0/7)/5, 1e-12)
	h := 2.365 * 2 * math.Sqrt(8.0/7) / math.Sqrt(8)
	near(t, "ci low", s.MeanCI95[0], 5-h, 0.0005)
	near(t, "ci high", s.MeanCI95[1], 5+h, 0.0005)
	if !math.IsNaN(s.BootstrapCI95[0]) {
		t.Errorf("bootstrap interval %v for n = 8 < %d", s.BootstrapCI95, BootstrapMinN)
	}
	one := Describe([]float64{3})
	if one.Mean != 3 || !math.IsNaN(one.SD) || !math.IsNaN(one.MeanCI95[0]) {
		t.Errorf("one value: %+v", one)
	}
}

// TestGeometricMean: 1, 10, 100 have geometric mean 10; the logs 0, ln 10,
// 2 ln 10 have SD ln 10, so the interval is 10 exp(-+ t(0.975, 2) ln 10 /
// sqrt 3) with t(0.975, 2) = 4.303 (t table).
func TestGeometricMean(t *testing.T) {
	gm, ci := GeometricMean([]float64{1, 10, 100})
	nearRel(t, "geometric mean", gm, 10, 1e-12)
	h := 4.303 * math.Ln10 / math.Sqrt(3)
	nearRel(t, "ci low", ci[0], 10*math.Exp(-h), 0.002)
	nearRel(t, "ci high", ci[1], 10*math.Exp(h), 0.002)
}

// TestOutliers: median 1.02, absolute deviations' median (MAD) 0.07, so the
// limit is 3 * 1.4826 * 0.07 = 0.311 (hand computed from the definition):
// only 3.0 is an outlier. Equal values (MAD 0) give none.
func TestOutliers(t *testing.T) {
	x := []float64{1.0, 1.1, 0.9, 1.05, 0.95, 1.02, 3.0}
	near(t, "MAD", MAD(x), 0.07, 1e-12)
	got := Outliers(nil, x)
	if len(got) != 1 || got[0] != 6 {
		t.Errorf("outliers %v, want [6]", got)
	}
	// 1.33 is 0.31 from the median: just inside.
	if got := Outliers(nil, []float64{1.0, 1.1, 0.9, 1.05, 0.95, 1.02, 1.33}); len(got) != 0 {
		t.Errorf("outliers %v, want none", got)
	}
	if got := Outliers(nil, []float64{2, 2, 2, 2, 5}); len(got) != 0 {
		t.Errorf("outliers %v with MAD 0, want none", got)
	}
	// The dst convention: appends.
	if got := Outliers([]int{-1}, x); len(got) != 2 || got[0] != -1 {
		t.Errorf("Outliers did not append to dst: %v", got)
	}
}

// TestBootstrapDeterministic: the same values and seed give the same
// interval; for normal data the percentile interval of the mean is close
// to the Student t interval (both estimate the same sampling spread; the
// tolerance is 15 % of the half-width, common practice for 2000 resamples
// of 40 values).
func TestBootstrapDeterministic(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 7))
	x := make([]float64, 40)
	for i := range x {
		x[i] = 0.02 + 0.003*r.NormFloat64()
	}
	a := BootstrapMeanCI(x, 2000, 99)
	b := BootstrapMeanCI(x, 2000, 99)
	if a != b {
		t.Errorf("same seed, different intervals: %v %v", a, b)
	}
	if c := BootstrapMeanCI(x, 2000, 100); c == a {
		t.Errorf("another seed gave the identical interval %v", c)
	}
	s := Describe(x)
	if s.BootstrapCI95 != BootstrapMeanCI(x, BootstrapResamples, BootstrapSeed) {
		t.Error("Describe's bootstrap interval is not the documented one")
	}
	half := (s.MeanCI95[1] - s.MeanCI95[0]) / 2
	near(t, "bootstrap low", s.BootstrapCI95[0], s.MeanCI95[0], 0.15*half)
	near(t, "bootstrap high", s.BootstrapCI95[1], s.MeanCI95[1], 0.15*half)
}

// TestBootstrapLargeSample: beyond BootstrapMaxDraws values the rescaled
// m-out-of-n interval still matches the Student t interval of the mean
// (same tolerance and reasoning as TestBootstrapDeterministic), for normal
// data and, shifted by the skew as the percentile interval is, for
// exponential data.
func TestBootstrapLargeSample(t *testing.T) {
	r := rand.New(rand.NewPCG(8, 8))
	for _, dist := range []string{"normal", "exponential"} {
		x := make([]float64, 20000)
		for i := range x {
			if dist == "normal" {
				x[i] = 0.02 + 0.003*r.NormFloat64()
			} else {
				x[i] = 0.01 * r.ExpFloat64()
			}
		}
		s := Describe(x)
		half := (s.MeanCI95[1] - s.MeanCI95[0]) / 2
		near(t, dist+" bootstrap low", s.BootstrapCI95[0], s.MeanCI95[0], 0.15*half)
		near(t, dist+" bootstrap high", s.BootstrapCI95[1], s.MeanCI95[1], 0.15*half)
	}
}

// TestHitsNeeded: n = 2 (z_0.975 + z_0.8)^2 / d^2 with d = ln(ratio)/sdLog;
// for d = 1 that is 15.7, rounded up to 16 (Lehr's rule of thumb 16/d^2,
// from memory), for d = 0.5 62.8 -> 63.
func TestHitsNeeded(t *testing.T) {
	if n := HitsNeeded(math.Log(1.1), 1.1, 0.05, 0.8); n != 16 {
		t.Errorf("d = 1: %d hits, want 16", n)
	}
	if n := HitsNeeded(2*math.Log(1.1), 1.1, 0.05, 0.8); n != 63 {
		t.Errorf("d = 0.5: %d hits, want 63", n)
	}
}

// twoRevisions makes revisions A and B of one mode at 171 Hz with damping
// ratios za and zb.
func twoRevisions(za, zb []float64) []db.Hit {
	var hits []db.Hit
	id := int64(1)
	for _, c := range []struct {
		rev string
		z   []float64
		f   float64
	}{{"A", za, 171}, {"B", zb, 168}} {
		for i, z := range c.z {
			hits = append(hits, hit(id, c.rev, t0.Add(time.Duration(id)*time.Hour), pipeline.Accepted,
				mode(c.f+0.3*math.Sin(float64(i)), z)))
			id++
		}
	}
	return hits
}

// TestCompareSentences: the ratio and p-value are Welch's test on log zeta
// (checked against scipy in TestWelchScipy); here the sentences say what
// the numbers say.
func TestCompareSentences(t *testing.T) {
	za := []float64{0.0210, 0.0192, 0.0238, 0.0221, 0.0204, 0.0229, 0.0215, 0.0199}
	zb := []float64{0.0262, 0.0251, 0.0293, 0.0244, 0.0270, 0.0281}
	id := Identify(twoRevisions(za, zb), IdentifyOptions{ClusterGap: 0.05})
	cs := Compare(id, "A", "B")
	if len(cs) != 1 {
		t.Fatalf("%d comparisons, want 1: %+v", len(cs), cs)
	}
	c := cs[0]
	w := WelchTest(logs(za), logs(zb))
	nearRel(t, "ratio", c.Ratio, math.Exp(w.Diff), 1e-12)
	if !c.Shown || !strings.Contains(c.Sentence, "Revision B damps mode m1 (") || !strings.Contains(c.Sentence, "% more than A") ||
		!strings.Contains(c.Sentence, "p < 0.001") || !strings.Contains(c.Sentence, "6 hits of B, 8 of A") {
		t.Errorf("sentence %q", c.Sentence)
	}
	if want := "about " + pct(c.Ratio-1) + " % more"; !strings.Contains(c.Sentence, want) {
		t.Errorf("sentence %q lacks %q", c.Sentence, want)
	}
	if !strings.Contains(c.FrequencySentence, "lower in B than in A") {
		t.Errorf("frequency sentence %q", c.FrequencySentence)
	}

	// No difference with few, scattered hits: the sentence gives the hits
	// needed from the pooled SD of log zeta.
	za = []float64{0.020, 0.026, 0.017, 0.023, 0.021, 0.019}
	zb = []float64{0.022, 0.018, 0.025, 0.020, 0.024}
	cs = Compare(Identify(twoRevisions(za, zb), IdentifyOptions{}), "A", "B")
	c = cs[0]
	if c.Shown || c.HitsNeeded != HitsNeeded(c.PooledSDLog, 1.1, 0.05, 0.8) || c.HitsNeeded < 10 {
		t.Fatalf("shown %v, hits needed %d, pooled sd %g", c.Shown, c.HitsNeeded, c.PooledSDLog)
	}
	for _, want := range []string{"No difference in the damping of mode m1", "6 hits of A and 5 of B",
		"about " + strconv.Itoa(c.HitsNeeded) + " hits per revision would be needed to show a 10 % difference", "normal approximation"} {
		if !strings.Contains(c.Sentence, want) {
			t.Errorf("sentence %q lacks %q", c.Sentence, want)
		}
	}

	// One hit on one side: cannot be compared, said so.
	cs = Compare(Identify(twoRevisions([]float64{0.02}, zb), IdentifyOptions{}), "A", "B")
	if len(cs) != 1 || !strings.Contains(cs[0].Sentence, "cannot be compared") || !math.IsNaN(cs[0].Ratio) {
		t.Errorf("%+v", cs)
	}
}

// TestTrendWarning: damping that rises 2 % of its value per day over 20
// days (40 %) is a drift with a warning; the same scatter without the rise
// is not.
func TestTrendWarning(t *testing.T) {
	mk := func(rise float64) []Observation {
		var obs []Observation
		for i := range 20 {
			z := 0.01 * (1 + rise*float64(i)) * (1 + 0.03*math.Sin(float64(5*i)))
			obs = append(obs, Observation{HitID: int64(i), Revision: "A", Time: t0.Add(time.Duration(i) * 24 * time.Hour),
				FrequencyHz: 120, DampingRatio: z, Label: "m1"})
		}
		return obs
	}
	l := ModeLabel{Label: "m1", FrequencyHz: 120}
	tr := TrendOf(l, mk(0.02))
	if !tr.Drift || !strings.Contains(tr.Warning, "damping of m1 (120 Hz) rises") || !strings.Contains(tr.Warning, "a loosening joint or a curing adhesive?") {
		t.Errorf("drift %v warning %q", tr.Drift, tr.Warning)
	}
	near(t, "span days", tr.SpanDays, 19, 1e-9)
	if !(tr.Damping.MannKendall.P < 0.001) || !(tr.Damping.SenSlope > 0) || !(tr.Damping.Linear.SlopeCI95[0] > 0) {
		t.Errorf("trend %+v", tr.Damping)
	}
	flat := TrendOf(l, mk(0))
	if flat.Drift || flat.Warning != "" {
		t.Errorf("no rise, but drift %v %q (MK p %g)", flat.Drift, flat.Warning, flat.Damping.MannKendall.P)
	}
	if few := TrendOf(l, mk(0.02)[:2]); few.Note == "" || few.Drift {
		t.Errorf("two hits: %+v", few)
	}
}

// TestJSONNaN: quantities that cannot be computed are null, nil slices [].
func TestJSONNaN(t *testing.T) {
	b, err := JSON(struct {
		A float64    `json:"a"`
		B [2]float64 `json:"b"`
		C []int      `json:"c"`
		D string     `json:"d,omitempty"`
		Summary
	}{A: math.NaN(), B: [2]float64{1, math.Inf(1)}, Summary: Describe(nil)})
	if err != nil {
		t.Fatal(err)
	}
	want := `{"a":null,"b":[1,null],"c":[],"n":0,"mean":null,"sd":null,"median":null,"min":null,"max":null,"cv":null,"mean_ci95":[null,null],"bootstrap_ci95":[null,null]}`
	if string(b) != want {
		t.Errorf("got  %s\nwant %s", b, want)
	}
}
