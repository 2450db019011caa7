package accuracy

import (
	"context"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"sync"

	"github.com/ringlog/ringlog/pipeline/modal"
	"github.com/ringlog/ringlog/pipeline/synth"
)

// Targets of the table (the contract of the estimator).
const (
	TargetBiasPct     = 1.0  // |relative bias of zeta| below this, %
	TargetSDRatio     = 1.25 // sd(zeta) at most this times the Cramer-Rao bound
	TargetCoverageLo  = 90.0 // 95 % interval coverage at least this, %
	TargetCoverageHi  = 98.0 // and at most this, %
	TargetTwoModePct  = 3.0  // two-mode case: each zeta within this, % relative
	TargetTwoModeRate = 95.0 // ... in at least this share of the trials, %
)

// Config is the grid and the effort of a run. The zero value runs the full
// grid with the defaults documented on each field.
type Config struct {
	// FrequenciesHz of the one-mode cells (default 1, 10, 100, 1000, 2000).
	FrequenciesHz []float64
	// DampingRatios of the one-mode cells (default 0.001, 0.005, 0.01, 0.02,
	// 0.05, 0.1).
	DampingRatios []float64
	// SNRsDB are the peak signal-to-noise ratios, 20 log10(peak/noise sd)
	// (default 20, 40, 60).
	SNRsDB []float64
	// Trials per cell (default 200; 40 with Quick).
	Trials int
	// Seed makes the run reproducible (default 1).
	Seed uint64
	// Quick runs a reduced grid (10 and 1000 Hz; 0.1, 1 and 10 %; 20 and
	// 60 dB; one two-mode case) unless the grid fields are set.
	Quick bool
	// Workers running cells in parallel (default GOMAXPROCS).
	Workers int
	// MinCycles is the least number of cycles in a record (default 20).
	MinCycles float64
	// NoForce analyses the response alone; by default each hit has a
	// hammer channel and the free decay starts where the pulse ends.
	NoForce bool
	// SkipTwoMode leaves out the two-mode cases.
	SkipTwoMode bool
}

// Row is one one-mode cell of the table.
type Row struct {
	FrequencyHz, Zeta, SNRdB float64
	SampleRate               float64
	Trials, Found            int     // trials run, trials where the mode was found
	BiasPct                  float64 // mean relative error of zeta, %
	BiasSEPct                float64 // its standard error, %
	SD, CRB                  float64 // sd of zeta over the trials; Cramer-Rao bound (RMS over trials)
	SDRatio                  float64 // SD/CRB
	CoveragePct              float64 // share of trials whose 95 % interval holds the true zeta, %
	Pass                     bool
}

// TwoModeRow is one two-mode case.
type TwoModeRow struct {
	F1, F2, Z1, Z2, SNRdB float64
	Trials, Found         int        // trials where both modes were found
	BiasPct               [2]float64 // mean relative error of each zeta, %
	P95Pct                [2]float64 // 95th percentile of |relative error|, %
	WithinPct             float64    // share of trials with both zetas within TargetTwoModePct, %
	Pass                  bool
}

// Table is the outcome of Run.
type Table struct {
	Rows    []Row
	TwoMode []TwoModeRow
	Pass    bool // every row passed
}

func (c Config) withDefaults() Config {
	if c.Quick {
		if c.FrequenciesHz == nil {
			c.FrequenciesHz = []float64{10, 1000}
		}
		if c.DampingRatios == nil {
			c.DampingRatios = []float64{0.001, 0.01, 0.1}
		}
		if c.SNRsDB == nil {
			c.SNRsDB = []float64{20, 60}
		}
		if c.Trials <= 0 {
			c.Trials = 40
		}
	}
	if c.FrequenciesHz == nil {
		c.FrequenciesHz = []float64{1, 10, 100, 1000, 2000}
	}
	if c.DampingRatios == nil {
		c.DampingRatios = []float64{0.001, 0.005, 0.01, 0.02, 0.05, 0.1}
	}
	if c.SNRsDB == nil {
		c.SNRsDB = []float64{20, 40, 60}
	}
	if c.Trials <= 0 {
		c.Trials = 200
	}
	if c.Seed == 0 {
		c.Seed = 1
	}
	if c.Workers <= 0 {
		c.Workers = runtime.GOMAXPROCS(0)
	}
	if c.MinCycles <= 0 {
		c.MinCycles = 20
	}
	return c
}

// SampleRate is the rate used for a mode at f hertz: 25.6 samples per
// cycle (a common recorder ratio of rate to analysis band), at least 256 Hz
// and at most 51.2 kHz.
func SampleRate(f float64) float64 { return math.Min(51200, math.Max(256, 25.6*f)) }

// PulseWidth is the hammer contact time for a mode at f hertz: a quarter
// period, at most 2 ms, and at least 3 samples.
func PulseWidth(f, fs float64) float64 { return math.Max(3/fs, math.Min(0.002, 0.25/f)) }

// preTriggerSamples of quiet record before each hit.
const preTriggerSamples = 512

// Hit returns the synthetic hit of a one-mode cell. The record lasts until
// the envelope has sunk 25 % past the noise (in time), and at least
// minCycles cycles.
func Hit(f, zeta, snrDB, minCycles, phase float64, seed uint64, force bool) *synth.Hit {
	fs := SampleRate(f)
	modes := []synth.Mode{{FrequencyHz: f, DampingRatio: zeta, Amplitude: 1, Phase: phase}}
	return hitOf(modes, fs, snrDB, minCycles, seed, force)
}

func hitOf(modes []synth.Mode, fs, snrDB, minCycles float64, seed uint64, force bool) *synth.Hit {
	noise := synth.NoiseForSNR(modes, snrDB)
	dur := 0.0
	fmin := math.Inf(1)
	for _, m := range modes {
		sigma := m.DampingRatio * 2 * math.Pi * m.FrequencyHz
		dur = math.Max(dur, 1.25*math.Log(m.Amplitude/noise)/sigma)
		fmin = math.Min(fmin, m.FrequencyHz)
	}
	dur = math.Max(dur, minCycles/fmin)
	h := &synth.Hit{SampleRate: fs, PreTrigger: preTriggerSamples / fs, Modes: modes, NoiseSD: noise, Seed: seed}
	h.Duration = h.PreTrigger + dur
	if force {
		fmax := 0.0
		for _, m := range modes {
			fmax = math.Max(fmax, m.FrequencyHz)
		}
		h.PulseWidth = PulseWidth(fmax, fs)
		h.PulsePeak = 100
	}
	return h
}

// onsetOf returns the first sample after the hammer pulse (or the trigger
// without a force channel): the Cramer-Rao bound is computed on the free
// decay from there, the information the test physically provides.
func onsetOf(h *synth.Hit) int {
	return int(math.Ceil((h.PreTrigger + h.PulseWidth) * h.SampleRate))
}

// crb returns the Cramer-Rao bound of the cell's mode over the free decay
// of h.
func crb(h *synth.Hit) float64 {
	m := h.Modes[0]
	n0 := onsetOf(h)
	t := float64(n0)/h.SampleRate - h.PreTrigger
	wn := 2 * math.Pi * m.FrequencyHz
	sigma := m.DampingRatio * wn
	wd := wn * math.Sqrt(1-m.DampingRatio*m.DampingRatio)
	amp := m.Amplitude * math.Exp(-sigma*t)
	// the generator's sin(wd t + phi) is cos(wd t + phi - pi/2)
	phase := wd*t + m.Phase - math.Pi/2
	return modal.CRBZeta(m.FrequencyHz, m.DampingRatio, amp, phase, h.NoiseSD, h.SampleRate, h.Samples()-n0)
}

// nearest returns the mode of d nearest f within 5 %, or -1.
func nearest(d *modal.Decay, f float64) int {
	best, bi := math.Inf(1), -1
	for i, m := range d.Modes {
		if df := math.Abs(m.FrequencyHz-f) / f; df < 0.05 && df < best {
			best, bi = df, i
		}
	}
	return bi
}

// trialSeed derives a reproducible seed per cell and trial.
func trialSeed(seed uint64, cell, trial int) uint64 {
	r := rand.New(rand.NewPCG(seed, uint64(cell)<<32|uint64(trial)))
	return r.Uint64()
}

type cellKey struct{ f, z, snr float64 }

type trialOut struct {
	found     bool
	zeta, crb float64
	lo, hi    float64
}

// Run runs the Monte Carlo grid, prints the table to w and returns it.
// Signals come from pipeline/synth, an independent closed-form generator
// (textbook damped sines plus white Gaussian noise, sharing no code with
// the estimators); the estimator is modal.Analyze, the full path
// (trigger, onset, noise, bands, pencil, least squares). Cells run in
// parallel over cfg.Workers goroutines.
func Run(ctx context.Context, cfg Config, w io.Writer) (Table, error) {
	cfg = cfg.withDefaults()
	var cells []cellKey
	for _, f := range cfg.FrequenciesHz {
		for _, z := range cfg.DampingRatios {
			for _, s := range cfg.SNRsDB {
				cells = append(cells, cellKey{f, z, s})
			}
		}
	}
	type job struct{ cell, t0, t1 int }
	const chunk = 10
	var jobs []job
	for c := range cells {
		for t := 0; t < cfg.Trials; t += chunk {
			jobs = append(jobs, job{c, t, min(t+chunk, cfg.Trials)})
		}
	}
	out := make([][]trialOut, len(cells))
	for c := range out {
		out[c] = make([]trialOut, cfg.Trials)
	}
	var twoCases []twoModeCase
	if !cfg.SkipTwoMode {
		twoCases = twoModeCases(cfg.Quick)
	}
	twoOut := make([][]twoTrial, len(twoCases))
	for c := range twoOut {
		twoOut[c] = make([]twoTrial, cfg.Trials)
		for t := 0; t < cfg.Trials; t += chunk {
			jobs = append(jobs, job{-1 - c, t, min(t+chunk, cfg.Trials)})
		}
	}
	ch := make(chan job)
	var wg sync.WaitGroup
	var errMu sync.Mutex
	var firstErr error
	for range cfg.Workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for j := range ch {
				for t := j.t0; t < j.t1; t++ {
					if ctx.Err() != nil {
						return
					}
					var err error
					if j.cell >= 0 {
						out[j.cell][t], err = runTrial(cells[j.cell], cfg, j.cell, t)
					} else {
						c := -1 - j.cell
						twoOut[c][t], err = runTwoTrial(twoCases[c], cfg, c, t)
					}
					if err != nil {
						errMu.Lock()
						if firstErr == nil {
							firstErr = err
						}
						errMu.Unlock()
					}
				}
			}
		}()
	}
	for _, j := range jobs {
		select {
		case ch <- j:
		case <-ctx.Done():
		}
		if ctx.Err() != nil {
			break
		}
	}
	close(ch)
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return Table{}, err
	}
	if firstErr != nil {
		return Table{}, firstErr
	}
	tab := Table{Pass: true}
	for c, k := range cells {
		r := summarize(k, out[c])
		tab.Rows = append(tab.Rows, r)
		tab.Pass = tab.Pass && r.Pass
	}
	for c, tc := range twoCases {
		r := summarizeTwo(tc, twoOut[c])
		tab.TwoMode = append(tab.TwoMode, r)
		tab.Pass = tab.Pass && r.Pass
	}
	if w != nil {
		if err := tab.Print(w, cfg); err != nil {
			return tab, err
		}
	}
	return tab, nil
}

func runTrial(k cellKey, cfg Config, cell, trial int) (trialOut, error) {
	seed := trialSeed(cfg.Seed, cell, trial)
	phase := 2 * math.Pi * float64(seed>>11) / float64(1<<53)
	h := Hit(k.f, k.z, k.snr, cfg.MinCycles, phase, seed, !cfg.NoForce)
	d, err := modal.Analyze(h.Response(), h.SampleRate, h.Force(), modal.Options{})
	if err != nil {
		return trialOut{}, fmt.Errorf("accuracy: %g Hz, zeta %g, %g dB, trial %d: %w", k.f, k.z, k.snr, trial, err)
	}
	o := trialOut{crb: crb(h)}
	if i := nearest(d, k.f); i >= 0 {
		m := d.Modes[i]
		o.found, o.zeta, o.lo, o.hi = true, m.DampingRatio, m.DampingRatioCI[0], m.DampingRatioCI[1]
	}
	return o, nil
}

func summarize(k cellKey, ts []trialOut) Row {
	r := Row{FrequencyHz: k.f, Zeta: k.z, SNRdB: k.snr, SampleRate: SampleRate(k.f), Trials: len(ts)}
	var zs []float64
	var crb2 float64
	cover := 0
	for _, t := range ts {
		crb2 += t.crb * t.crb
		if !t.found {
			continue
		}
		r.Found++
		zs = append(zs, t.zeta)
		if t.lo <= k.z && k.z <= t.hi {
			cover++
		}
	}
	r.CRB = math.Sqrt(crb2 / float64(len(ts)))
	if len(zs) < 2 {
		return r
	}
	mean, sd := meanSD(zs)
	r.BiasPct = 100 * (mean - k.z) / k.z
	r.BiasSEPct = 100 * sd / math.Sqrt(float64(len(zs))) / k.z
	r.SD = sd
	r.SDRatio = sd / r.CRB
	r.CoveragePct = 100 * float64(cover) / float64(len(zs))
	r.Pass = r.Found == r.Trials && math.Abs(r.BiasPct) < TargetBiasPct && r.SDRatio <= TargetSDRatio &&
		r.CoveragePct >= TargetCoverageLo && r.CoveragePct <= TargetCoverageHi
	return r
}

func meanSD(v []float64) (mean, sd float64) {
	for _, x := range v {
		mean += x
	}
	mean /= float64(len(v))
	for _, x := range v {
		sd += (x - mean) * (x - mean)
	}
	return mean, math.Sqrt(sd / float64(len(v)-1))
}

// twoModeCase is a hit with two modes a factor 3.2 apart.
type twoModeCase struct{ f1, f2, z1, z2, snr float64 }

func twoModeCases(quick bool) []twoModeCase {
	if quick {
		return []twoModeCase{{100, 320, 0.01, 0.05, 40}}
	}
	return []twoModeCase{
		{100, 320, 0.01, 0.05, 40},
		{100, 320, 0.05, 0.01, 40},
		{100, 320, 0.01, 0.01, 40},
		{100, 320, 0.05, 0.05, 40},
		{100, 320, 0.02, 0.02, 40},
	}
}

type twoTrial struct {
	found bool
	err   [2]float64 // relative errors
}

func runTwoTrial(c twoModeCase, cfg Config, cell, trial int) (twoTrial, error) {
	seed := trialSeed(cfg.Seed^0x2d0d, cell, trial)
	r := rand.New(rand.NewPCG(seed, 7))
	modes := []synth.Mode{
		{FrequencyHz: c.f1, DampingRatio: c.z1, Amplitude: 0.5, Phase: 2 * math.Pi * r.Float64()},
		{FrequencyHz: c.f2, DampingRatio: c.z2, Amplitude: 0.5, Phase: 2 * math.Pi * r.Float64()},
	}
	h := hitOf(modes, SampleRate(c.f2), c.snr, cfg.MinCycles, seed, !cfg.NoForce)
	d, err := modal.Analyze(h.Response(), h.SampleRate, h.Force(), modal.Options{})
	if err != nil {
		return twoTrial{}, fmt.Errorf("accuracy: two modes %g/%g Hz, trial %d: %w", c.f1, c.f2, trial, err)
	}
	i1, i2 := nearest(d, c.f1), nearest(d, c.f2)
	if i1 < 0 || i2 < 0 {
		return twoTrial{}, nil
	}
	return twoTrial{found: true, err: [2]float64{
		(d.Modes[i1].DampingRatio - c.z1) / c.z1,
		(d.Modes[i2].DampingRatio - c.z2) / c.z2,
	}}, nil
}

func summarizeTwo(c twoModeCase, ts []twoTrial) TwoModeRow {
	r := TwoModeRow{F1: c.f1, F2: c.f2, Z1: c.z1, Z2: c.z2, SNRdB: c.snr, Trials: len(ts)}
	var e [2][]float64
	within := 0
	for _, t := range ts {
		if !t.found {
			continue
		}
		r.Found++
		ok := true
		for i := range 2 {
			e[i] = append(e[i], t.err[i])
			if math.Abs(t.err[i]) > TargetTwoModePct/100 {
				ok = false
			}
		}
		if ok {
			within++
		}
	}
	if r.Found == 0 {
		return r
	}
	for i := range 2 {
		var mean float64
		for _, v := range e[i] {
			mean += v
		}
		r.BiasPct[i] = 100 * mean / float64(len(e[i]))
		a := make([]float64, len(e[i]))
		for j, v := range e[i] {
			a[j] = math.Abs(v)
		}
		slices.Sort(a)
		r.P95Pct[i] = 100 * a[min(len(a)-1, int(math.Ceil(0.95*float64(len(a))))-1)]
	}
	r.WithinPct = 100 * float64(within) / float64(r.Trials)
	r.Pass = r.WithinPct >= TargetTwoModeRate
	return r
}

// Print writes the table.
func (t Table) Print(w io.Writer, cfg Config) error {
	cfg = cfg.withDefaults()
	path := "with hammer channel"
	if cfg.NoForce {
		path = "response only"
	}
	pw := &errWriter{w: w}
	pw.printf("Damping-ratio accuracy: synthetic one-mode hits (pipeline/synth), modal.Analyze %s, %d trials per cell, seed %d\n", path, cfg.Trials, cfg.Seed)
	pw.printf("Targets: |bias| < %.0f %%, sd <= %.2f x Cramer-Rao bound, 95 %% interval coverage %.0f-%.0f %%\n", TargetBiasPct, TargetSDRatio, TargetCoverageLo, TargetCoverageHi)
	pw.printf("(+/- se: standard error of the bias over the trials, and the binomial standard error of a 95 %% coverage)\n\n")
	pw.printf("%8s %7s %5s %8s %7s %9s %8s %10s %10s %7s %8s %7s  %s\n", "f [Hz]", "zeta", "SNR", "fs [Hz]", "found", "bias [%]", "+/- se", "sd", "CRB", "sd/CRB", "cover %", "+/- se", "result")
	for _, r := range t.Rows {
		res := "pass"
		if !r.Pass {
			res = "FAIL"
		}
		coverSE := 100 * math.Sqrt(0.95*0.05/float64(max(r.Found, 1)))
		pw.printf("%8g %7.4f %5g %8g %3d/%-3d %9.3f %8.3f %10.3g %10.3g %7.3f %8.1f %7.1f  %s\n",
			r.FrequencyHz, r.Zeta, r.SNRdB, r.SampleRate, r.Found, r.Trials, r.BiasPct, r.BiasSEPct, r.SD, r.CRB, r.SDRatio, r.CoveragePct, coverSE, res)
	}
	if len(t.TwoMode) > 0 {
		pw.printf("\nTwo modes a factor 3.2 apart, equal amplitudes; target: both zetas within %.0f %% in at least %.0f %% of the trials\n\n", TargetTwoModePct, TargetTwoModeRate)
		pw.printf("%7s %7s %7s %7s %5s %7s %10s %10s %10s %10s %9s  %s\n", "f1", "f2", "zeta1", "zeta2", "SNR", "found", "bias1 %", "bias2 %", "p95 1 %", "p95 2 %", "within %", "result")
		for _, r := range t.TwoMode {
			res := "pass"
			if !r.Pass {
				res = "FAIL"
			}
			pw.printf("%7g %7g %7.3f %7.3f %5g %3d/%-3d %10.3f %10.3f %10.3f %10.3f %9.1f  %s\n",
				r.F1, r.F2, r.Z1, r.Z2, r.SNRdB, r.Found, r.Trials, r.BiasPct[0], r.BiasPct[1], r.P95Pct[0], r.P95Pct[1], r.WithinPct, res)
		}
	}
	verdict := "ALL PASS"
	if !t.Pass {
		verdict = "SOME CELLS FAIL"
	}
	pw.printf("\n%s\n", verdict)
	return pw.err
}

type errWriter struct {
	w   io.Writer
	err error
}

func (e *errWriter) printf(format string, args ...any) {
	if e.err == nil {
		_, e.err = fmt.Fprintf(e.w, format, args...)
	}
}
