package page

import (
	"context"
	"errors"
	"fmt"
	"hash/fnv"
	"html/template"
	"io"
	"math"
	"slices"
	"sort"
	"strings"
	"time"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/report"
)

// ErrNoHits is returned by Compare when a revision has no hit of the
// prototype.
var ErrNoHits = errors.New("no hits")

// CompareOptions set up a revision report.
type CompareOptions struct {
	Prototype string
	// RevisionA is the reference, RevisionB the revision compared with it.
	RevisionA, RevisionB string
	// Expected are the expected modes of the prototype (configuration);
	// empty lets report.Identify cluster the frequencies.
	Expected []report.Expected
	// Generator and Database are shown in the footer; Now is the time of
	// writing (zero: time.Now()), shown in the location of Now.
	Generator, Database string
	Now                 time.Time
	// WithFlagged counts the modes a doubting flag names too
	// (report.IdentifyOptions.WithFlagged).
	WithFlagged bool
}

// CompareSummary is what Compare reports back.
type CompareSummary struct {
	HitsA, HitsB int
	Modes        int // modes compared
	Shown        int // modes whose damping differs with 95 % confidence
	// LeftOutHits and LeftOutModes count what the statistics of both
	// revisions left out (report.Identify), the page says why.
	LeftOutHits, LeftOutModes int
	Bytes                     int64 // size of the page written
}

// Compare writes the revision report: per mode both revisions' damping
// ratios side by side (every hit, the quartiles and the geometric mean
// with its 95 % interval), the ratio of the geometric means with its
// interval and the sentence of report.Compare, the frequency shift, and
// the cautions. One identification runs over both revisions, so a label
// names the same mode in each.
func Compare(ctx context.Context, w io.Writer, src Source, opt CompareOptions) (CompareSummary, error) {
	a, b := opt.RevisionA, opt.RevisionB
	if a == b {
		return CompareSummary{}, fmt.Errorf("revision report: revisions A and B are both %q", a)
	}
	if opt.Now.IsZero() {
		opt.Now = time.Now()
	}
	all, err := src.Hits(ctx, db.Filter{Prototype: opt.Prototype, ForStats: true})
	if err != nil {
		return CompareSummary{}, err
	}
	var hits []db.Hit
	var sum CompareSummary
	for _, h := range all {
		switch h.Meta.Revision {
		case a:
			sum.HitsA++
			hits = append(hits, h)
		case b:
			sum.HitsB++
			hits = append(hits, h)
		}
	}
	for _, r := range []struct {
		rev string
		n   int
	}{{a, sum.HitsA}, {b, sum.HitsB}} {
		if r.n == 0 {
			return sum, fmt.Errorf("prototype %s, revision %s: %w", orNone(opt.Prototype), orNone(r.rev), ErrNoHits)
		}
	}
	id := report.Identify(hits, report.IdentifyOptions{Expected: opt.Expected, WithFlagged: opt.WithFlagged})
	cs := report.Compare(id, a, b)
	stats := report.Stats(id)
	v := &compareView{
		Title:     fmt.Sprintf("%s: revision %s against %s", orNone(opt.Prototype), orNone(b), orNone(a)),
		Prototype: orNone(opt.Prototype), A: orNone(a), B: orNone(b),
		Generated: opt.Now.Format("2006-01-02 15:04 MST"), Generator: opt.Generator, Database: opt.Database,
		HitsA: sum.HitsA, HitsB: sum.HitsB, Cautions: report.Cautions(),
	}
	for _, rs := range stats {
		switch rs.Revision {
		case a:
			v.UsedA = rs.HitsUsed
		case b:
			v.UsedB = rs.HitsUsed
		}
	}
	v.Excluded = exclusionRows(id, a, b)
	v.ByHand = append(byHandRows(id, a), byHandRows(id, b)...)
	sum.LeftOutHits, sum.LeftOutModes = leftOut(id, []string{a, b}).counts()
	for _, c := range cs {
		m := compareMode{Name: c.Name, Sentence: c.Sentence, FreqSentence: c.FrequencySentence, Shown: c.Shown,
			NA: c.NA, NB: c.NB, GeoA: Pct(c.GeoMeanA), GeoB: Pct(c.GeoMeanB), Ratio: num(c.Ratio, 3),
			RatioCI: interval(c.RatioCI95, 3), P: pValue(c.P), Shift: signedHz(c.FrequencyShift),
			ShiftCI: signedHz(c.FrequencyShiftCI95[0]) + " – " + signedHz(c.FrequencyShiftCI95[1])}
		if c.Shown {
			sum.Shown++
			m.Verdict = "differs"
			if c.Ratio > 1 {
				m.Direction = "more damping in " + orNone(b)
			} else {
				m.Direction = "less damping in " + orNone(b)
			}
		} else if c.NA >= 2 && c.NB >= 2 {
			m.Verdict = "not shown"
			m.Direction = "no difference shown"
		} else {
			m.Verdict = "too few hits"
			m.Direction = "too few hits to compare"
		}
		za, zb := dampings(id.Select(a, c.Label)), dampings(id.Select(b, c.Label))
		_, ciA := report.GeometricMean(za)
		_, ciB := report.GeometricMean(zb)
		m.GeoACI, m.GeoBCI = PctInterval(ciA), PctInterval(ciB)
		if len(za) == 0 {
			m.GeoACI = "–"
		}
		if len(zb) == 0 {
			m.GeoBCI = "–"
		}
		for _, rs := range stats {
			for _, ms := range rs.Modes {
				if ms.Label != c.Label {
					continue
				}
				switch rs.Revision {
				case a:
					m.FreqA = Hz(ms.Frequency.Mean)
				case b:
					m.FreqB = Hz(ms.Frequency.Mean)
				}
			}
		}
		if m.FreqA == "" {
			m.FreqA = "–"
		}
		if m.FreqB == "" {
			m.FreqB = "–"
		}
		plotHTML, note, err := stripPlot(c, za, zb)
		if err != nil {
			m.PlotError = err.Error()
		}
		m.Plot, m.DotsNote = plotHTML, note
		v.Modes = append(v.Modes, m)
	}
	sum.Modes = len(cs)
	v.Shown = sum.Shown
	if len(cs) > 0 {
		fp, err := ratioPlot(cs)
		if err == nil {
			v.RatioPlot = fp
		}
	}
	cw := &countWriter{w: w}
	if err := compareTmpl.Execute(cw, v); err != nil {
		return sum, fmt.Errorf("revision report: %w", err)
	}
	sum.Bytes = cw.n
	return sum, nil
}

type compareView struct {
	Title, Prototype, A, B string
	Generated, Generator   string
	Database               string
	HitsA, HitsB           int
	UsedA, UsedB           int
	Shown                  int
	RatioPlot              template.HTML
	Modes                  []compareMode
	Excluded               []exclusionRow
	ByHand                 []byHandRow
	Cautions               []string
}

type compareMode struct {
	Name, Sentence, FreqSentence string
	Shown                        bool
	Verdict, Direction           string
	NA, NB                       int
	GeoA, GeoACI, GeoB, GeoBCI   string
	Ratio, RatioCI, P            string
	FreqA, FreqB, Shift, ShiftCI string
	Plot                         template.HTML
	PlotError                    string
	DotsNote                     string // how the dots were thinned; "" when every hit is drawn
}

type exclusionRow struct {
	Code, What, Meaning string
	A, B                int
}

// exclusionRows lists what was left out of the statistics of either
// revision, by reason code.
func exclusionRows(id *report.Identified, a, b string) []exclusionRow {
	idx := map[[2]string]int{}
	var rows []exclusionRow
	for k, rev := range []string{a, b} {
		for _, ex := range id.Excluded[rev] {
			key := [2]string{ex.Code, ex.What}
			i, ok := idx[key]
			if !ok {
				i = len(rows)
				idx[key] = i
				rows = append(rows, exclusionRow{Code: ex.Code, What: ex.What, Meaning: codeMeaning(ex.Code)})
			}
			if k == 0 {
				rows[i].A += ex.Count
			} else {
				rows[i].B += ex.Count
			}
		}
	}
	sort.SliceStable(rows, func(i, j int) bool { return rows[i].A+rows[i].B > rows[j].A+rows[j].B })
	return rows
}

func dampings(obs []report.Observation) []float64 {
	out := make([]float64, len(obs))
	for i, o := range obs {
		out[i] = o.DampingRatio
	}
	return out
}

func pValue(p float64) string {
	switch {
	case math.IsNaN(p):
		return "–"
	case p < 0.001:
		return "< 0.001"
	case p < 0.01:
		return fmt.Sprintf("%.3f", p)
	}
	return fmt.Sprintf("%.2f", p)
}

func signedHz(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "–"
	}
	s := Hz(x)
	if x > 0 {
		s = "+" + s
	}
	return s
}

// jitter spreads the points of a strip plot sideways, the same way every
// time for the same hit.
func jitter(i int, v float64) float64 {
	h := fnv.New32a()
	fmt.Fprintf(h, "%d:%g", i, v)
	return (float64(h.Sum32()%1000)/1000 - 0.5) * 0.32
}

// MaxStripDots caps the dots of one revision in a strip plot of the
// revision report: beyond it every k-th hit is drawn, so that a long
// campaign gives a page of a few megabytes, not tens (at 100,000 hits,
// 370,000 dots made a 43 MB page and 2 s of drawing). The box, the median
// and the geometric mean always use every hit.
const MaxStripDots = 1500

// stripPlot draws the damping ratios of one mode for A (left) and B
// (right): every hit as a dot (every k-th beyond MaxStripDots, said in
// note), the quartiles as a box with the median, and beside it the
// geometric mean with its 95 % interval.
func stripPlot(c report.ModeComparison, za, zb []float64) (_ template.HTML, note string, _ error) {
	p := newPlot("", "damping ratio [%]")
	ymin, ymax := math.Inf(1), math.Inf(-1)
	var notes []string
	for k, z := range [][]float64{za, zb} {
		if len(z) == 0 {
			continue
		}
		col := revColor(k)
		x := float64(k)
		s := slices.Clone(z)
		for i := range s {
			s[i] *= 100
		}
		sort.Float64s(s)
		q1 := stat.Quantile(0.25, stat.LinInterp, s, nil)
		q2 := stat.Quantile(0.5, stat.LinInterp, s, nil)
		q3 := stat.Quantile(0.75, stat.LinInterp, s, nil)
		if len(s) >= 4 {
			box, err := plotter.NewPolygon(plotter.XYs{{X: x - 0.22, Y: q1}, {X: x + 0.22, Y: q1}, {X: x + 0.22, Y: q3}, {X: x - 0.22, Y: q3}})
			if err != nil {
				return "", "", err
			}
			box.Color = lighten(col, 0.82)
			box.LineStyle = draw.LineStyle{Color: lighten(col, 0.3), Width: vg.Points(0.7)}
			p.Add(box)
			med, err := line(plotter.XYs{{X: x - 0.22, Y: q2}, {X: x + 0.22, Y: q2}}, col, 1.6)
			if err != nil {
				return "", "", err
			}
			p.Add(med)
		}
		step := 1
		if len(z) > MaxStripDots {
			step = (len(z) + MaxStripDots - 1) / MaxStripDots
			notes = append(notes, fmt.Sprintf("every %d%s of %d hits of %s drawn", step, ordinalSuffix(step), len(z), orNone([]string{c.RevisionA, c.RevisionB}[k])))
		}
		pts := make(plotter.XYs, 0, (len(z)+step-1)/step)
		for i := 0; i < len(z); i += step {
			pts = append(pts, plotter.XY{X: x + jitter(i, z[i]), Y: 100 * z[i]})
		}
		sc, err := plotter.NewScatter(pts)
		if err != nil {
			return "", "", err
		}
		sc.GlyphStyle = draw.GlyphStyle{Color: withAlpha(col, 0.8), Radius: vg.Points(1.9), Shape: draw.CircleGlyph{}}
		p.Add(sc)
		gm, ci := report.GeometricMean(z)
		if !math.IsNaN(ci[0]) {
			bar, err := line(plotter.XYs{{X: x + 0.36, Y: 100 * ci[0]}, {X: x + 0.36, Y: 100 * ci[1]}}, inkColor, 1.4)
			if err != nil {
				return "", "", err
			}
			p.Add(bar)
			ymin, ymax = math.Min(ymin, 100*ci[0]), math.Max(ymax, 100*ci[1])
		}
		g, err := plotter.NewScatter(plotter.XYs{{X: x + 0.36, Y: 100 * gm}})
		if err != nil {
			return "", "", err
		}
		g.GlyphStyle = draw.GlyphStyle{Color: inkColor, Radius: vg.Points(2.8), Shape: draw.BoxGlyph{}}
		p.Add(g)
		ymin, ymax = math.Min(ymin, s[0]), math.Max(ymax, s[len(s)-1])
	}
	if math.IsInf(ymin, 0) {
		return "", "", nil
	}
	p.NominalX(orNone(c.RevisionA), orNone(c.RevisionB))
	p.X.Min, p.X.Max = -0.6, 1.65
	p.Y.Min, p.Y.Max = padRange(ymin, ymax, 0.08, 0.01)
	svg, err := plotSVG(p, 8.5*vg.Centimeter, 6.2*vg.Centimeter, "damping ratio of "+c.Name+" per revision")
	return svg, strings.Join(notes, "; "), err
}

// ratioPlot shows every mode's ratio of geometric-mean damping B/A with
// its 95 % interval against 1 (no change).
func ratioPlot(cs []report.ModeComparison) (template.HTML, error) {
	p := newPlot(fmt.Sprintf("damping ratio %s / %s (geometric means, 95 %% interval)", orNone(cs[0].RevisionB), orNone(cs[0].RevisionA)), "")
	names := make([]string, len(cs))
	lo, hi := 1.0, 1.0
	for i, c := range cs {
		y := float64(len(cs) - 1 - i)
		names[len(cs)-1-i] = c.Label
		if math.IsNaN(c.Ratio) {
			continue
		}
		col := mutedColor
		if c.Shown {
			col = inkColor
		}
		if !math.IsNaN(c.RatioCI95[0]) {
			l, err := line(plotter.XYs{{X: c.RatioCI95[0], Y: y}, {X: c.RatioCI95[1], Y: y}}, col, 2)
			if err != nil {
				return "", err
			}
			p.Add(l)
			lo, hi = math.Min(lo, c.RatioCI95[0]), math.Max(hi, c.RatioCI95[1])
		}
		sc, err := plotter.NewScatter(plotter.XYs{{X: c.Ratio, Y: y}})
		if err != nil {
			return "", err
		}
		sc.GlyphStyle = draw.GlyphStyle{Color: col, Radius: vg.Points(3.2), Shape: draw.BoxGlyph{}}
		p.Add(sc)
	}
	p.Add(vmark{x: 1, color: envColor, width: vg.Points(0.9), dashes: []vg.Length{vg.Points(3), vg.Points(2)}})
	p.NominalY(names...)
	p.Y.Min, p.Y.Max = -0.7, float64(len(cs))-0.3
	p.X.Min, p.X.Max = padRange(lo, hi, 0.08, 0.05)
	h := vg.Length(1.2+0.75*float64(len(cs))) * vg.Centimeter
	return plotSVG(p, 16*vg.Centimeter, h, "ratio of damping per mode")
}
