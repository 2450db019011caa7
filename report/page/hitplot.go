package page

import (
	"fmt"
	"html/template"
	"image/color"
	"io"
	"math"
	"path/filepath"
	"slices"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"github.com/ringlog/ringlog/pipeline"
)

// Sizes of the decay plots.
var (
	hitW, hitH     = 18 * vg.Centimeter, 21 * vg.Centimeter // the per-hit SVG file
	smallW, smallH = 9.5 * vg.Centimeter, 4.6 * vg.Centimeter
)

// Pixel columns the records are reduced to.
const (
	hitCols   = 700
	smallCols = 260
)

// amplitudeLabel is the y label of a response in unit u.
func amplitudeLabel(u string) string {
	if u == "" {
		return "response"
	}
	return "response [" + u + "]"
}

// decayPanel plots the whole record: the response (minimum and maximum per
// column), the fitted envelope +- from the onset, the onset and, when full,
// the fitted model's outline.
func decayPanel(tr *trace, cols int, model []float64) (*plot.Plot, error) {
	p := newPlot("time [s]", amplitudeLabel(tr.unit))
	data, err := line(minMax(tr.x, 0, tr.fs, cols), traceColor, 0.5)
	if err != nil {
		return nil, err
	}
	p.Add(data)
	if model != nil {
		// The model's outline: the top and the bottom of each column.
		mm := minMax(model, float64(tr.onsetIndex())/tr.fs, tr.fs, cols)
		var top, bot plotter.XYs
		for i := 0; i+1 < len(mm); i += 2 {
			a, b := mm[i], mm[i+1]
			if a.Y < b.Y {
				a, b = b, a
			}
			top = append(top, a)
			bot = append(bot, b)
		}
		for _, xy := range []plotter.XYs{top, bot} {
			if len(xy) < 2 {
				continue
			}
			l, err := line(xy, modelColor, 0.6)
			if err != nil {
				return nil, err
			}
			p.Add(l)
		}
	}
	if env := envelopeXY(tr, cols); len(env) > 1 {
		neg := make(plotter.XYs, len(env))
		for i, v := range env {
			neg[i] = plotter.XY{X: v.X, Y: -v.Y}
		}
		for _, xy := range []plotter.XYs{env, neg} {
			l, err := line(xy, envColor, 1.1, 3, 1.5)
			if err != nil {
				return nil, err
			}
			p.Add(l)
		}
	}
	p.Add(vmark{x: tr.onset, color: markColor, width: vg.Points(0.8), dashes: []vg.Length{vg.Points(1), vg.Points(1.5)}, label: "onset"})
	p.X.Min, p.X.Max = 0, tr.duration()
	// Symmetric y range: the envelope and the record, whichever is larger.
	ymax := 0.0
	for _, v := range tr.x {
		ymax = math.Max(ymax, math.Abs(v))
	}
	if e := tr.envelope(tr.onset); e > ymax && e < 4*ymax {
		ymax = e
	}
	if !(ymax > 0) {
		ymax = 1
	}
	p.Y.Min, p.Y.Max = -1.05*ymax, 1.05*ymax
	return p, nil
}

// envelopeXY samples the total envelope from the onset to the end.
func envelopeXY(tr *trace, cols int) plotter.XYs {
	if len(tr.modes) == 0 {
		return nil
	}
	var out plotter.XYs
	d := tr.duration()
	for c := 0; c <= cols; c++ {
		t := tr.onset + (d-tr.onset)*float64(c)/float64(cols)
		if v := tr.envelope(t); !math.IsNaN(v) {
			out = append(out, plotter.XY{X: t, Y: v})
		}
	}
	return out
}

// zoomPanel shows the first cycles after the onset sample by sample with
// the fitted model over them.
func zoomPanel(tr *trace, model []float64) (*plot.Plot, error) {
	p := newPlot("time [s], first cycles of the free decay", amplitudeLabel(tr.unit))
	i0 := tr.onsetIndex()
	// Eight periods of the lowest mode, at least 40 samples.
	span := 0.05
	for _, m := range tr.modes {
		if m.FrequencyHz > 0 {
			span = 8 / m.FrequencyHz
			break
		}
	}
	n := min(len(tr.x)-i0, max(40, int(span*tr.fs)))
	lo := max(0, i0-n/10)
	t0 := float64(lo) / tr.fs
	data, err := line(minMax(tr.x[lo:i0+n], t0, tr.fs, hitCols), traceColor, 0.9)
	if err != nil {
		return nil, err
	}
	p.Add(data)
	if model != nil {
		m, err := line(minMax(model[:n], float64(i0)/tr.fs, tr.fs, hitCols), modelColor, 0.8)
		if err != nil {
			return nil, err
		}
		p.Add(m)
	}
	p.Add(vmark{x: tr.onset, color: markColor, width: vg.Points(0.8), dashes: []vg.Length{vg.Points(1), vg.Points(1.5)}})
	return p, nil
}

// spectrumPanel shows the amplitude spectrum of the free decay with the
// modes marked.
func spectrumPanel(tr *trace) (*plot.Plot, error) {
	p := newPlot("frequency [Hz]", "spectrum of the decay [dB]")
	freq, db := tr.spectrum()
	if len(freq) == 0 {
		return p, nil
	}
	fmax := tr.fs / 2
	top := 0.0
	for _, m := range tr.modes {
		top = math.Max(top, m.FrequencyHz)
	}
	if top > 0 {
		fmax = math.Min(fmax, 1.6*top+0.02*tr.fs)
	}
	l, err := line(maxPerColumn(freq, db, fmax, hitCols), inkColor, 0.7)
	if err != nil {
		return nil, err
	}
	p.Add(l)
	// Modes closer than 3 % of the axis share one label.
	for lo := 0; lo < len(tr.modes); {
		hi := lo + 1
		for hi < len(tr.modes) && tr.modes[hi].FrequencyHz-tr.modes[hi-1].FrequencyHz < 0.03*fmax {
			hi++
		}
		var lbl string
		if hi-lo == 1 {
			m := tr.modes[lo]
			lbl = fmt.Sprintf("%d: %.4g Hz, %.3g %%", lo+1, m.FrequencyHz, 100*m.DampingRatio)
			if m.Dropped {
				lbl += " (dropped)"
			}
		} else {
			lbl = fmt.Sprintf("%d-%d: %.4g-%.4g Hz", lo+1, hi, tr.modes[lo].FrequencyHz, tr.modes[hi-1].FrequencyHz)
		}
		for i := lo; i < hi; i++ {
			l := ""
			if i == lo {
				l = lbl
			}
			p.Add(vmark{x: tr.modes[i].FrequencyHz, color: envColor, width: vg.Points(0.7), dashes: []vg.Length{vg.Points(2), vg.Points(1.5)}, label: l})
		}
		lo = hi
	}
	p.X.Min, p.X.Max = 0, fmax
	p.Y.Min, p.Y.Max = -100, 5
	return p, nil
}

// WriteHitSVG writes the plot of one analysed hit as a standalone SVG
// document: the whole record with the fitted envelope, the first cycles
// of the free decay with the fitted model over the samples, and the
// spectrum of the decay with the modes marked.
// rec is the recording as read (the analysed response channel is
// res.Channel) and res its analysis.
//
// The fitted model uses each mode's frequency and damping ratio as the
// analysis found them; its amplitudes and phases are fitted to the decay
// by linear least squares, as the analysis does not report phases.
func WriteHitSVG(w io.Writer, rec *pipeline.Recording, res *pipeline.Result) error {
	tr, err := newTrace(rec, res)
	if err != nil {
		return err
	}
	model := tr.model()
	// The whole record with its envelope; the model is drawn over the
	// samples in the zoom, where its cycles can be told apart.
	a, err := decayPanel(tr, hitCols, nil)
	if err != nil {
		return err
	}
	a.Title.Text = hitTitle(res)
	b, err := zoomPanel(tr, model)
	if err != nil {
		return err
	}
	c, err := spectrumPanel(tr)
	if err != nil {
		return err
	}
	doc, err := render(hitW, hitH, func(dc draw.Canvas) {
		tiles := draw.Tiles{Rows: 3, Cols: 1, PadTop: vg.Points(6), PadBottom: vg.Points(22), PadLeft: vg.Points(4),
			PadRight: vg.Points(10), PadY: vg.Points(14)}
		plots := [][]*plot.Plot{{a}, {b}, {c}}
		cs := plot.Align(plots, tiles, dc)
		for i := range plots {
			plots[i][0].Draw(cs[i][0])
		}
		legend(dc, vg.Points(8), []legendItem{
			{"record", traceColor, nil}, {"fitted model", modelColor, nil},
			{"fitted envelope", envColor, []vg.Length{vg.Points(3), vg.Points(1.5)}},
			{"onset of the free decay", markColor, []vg.Length{vg.Points(1), vg.Points(1.5)}},
		})
	})
	if err != nil {
		return err
	}
	_, err = w.Write(doc)
	return err
}

// hitTitle names the file (as given, or its base name when the path is
// long), its verdict and its reasons.
func hitTitle(res *pipeline.Result) string {
	name := res.File
	if len(name) > 60 {
		name = filepath.Base(name)
	}
	t := name + ": " + string(res.Verdict)
	var codes []string
	for _, r := range res.Reasons {
		if !slices.Contains(codes, r.Code) {
			codes = append(codes, r.Code)
		}
	}
	if len(codes) > 0 {
		t += " (" + strings.Join(codes, ", ") + ")"
	}
	return t
}

// legendItem is one line of a drawn legend.
type legendItem struct {
	text   string
	color  color.Color
	dashes []vg.Length
}

// legend draws a one-row legend along the bottom of dc.
func legend(dc draw.Canvas, y vg.Length, items []legendItem) {
	x := dc.Min.X + vg.Points(40)
	sty := draw.TextStyle{Color: inkColor, Font: sans(tickPt), Handler: plot.DefaultTextHandler}
	sty.YAlign = draw.YCenter
	for _, it := range items {
		dc.StrokeLine2(draw.LineStyle{Color: it.color, Width: vg.Points(1.2), Dashes: it.dashes}, x, dc.Min.Y+y, x+vg.Points(16), dc.Min.Y+y)
		dc.FillText(sty, vg.Point{X: x + vg.Points(19), Y: dc.Min.Y + y}, it.text)
		x += vg.Points(26) + sty.Width(it.text)
	}
}

// decaySVG is the small inline plot of a hit on the daily page.
func decaySVG(tr *trace, label string) (template.HTML, error) {
	p, err := decayPanel(tr, smallCols, nil)
	if err != nil {
		return "", err
	}
	p.X.Label.Text = "time [s]"
	return plotSVG(p, smallW, smallH, label)
}
