package page

import (
	"fmt"
	"math"
	"math/cmplx"
	"slices"

	"gonum.org/v1/gonum/dsp/fourier"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/plot/plotter"

	"github.com/ringlog/ringlog/pipeline"
)

// trace is the response of one hit and the modes the analysis found,
// ready to draw.
type trace struct {
	fs      float64
	x       []float64 // response channel, offset removed
	unit    string
	onset   float64 // s from the record start: start of the free decay
	tau     float64 // exponential window of the recorder, 0 for none
	modes   []pipeline.Mode
	guessed bool // onset estimated here (the history does not keep it)

	fitted bool
	poles  []pole
	coef   []float64 // per pole: cos and sin amplitude at the onset; then a constant
}

// pole is one mode's decay rate (1/s) and damped circular frequency.
type pole struct{ s, wd float64 }

// newTrace takes the analysed channel of rec and the modes of res. The
// onset is res.OnsetS when the analysis gave it, otherwise it is
// estimated from the record (see estimateOnset).
func newTrace(rec *pipeline.Recording, res *pipeline.Result) (*trace, error) {
	ch := rec.Channel(res.Channel)
	if ch == nil {
		if rs := rec.ByRole(pipeline.RoleResponse); len(rs) > 0 {
			ch = rs[0]
		}
	}
	if ch == nil || len(ch.Samples) == 0 || !(ch.SampleRate > 0) {
		return nil, fmt.Errorf("%s: no response channel to plot", rec.Path)
	}
	tr := &trace{fs: ch.SampleRate, unit: ch.Unit, onset: res.OnsetS, tau: res.WindowTauS, modes: res.Modes}
	if math.IsNaN(tr.tau) || tr.tau < 0 {
		tr.tau = 0
	}
	var force *pipeline.Channel
	if res.ForceChannel != "" {
		force = rec.Channel(res.ForceChannel)
	}
	if force == nil {
		if fc := rec.ByRole(pipeline.RoleForce); len(fc) > 0 {
			force = fc[0]
		}
	}
	if force != nil && len(force.Samples) != len(ch.Samples) {
		force = nil
	}
	trigger, onset := estimateOnset(ch.Samples, force)
	if !(tr.onset > 0) || math.IsNaN(tr.onset) {
		tr.onset = float64(onset) / tr.fs
		tr.guessed = true
	}
	if res.TriggerS > 0 && !math.IsNaN(res.TriggerS) {
		trigger = int(res.TriggerS * tr.fs)
	}
	// Offset: the median of the lead-in before the impact.
	off := 0.0
	if trigger >= 16 && trigger <= len(ch.Samples) {
		lead := slices.Clone(ch.Samples[:trigger])
		slices.Sort(lead)
		off = lead[trigger/2]
	}
	tr.x = make([]float64, len(ch.Samples))
	for i, v := range ch.Samples {
		tr.x[i] = v - off
	}
	for _, m := range tr.modes {
		if s, wd := sigma(m); !math.IsNaN(s) {
			tr.poles = append(tr.poles, pole{s, wd})
		}
	}
	return tr, nil
}

// estimateOnset finds the impact and the start of the free decay: with a
// force channel, the force peak and the end of the pulse (the force back
// under 5 % of its peak); without, the response's largest excursion for
// both. It is a plotting aid, not the analysis's own onset.
func estimateOnset(x []float64, force *pipeline.Channel) (trigger, onset int) {
	peakAt := func(v []float64) int {
		at, best := 0, -1.0
		for i, u := range v {
			if a := math.Abs(u); a > best {
				at, best = i, a
			}
		}
		return at
	}
	if force != nil {
		f := force.Samples
		base := 0.0
		if n := min(len(f)/20, 256); n > 0 {
			lead := slices.Clone(f[:n])
			slices.Sort(lead)
			base = lead[n/2]
		}
		p := peakAt(f)
		lim := 0.05 * math.Abs(f[p]-base)
		trigger = p
		for trigger > 0 && math.Abs(f[trigger-1]-base) > lim {
			trigger--
		}
		onset = p
		for onset < len(f)-1 && math.Abs(f[onset]-base) > lim {
			onset++
		}
		return trigger, onset
	}
	// Response only: the impact is where the response first rises to a
	// tenth of its peak; the decay starts at the peak.
	p := peakAt(x)
	lim := 0.1 * math.Abs(x[p])
	trigger = p
	for trigger > 0 && math.Abs(x[trigger-1]) > lim {
		trigger--
	}
	return trigger, p
}

func (tr *trace) duration() float64 { return float64(len(tr.x)) / tr.fs }

// onsetIndex is the sample index of the onset, within the record.
func (tr *trace) onsetIndex() int {
	return min(max(0, int(math.Round(tr.onset*tr.fs))), len(tr.x))
}

// window is the recorder's exponential window at t (s from the record
// start): the modes decay as sigma without it.
func (tr *trace) window(t float64) float64 {
	if tr.tau > 0 {
		return math.Exp(-t / tr.tau)
	}
	return 1
}

// sigma returns the decay rate (1/s) and the damped circular frequency of
// mode m.
func sigma(m pipeline.Mode) (s, wd float64) {
	wn := 2 * math.Pi * m.FrequencyHz
	z := m.DampingRatio
	if !(z > 0 && z < 1) || !(wn > 0) || math.IsInf(wn, 0) {
		return math.NaN(), math.NaN()
	}
	return z * wn, wn * math.Sqrt(1-z*z)
}

// maxModelSamples caps the samples of the amplitude fit.
const maxModelSamples = 1 << 15

// basis writes the regressors of the model at sample i0+i: per pole
// e cos(wd tau) and e sin(wd tau), e = exp(-s tau) times the window, tau
// the time since the onset; then a constant.
func (tr *trace) basis(i0, i int, dst []float64) {
	t := float64(i0+i) / tr.fs
	tau := t - float64(i0)/tr.fs
	w := tr.window(t)
	for k, p := range tr.poles {
		e := math.Exp(-p.s*tau) * w
		sn, cs := math.Sincos(p.wd * tau)
		dst[2*k], dst[2*k+1] = e*cs, e*sn
	}
	dst[len(dst)-1] = 1
}

// fit finds the amplitude and phase of every mode (and a constant) by
// linear least squares on the free decay, its frequency and damping ratio
// held at the analysis's values. The fit runs over five time constants
// of the slowest mode (the envelope falls to 0.7 %), at least 64 samples.
func (tr *trace) fit() bool {
	if tr.fitted {
		return tr.coef != nil
	}
	tr.fitted = true
	i0 := tr.onsetIndex()
	if len(tr.poles) == 0 {
		return false
	}
	slow := math.Inf(1)
	for _, p := range tr.poles {
		slow = math.Min(slow, p.s)
	}
	n := len(tr.x) - i0
	if slow > 0 {
		n = min(n, max(64, int(5/slow*tr.fs)))
	}
	n = min(n, maxModelSamples)
	cols := 2*len(tr.poles) + 1
	if n < 2*cols {
		return false
	}
	a := mat.NewDense(n, cols, nil)
	y := mat.NewVecDense(n, nil)
	row := make([]float64, cols)
	for i := range n {
		tr.basis(i0, i, row)
		a.SetRow(i, row)
		y.SetVec(i, tr.x[i0+i])
	}
	var qr mat.QR
	qr.Factorize(a)
	var beta mat.VecDense
	if err := qr.SolveVecTo(&beta, false, y); err != nil {
		return false
	}
	tr.coef = make([]float64, cols)
	for j := range tr.coef {
		tr.coef[j] = beta.AtVec(j)
	}
	return true
}

// model returns the fitted response from the onset to the end of the
// record; nil when there is no mode to fit.
func (tr *trace) model() []float64 {
	if !tr.fit() {
		return nil
	}
	i0 := tr.onsetIndex()
	row := make([]float64, len(tr.coef))
	out := make([]float64, len(tr.x)-i0)
	for i := range out {
		tr.basis(i0, i, row)
		v := 0.0
		for j, c := range tr.coef {
			v += row[j] * c
		}
		out[i] = v
	}
	return out
}

// envelope is the sum of the fitted modes' envelopes at t (s from the
// record start), sum_k A_k exp(-sigma_k (t - onset)) with the window: the
// bound the fitted response stays within. NaN before the onset or
// without a fit.
func (tr *trace) envelope(t float64) float64 {
	if t < tr.onset || !tr.fit() {
		return math.NaN()
	}
	tau := t - float64(tr.onsetIndex())/tr.fs
	sum := 0.0
	for k, p := range tr.poles {
		amp := math.Hypot(tr.coef[2*k], tr.coef[2*k+1])
		sum += amp * math.Exp(-p.s*tau)
	}
	return sum * tr.window(t)
}

// spectrum returns the amplitude spectrum of the free decay in dB under
// its peak, with the frequency of each bin.
func (tr *trace) spectrum() (freq, db []float64) {
	x := tr.x[tr.onsetIndex():]
	if len(x) < 8 {
		return nil, nil
	}
	n := 1
	for n < len(x) {
		n <<= 1
	}
	n = min(n, 1<<17)
	buf := make([]float64, n)
	copy(buf, x)
	coef := fourier.NewFFT(n).Coefficients(nil, buf)
	freq = make([]float64, len(coef))
	db = make([]float64, len(coef))
	peak := 0.0
	for i, c := range coef {
		a := cmplx.Abs(c)
		db[i] = a
		peak = math.Max(peak, a)
		freq[i] = float64(i) * tr.fs / float64(n)
	}
	for i, a := range db {
		db[i] = math.Max(-120, 20*math.Log10(a/peak))
	}
	return freq, db
}

// minMax reduces x (sample i at time t0 + i/fs) to the minimum and the
// maximum of each of cols columns: a zigzag line through them draws the
// record as the eye sees it at that width. Short records are returned
// whole.
func minMax(x []float64, t0, fs float64, cols int) plotter.XYs {
	if len(x) <= 2*cols {
		out := make(plotter.XYs, len(x))
		for i, v := range x {
			out[i] = plotter.XY{X: t0 + float64(i)/fs, Y: v}
		}
		return out
	}
	out := make(plotter.XYs, 0, 2*cols)
	for c := range cols {
		lo := c * len(x) / cols
		hi := (c + 1) * len(x) / cols
		if hi <= lo {
			continue
		}
		mn, mx := x[lo], x[lo]
		imn, imx := lo, lo
		for i := lo + 1; i < hi; i++ {
			if x[i] < mn {
				mn, imn = x[i], i
			}
			if x[i] > mx {
				mx, imx = x[i], i
			}
		}
		// Keep the order in time, so the line does not cross back.
		a, b := plotter.XY{X: t0 + float64(imn)/fs, Y: mn}, plotter.XY{X: t0 + float64(imx)/fs, Y: mx}
		if imx < imn {
			a, b = b, a
		}
		out = append(out, a, b)
	}
	return out
}

// maxPerColumn reduces a spectrum to the largest value of each of cols
// columns of the frequency axis up to fmax.
func maxPerColumn(freq, v []float64, fmax float64, cols int) plotter.XYs {
	out := make(plotter.XYs, 0, cols)
	j := 0
	for c := range cols {
		hiF := fmax * float64(c+1) / float64(cols)
		best, at := math.Inf(-1), math.NaN()
		for ; j < len(freq) && freq[j] <= hiF; j++ {
			if v[j] > best {
				best, at = v[j], freq[j]
			}
		}
		if !math.IsNaN(at) {
			out = append(out, plotter.XY{X: at, Y: best})
		}
	}
	return out
}
