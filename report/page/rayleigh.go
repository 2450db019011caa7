package page

import (
	"errors"
	"fmt"
	"html/template"
	"math"

	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"github.com/ringlog/ringlog/report"
)

// rayleighView is the Rayleigh fit of one revision on the daily page.
type rayleighView struct {
	Revision, Class      string
	Error                string
	Method               string
	Alpha, AlphaCI       string
	Beta, BetaCI         string
	BetaOnly, BetaOnlyCI string
	Band                 string
	NHits                int
	Notes                []string
	Rows                 []rayleighRow
	Plot                 template.HTML
}

type rayleighRow struct {
	Name, Freq           string
	Measured, MeasuredCI string
	Fitted, FittedStiff  string
	Inside               bool
	InsideText           string
}

var methodNames = map[string]string{
	report.MethodClosedForm:    "closed form, two modes",
	report.MethodWeightedLS:    "weighted least squares",
	report.MethodStiffnessOnly: "stiffness only (alpha = 0)",
}

// rayleighOf fits the modes of one revision's statistics.
func rayleighOf(rs report.RevisionStats, class string, ri int) rayleighView {
	v := rayleighView{Revision: orNone(rs.Revision), Class: class}
	rep, err := report.RayleighFor(rs, nil, report.RayleighOptions{})
	if err != nil {
		if errors.Is(err, report.ErrNoModes) {
			v.Error = fmt.Sprintf("No Rayleigh fit: it needs at least two modes with statistics, and revision %s has %d.", orNone(rs.Revision), len(rs.Modes))
		} else {
			v.Error = "No Rayleigh fit: " + err.Error()
		}
		return v
	}
	f := rep.RayleighFit
	v.Method = methodNames[f.Method]
	if v.Method == "" {
		v.Method = f.Method
	}
	v.NHits = rep.NHits
	v.Alpha, v.AlphaCI = num(f.Alpha, 3), interval(f.AlphaCI95, 3)
	v.Beta, v.BetaCI = num(f.Beta, 3), interval(f.BetaCI95, 3)
	if so := rep.StiffnessOnly; so != nil {
		v.BetaOnly, v.BetaOnlyCI = num(so.Beta, 3), interval(so.BetaCI95, 3)
	}
	if math.IsNaN(f.BandHz[0]) {
		v.Band = "none: the curve misses the scatter of every mode"
	} else {
		v.Band = Hz(f.BandHz[0]) + " – " + Hz(f.BandHz[1]) + " Hz"
	}
	if f.Constraint != "" {
		v.Notes = append(v.Notes, f.Constraint)
	}
	if f.Scale > 1 {
		v.Notes = append(v.Notes, fmt.Sprintf("The modes scatter about the curve more than their uncertainties allow (chi-square %.3g on %d degrees of freedom): the intervals are widened by that factor.", f.Chi2, f.DOF))
	}
	for _, m := range f.Modes {
		row := rayleighRow{Name: m.Label, Freq: Hz(m.FrequencyHz), Measured: Pct(m.Damping),
			MeasuredCI: PctInterval([2]float64{m.Damping - 1.96*m.SD, m.Damping + 1.96*m.SD}),
			Fitted:     Pct(m.Fitted), Inside: m.Inside}
		if rep.StiffnessOnly != nil {
			row.FittedStiff = Pct(rep.StiffnessOnly.Curve(m.FrequencyHz))
		}
		row.InsideText = "yes"
		if !m.Inside {
			row.InsideText = "no"
		}
		v.Rows = append(v.Rows, row)
	}
	p, err := rayleighPlot(rep, ri)
	if err != nil {
		v.Notes = append(v.Notes, "The plot could not be drawn: "+err.Error())
	} else {
		v.Plot = p
	}
	return v
}

// rayleighPlot draws the measured modes (mean with its 95 % interval),
// the Rayleigh curve and the stiffness-only curve, over the band shaded.
func rayleighPlot(rep report.RayleighReport, ri int) (template.HTML, error) {
	f := rep.RayleighFit
	p := newPlot("frequency [Hz]", "damping ratio [%]")
	fmax, zmax := 0.0, 0.0
	for _, m := range f.Modes {
		fmax = math.Max(fmax, m.FrequencyHz)
		zmax = math.Max(zmax, 100*(m.Damping+1.96*m.SD))
	}
	x0, x1 := 0.0, 1.25*fmax
	y1 := 1.35 * zmax
	if !math.IsNaN(f.BandHz[0]) {
		b, err := hband(f.BandHz[0], f.BandHz[1], 0, y1, withAlpha(gridColor, 0.8))
		if err != nil {
			return "", err
		}
		p.Add(b)
	}
	c := revColor(ri)
	curve := func(fit *report.RayleighFit, dashes ...float64) error {
		var xy plotter.XYs
		for i := 1; i <= 200; i++ {
			fr := x1 * float64(i) / 200
			z := 100 * fit.Curve(fr)
			if z > 2*y1 {
				continue
			}
			xy = append(xy, plotter.XY{X: fr, Y: math.Min(z, 1.5*y1)})
		}
		if len(xy) < 2 {
			return nil
		}
		l, err := line(xy, c, 1.1, dashes...)
		if err != nil {
			return err
		}
		p.Add(l)
		return nil
	}
	if err := curve(&f); err != nil {
		return "", err
	}
	if so := rep.StiffnessOnly; so != nil && f.Method != report.MethodStiffnessOnly {
		if err := curve(so, 3, 2); err != nil {
			return "", err
		}
	}
	var pts plotter.XYs
	for _, m := range f.Modes {
		lo, hi := 100*(m.Damping-1.96*m.SD), 100*(m.Damping+1.96*m.SD)
		l, err := line(plotter.XYs{{X: m.FrequencyHz, Y: lo}, {X: m.FrequencyHz, Y: hi}}, inkColor, 1)
		if err != nil {
			return "", err
		}
		p.Add(l)
		pts = append(pts, plotter.XY{X: m.FrequencyHz, Y: 100 * m.Damping})
	}
	sc, err := plotter.NewScatter(pts)
	if err != nil {
		return "", err
	}
	sc.GlyphStyle = draw.GlyphStyle{Color: inkColor, Radius: vg.Points(2.4), Shape: draw.CircleGlyph{}}
	p.Add(sc)
	p.X.Min, p.X.Max = x0, x1
	p.Y.Min, p.Y.Max = 0, y1
	return plotSVG(p, 11.5*vg.Centimeter, 5.6*vg.Centimeter, "Rayleigh fit of revision "+orNone(rep.Revision))
}
