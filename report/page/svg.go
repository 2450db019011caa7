package page

import (
	"bytes"
	"fmt"
	"html"
	"html/template"
	"image/color"
	"math"
	"strconv"
	"strings"
	"time"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"
)

// Colours of the plots and the page: a sober palette of our own.
var (
	inkColor   = color.RGBA{0x26, 0x32, 0x3c, 0xff} // text and axes
	mutedColor = color.RGBA{0x8b, 0x95, 0x9e, 0xff} // secondary marks
	gridColor  = color.RGBA{0xe4, 0xe7, 0xeb, 0xff}
	traceColor = color.RGBA{0x9a, 0xa4, 0xad, 0xff} // a recorded signal
	envColor   = color.RGBA{0xb0, 0x3a, 0x2e, 0xff} // fitted envelope
	modelColor = color.RGBA{0x1f, 0x5f, 0x8b, 0xff} // fitted model
	markColor  = color.RGBA{0x6b, 0x4c, 0x9a, 0xff} // onset, mode markers
	// revColors colour the revisions in the order they first appear.
	revColors = []color.RGBA{
		{0x2c, 0x5f, 0x8d, 0xff}, // slate blue
		{0xc2, 0x6a, 0x1f, 0xff}, // ochre
		{0x3f, 0x7d, 0x4e, 0xff}, // moss
		{0x8a, 0x4b, 0x86, 0xff}, // plum
		{0x7a, 0x6a, 0x3a, 0xff}, // olive brown
		{0x2f, 0x80, 0x84, 0xff}, // teal
	}
)

// revColor returns the colour of the i-th revision.
func revColor(i int) color.RGBA { return revColors[i%len(revColors)] }

// withAlpha returns c with the given opacity (0..1), premultiplied as
// image/color expects.
func withAlpha(c color.RGBA, a float64) color.RGBA {
	return color.RGBA{uint8(float64(c.R) * a), uint8(float64(c.G) * a), uint8(float64(c.B) * a), uint8(255 * a)}
}

// lighten mixes c with white: f = 0 is c, f = 1 is white.
func lighten(c color.RGBA, f float64) color.RGBA {
	mix := func(v uint8) uint8 { return uint8(float64(v) + (255-float64(v))*f) }
	return color.RGBA{mix(c.R), mix(c.G), mix(c.B), 0xff}
}

// cssColor writes c as a CSS hex colour (opaque).
func cssColor(c color.RGBA) string { return fmt.Sprintf("#%02x%02x%02x", c.R, c.G, c.B) }

// Font sizes of the plots, in points.
const (
	labelPt = 8
	tickPt  = 7
)

// sans is the typeface of the plots: Liberation Sans, which gonum/plot
// carries for measuring text; the page names it with Arial and Helvetica
// (same metrics) as fallbacks, and embeds nothing.
func sans(size float64) font.Font {
	return font.Font{Typeface: "Liberation", Variant: "Sans", Size: vg.Points(size)}
}

// newPlot returns a plot in the house style: light grid, small type, no
// title (the page gives the headings).
func newPlot(xLabel, yLabel string) *plot.Plot {
	p := plot.New()
	p.BackgroundColor = color.White
	for _, ax := range []*plot.Axis{&p.X, &p.Y} {
		ax.Label.TextStyle.Font = sans(labelPt)
		ax.Label.TextStyle.Color = inkColor
		ax.Tick.Label.Font = sans(tickPt)
		ax.Tick.Label.Color = inkColor
		ax.LineStyle.Color = mutedColor
		ax.LineStyle.Width = vg.Points(0.6)
		ax.Tick.LineStyle.Color = mutedColor
		ax.Tick.LineStyle.Width = vg.Points(0.6)
		ax.Tick.Length = vg.Points(3)
		ax.Padding = vg.Points(2)
		ax.Tick.Marker = niceTicks{n: 5}
	}
	p.Title.TextStyle.Font = sans(10)
	p.Title.TextStyle.Color = inkColor
	p.X.Label.Text = xLabel
	p.Y.Label.Text = yLabel
	g := plotter.NewGrid()
	g.Vertical.Color, g.Horizontal.Color = gridColor, gridColor
	g.Vertical.Width, g.Horizontal.Width = vg.Points(0.5), vg.Points(0.5)
	p.Add(g)
	return p
}

// render draws with fn onto an SVG canvas of w x h and returns the SVG
// document as vgsvg writes it.
func render(w, h vg.Length, fn func(dc draw.Canvas)) ([]byte, error) {
	c := vgsvg.New(w, h)
	var err error
	func() {
		// gonum/plot panics on a few degenerate inputs (for example an
		// axis range it cannot tick); a report shows the message instead.
		defer func() {
			if p := recover(); p != nil {
				err = fmt.Errorf("drawing the plot: %v", p)
			}
		}()
		fn(draw.New(c))
	}()
	if err != nil {
		return nil, err
	}
	var buf bytes.Buffer
	if _, err := c.WriteTo(&buf); err != nil {
		return nil, err
	}
	return fixFonts(buf.Bytes()), nil
}

// fixFonts gives the font names vgsvg writes metric-compatible fallbacks
// that every system has (Liberation Sans has the metrics of Arial and
// Helvetica), so the text keeps its width where Liberation is missing.
// Nothing is embedded and nothing is fetched.
func fixFonts(b []byte) []byte {
	b = bytes.ReplaceAll(b, []byte("font-family:Liberation Sans;"), []byte("font-family:'Liberation Sans',Arial,Helvetica,sans-serif;"))
	b = bytes.ReplaceAll(b, []byte("font-family:Liberation Serif;"), []byte("font-family:'Liberation Serif','Times New Roman',Times,serif;"))
	b = bytes.ReplaceAll(b, []byte("font-family:Liberation Mono;"), []byte("font-family:'Liberation Mono','Courier New',Courier,monospace;"))
	return b
}

// inline turns an SVG document from render into an element to place in an
// HTML page: the XML prolog and comment go, the root element is rewritten
// without namespace declarations (HTML puts <svg> in the SVG namespace by
// itself) and gets a class and an accessible label. vgsvg writes no id
// attributes, so one page can hold any number of plots.
func inline(doc []byte, w, h vg.Length, label string) (template.HTML, error) {
	start := bytes.Index(doc, []byte("<svg"))
	if start < 0 {
		return "", fmt.Errorf("SVG writer output has no <svg> element")
	}
	end := bytes.IndexByte(doc[start:], '>')
	if end < 0 {
		return "", fmt.Errorf("SVG writer output: unterminated <svg> element")
	}
	var b strings.Builder
	b.Grow(len(doc))
	// Scaled to the width of its column, but never much above its drawn
	// size (its text would grow with it).
	fmt.Fprintf(&b, `<svg class="plot" viewBox="0 0 %.5g %.5g" width="%.5gpt" height="%.5gpt" style="max-width:%.4gpt" role="img" aria-label="%s">`,
		w.Points(), h.Points(), w.Points(), h.Points(), 1.2*w.Points(), html.EscapeString(label))
	b.Write(doc[start+end+1:])
	return template.HTML(b.String()), nil
}

// plotSVG draws p alone at w x h and returns it for inlining.
func plotSVG(p *plot.Plot, w, h vg.Length, label string) (template.HTML, error) {
	doc, err := render(w, h, func(dc draw.Canvas) { p.Draw(dc) })
	if err != nil {
		return "", err
	}
	return inline(doc, w, h, label)
}

// dots draws many points as one path of short thick strokes (square dots):
// a tenth of the size of one glyph element per point.
type dots struct {
	xy    plotter.XYs
	color color.Color
	size  vg.Length
}

// Plot implements plot.Plotter.
func (d dots) Plot(c draw.Canvas, p *plot.Plot) {
	if len(d.xy) == 0 {
		return
	}
	trX, trY := p.Transforms(&c)
	var path vg.Path
	half := d.size / 2
	for _, pt := range d.xy {
		x, y := trX(pt.X), trY(pt.Y)
		if !c.Contains(vg.Point{X: x, Y: y}) {
			continue
		}
		path.Move(vg.Point{X: x - half, Y: y})
		path.Line(vg.Point{X: x + half, Y: y})
	}
	c.SetLineStyle(draw.LineStyle{Color: d.color, Width: d.size})
	c.Stroke(path)
}

// DataRange implements plot.DataRanger.
func (d dots) DataRange() (xmin, xmax, ymin, ymax float64) { return plotter.XYRange(d.xy) }

// hband fills y0..y1 between x0 and x1 (a mean's interval).
func hband(x0, x1, y0, y1 float64, fill color.Color) (*plotter.Polygon, error) {
	pg, err := plotter.NewPolygon(plotter.XYs{{X: x0, Y: y0}, {X: x1, Y: y0}, {X: x1, Y: y1}, {X: x0, Y: y1}})
	if err != nil {
		return nil, err
	}
	pg.Color = fill
	pg.LineStyle.Width = 0
	return pg, nil
}

// line returns a polyline in the given style.
func line(xy plotter.XYs, c color.Color, width float64, dashes ...float64) (*plotter.Line, error) {
	l, err := plotter.NewLine(xy)
	if err != nil {
		return nil, err
	}
	l.Color = c
	l.Width = vg.Points(width)
	for _, d := range dashes {
		l.Dashes = append(l.Dashes, vg.Points(d))
	}
	return l, nil
}

// vmark draws a vertical line at x across the data area, with an optional
// label at its top.
type vmark struct {
	x      float64
	color  color.Color
	width  vg.Length
	dashes []vg.Length
	label  string
}

// Plot implements plot.Plotter.
func (m vmark) Plot(c draw.Canvas, p *plot.Plot) {
	trX, _ := p.Transforms(&c)
	x := trX(m.x)
	if x < c.Min.X || x > c.Max.X {
		return
	}
	c.StrokeLine2(draw.LineStyle{Color: m.color, Width: m.width, Dashes: m.dashes}, x, c.Min.Y, x, c.Max.Y)
	if m.label != "" {
		sty := p.X.Tick.Label
		sty.Color = m.color
		sty.Rotation = math.Pi / 2
		sty.XAlign = draw.XRight
		sty.YAlign = draw.YBottom
		c.FillText(sty, vg.Point{X: x - vg.Points(1.5), Y: c.Max.Y - vg.Points(2)}, m.label)
	}
}

// timeTicks labels an axis of Unix seconds at round local clock times.
type timeTicks struct{ loc *time.Location }

// tickSteps are the candidate spacings of time ticks, in seconds.
var tickSteps = []float64{
	1, 2, 5, 10, 15, 30, 60, 120, 300, 600, 900, 1800, 3600, 2 * 3600, 3 * 3600, 6 * 3600, 12 * 3600,
	86400, 2 * 86400, 7 * 86400, 14 * 86400, 28 * 86400, 91 * 86400, 182 * 86400, 364 * 86400,
}

// Ticks implements plot.Ticker.
func (t timeTicks) Ticks(lo, hi float64) []plot.Tick {
	loc := t.loc
	if loc == nil {
		loc = time.Local
	}
	if !(hi > lo) {
		return []plot.Tick{{Value: lo, Label: time.Unix(int64(lo), 0).In(loc).Format("15:04")}}
	}
	step := tickSteps[len(tickSteps)-1]
	for _, s := range tickSteps {
		if (hi-lo)/s <= 6 {
			step = s
			break
		}
	}
	t0 := time.Unix(int64(lo), 0).In(loc)
	day := time.Date(t0.Year(), t0.Month(), t0.Day(), 0, 0, 0, 0, loc)
	sameDay := time.Unix(int64(hi), 0).In(loc).YearDay() == t0.YearDay()
	format := "Jan 2"
	switch {
	case step < 60:
		format = "15:04:05"
	case step < 86400 && sameDay:
		format = "15:04"
	case step < 86400:
		format = "Jan 2 15:04"
	case step >= 91*86400:
		format = "Jan 2006"
	}
	var ticks []plot.Tick
	k0 := 0
	if step < 86400 {
		k0 = int(math.Floor((lo - float64(day.Unix())) / step))
	}
	for k := k0; k < k0+1000; k++ {
		var at time.Time
		if step < 86400 {
			at = day.Add(time.Duration(float64(k) * step * float64(time.Second)))
		} else {
			at = day.AddDate(0, 0, k*int(step/86400))
		}
		v := float64(at.Unix())
		if v > hi {
			break
		}
		if v >= lo {
			ticks = append(ticks, plot.Tick{Value: v, Label: at.Format(format)})
		}
	}
	return ticks
}

// padRange widens [lo, hi] by a share of its width on each side (or by
// abs when it is empty).
func padRange(lo, hi, share, abs float64) (float64, float64) {
	if !(hi > lo) {
		return lo - abs, hi + abs
	}
	d := (hi - lo) * share
	return lo - d, hi + d
}

// niceTicks puts about n labelled ticks at 1, 2 or 5 times a power of
// ten, with as many decimals as the step needs.
type niceTicks struct{ n int }

// Ticks implements plot.Ticker.
func (t niceTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) || math.IsInf(hi-lo, 0) {
		return []plot.Tick{{Value: lo, Label: strconv.FormatFloat(lo, 'g', 4, 64)}}
	}
	n := max(2, t.n)
	raw := (hi - lo) / float64(n)
	mag := math.Pow(10, math.Floor(math.Log10(raw)))
	// the candidate nearest to raw on a log scale
	step := mag
	for _, m := range []float64{2, 5, 10} {
		if math.Abs(math.Log(m*mag/raw)) < math.Abs(math.Log(step/raw)) {
			step = m * mag
		}
	}
	dec := max(0, -int(math.Floor(math.Log10(step)+1e-9)))
	var ticks []plot.Tick
	for v := math.Ceil(lo/step) * step; v <= hi+step*1e-9; v += step {
		if math.Abs(v) < step*1e-9 {
			v = 0
		}
		ticks = append(ticks, plot.Tick{Value: v, Label: strconv.FormatFloat(v, 'f', dec, 64)})
	}
	return ticks
}
