package page

import (
	"fmt"
	"html/template"
	"math"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/report"
)

// The daily page's section on damping against the excitation level: per
// prototype and mode, every hit's damping ratio against its peak force (or
// response amplitude without a force channel) over the campaign, per
// revision, with the least-squares power law and the sentence of
// report.DampingVsLevel.

// levelView is one mode's block.
type levelView struct {
	Name      string
	Level     string // what the level is, for the axis and the text
	Rows      []levelRow
	Plot      template.HTML
	PlotError string
	LeftOut   string // hits left out and why
	Thinned   string // how the dots were thinned; "" when every hit is drawn
}

// MaxLevelDots caps the dots of one revision in a plot of damping against
// the excitation level: beyond it every k-th hit is drawn, so that a long
// campaign keeps the page small (at 100,000 hits, 370,000 dots made most
// of a 10 MB page). The fits always use every hit.
const MaxLevelDots = 1500

// levelRow is one revision of a mode.
type levelRow struct {
	Revision, Class string
	N               int
	Range           string // lowest .. highest level
	PerDoubling     string // change per doubling with its interval
	Verdict         string
}

// levelsBlock is the template of the section; it is given a []levelView.
const levelsBlock = `{{define "levels"}}{{if .}}<h3>Damping against the excitation level</h3>
<p class="lede">Each hit's damping ratio against how hard it was struck (peak force of the hammer pulse; the mode's initial response amplitude where the hits have no force channel), both on log scales, with the least-squares power law per revision. Does the test amplitude matter before a damping ratio goes into a model? Intervals 95 %.</p>
{{range $lv := .}}<div class="mode">
<h3>{{.Name}}: damping against {{.Level}}</h3>
<table>
<thead><tr><th>revision</th><th class="n">hits used</th><th class="n">level range</th><th class="n">ζ change per doubling<br><span class="ci">95 % interval</span></th><th>what it shows</th></tr></thead>
<tbody>{{range .Rows}}<tr><td><span class="swatch {{.Class}}"></span>{{.Revision}}</td><td class="n">{{.N}}</td><td class="n">{{.Range}}</td><td class="n">{{.PerDoubling}}</td><td>{{.Verdict}}</td></tr>{{end}}</tbody>
</table>
{{with .LeftOut}}<p class="note">Left out: {{.}}</p>{{end}}
{{with .PlotError}}<p class="warn">The plot could not be drawn: {{.}}</p>{{end}}
{{with .Plot}}<div class="figs"><figure>{{.}}<figcaption>Damping ratio against the excitation level, log scales; lines: fitted power law per revision.{{with $lv.Thinned}} Dots thinned to keep the page small ({{.}}); the fits use every hit.{{end}}</figcaption></figure></div>{{end}}
</div>{{end}}{{end}}{{end}}`

// levelViews builds the section for one prototype from its identified
// campaign (hits as loaded for the statistics: they carry the peak force
// and the mode amplitudes).
func levelViews(id *report.Identified, hits []db.Hit, revs []string, revClass map[string]string) []levelView {
	type perRev struct {
		rev string
		ri  int
		ls  report.LevelStat
	}
	byLabel := map[string][]perRev{}
	for ri, r := range revs {
		for _, ls := range report.DampingVsLevel(id, hits, r) {
			byLabel[ls.Label] = append(byLabel[ls.Label], perRev{r, ri, ls})
		}
	}
	var out []levelView
	for _, l := range id.Labels {
		prs := byLabel[l.Label]
		if len(prs) == 0 {
			continue
		}
		lv := levelView{Name: l.Name(), Level: "peak force"}
		for _, pr := range prs {
			if pr.ls.Level == report.LevelResponse {
				lv.Level = "response amplitude"
			}
		}
		var left, thinned []string
		p := newPlot(lv.Level, "damping ratio [%]")
		p.X.Scale, p.Y.Scale = plot.LogScale{}, plot.LogScale{}
		p.X.Tick.Marker, p.Y.Tick.Marker = plot.LogTicks{Prec: -1}, plot.LogTicks{Prec: -1}
		xmin, xmax, ymin, ymax := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
		for _, pr := range prs {
			ls := pr.ls
			row := levelRow{Revision: orNone(pr.rev), Class: revClass[pr.rev], N: ls.N, Verdict: ls.Verdict,
				Range: "–", PerDoubling: "–"}
			if ls.N > 0 {
				lo, hi := math.Inf(1), math.Inf(-1)
				step := 1
				if ls.N > MaxLevelDots {
					step = (ls.N + MaxLevelDots - 1) / MaxLevelDots
					thinned = append(thinned, fmt.Sprintf("every %d%s of %d hits of %s drawn", step, ordinalSuffix(step), ls.N, orNone(pr.rev)))
				}
				xy := make(plotter.XYs, 0, (ls.N+step-1)/step)
				for i, pt := range ls.Points {
					lo, hi = math.Min(lo, pt.Level), math.Max(hi, pt.Level)
					ymin, ymax = math.Min(ymin, 100*pt.DampingRatio), math.Max(ymax, 100*pt.DampingRatio)
					if i%step == 0 {
						xy = append(xy, plotter.XY{X: pt.Level, Y: 100 * pt.DampingRatio})
					}
				}
				xmin, xmax = math.Min(xmin, lo), math.Max(xmax, hi)
				row.Range = num(lo, 3) + " – " + num(hi, 3)
				p.Add(dots{xy: xy, color: revColor(pr.ri), size: vg.Points(3.2)})
				if !math.IsNaN(ls.Exponent) && hi > lo {
					// the fitted power law through the geometric means
					var sx, sy float64
					for _, pt := range ls.Points {
						sx += math.Log(pt.Level)
						sy += math.Log(pt.DampingRatio)
					}
					mx, my := sx/float64(ls.N), sy/float64(ls.N)
					f := func(x float64) float64 { return 100 * math.Exp(my+ls.Exponent*(math.Log(x)-mx)) }
					if ln, err := line(plotter.XYs{{X: lo, Y: f(lo)}, {X: hi, Y: f(hi)}}, revColor(pr.ri), 1.2); err == nil {
						p.Add(ln)
					}
				}
			}
			if !math.IsNaN(ls.PerDoubling) {
				row.PerDoubling = fmt.Sprintf("%+.0f %% (%+.0f to %+.0f %%)", 100*ls.PerDoubling, 100*ls.PerDoublingCI[0], 100*ls.PerDoublingCI[1])
			}
			lv.Rows = append(lv.Rows, row)
			for _, o := range ls.LeftOut {
				left = append(left, fmt.Sprintf("%s (%s)", baseName(o.File), strings.ReplaceAll(o.Reason, "_", " ")))
			}
		}
		if len(left) > 0 {
			lv.LeftOut = strings.Join(left, ", ")
		}
		lv.Thinned = strings.Join(thinned, "; ")
		if !math.IsInf(xmin, 0) && xmin > 0 && ymin > 0 {
			p.X.Min, p.X.Max = xmin/1.15, xmax*1.15
			p.Y.Min, p.Y.Max = ymin/1.15, ymax*1.15
			svg, err := plotSVG(p, scatterW, scatterH, "damping ratio of "+l.Name()+" against "+lv.Level)
			if err != nil {
				lv.PlotError = err.Error()
			}
			lv.Plot = svg
		}
		out = append(out, lv)
	}
	return out
}
