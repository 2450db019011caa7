package modal

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/synth"
)

// The hits in these tests come from pipeline/synth, a closed-form generator
// independent of the estimators (textbook damped sines plus white Gaussian
// noise): they test Analyze against the physics of a damped oscillator.

// modeNear returns the mode of d nearest f within 2 %, or nil.
func modeNear(d *Decay, f float64) (*pipeline.Mode, *ModeDiag) {
	bi, best := -1, 0.02*f
	for i := range d.Modes {
		if df := math.Abs(d.Modes[i].FrequencyHz - f); df < best {
			bi, best = i, df
		}
	}
	if bi < 0 {
		return nil, nil
	}
	return &d.Modes[bi], &d.Diag[bi]
}

// crbOf is the Cramer-Rao bound of synth mode m of h over the record from
// sample n0 (the generator's sin is a cos with phase - pi/2).
func crbOf(h *synth.Hit, m synth.Mode, n0 int) float64 {
	t := float64(n0)/h.SampleRate - h.PreTrigger
	wn := 2 * math.Pi * m.FrequencyHz
	sigma := m.DampingRatio * wn
	wd := wn * math.Sqrt(1-m.DampingRatio*m.DampingRatio)
	return CRBZeta(m.FrequencyHz, m.DampingRatio, m.Amplitude*math.Exp(-sigma*t), wd*t+m.Phase-math.Pi/2, h.NoiseSD, h.SampleRate, h.Samples()-n0)
}

// Heavy damping (8-10 %) is not biased by band processing: a band filter
// rings at its own rate and hides a faster modal decay (DESIGN.md section
// 5), so the primary estimate must come out right on a hit that also has
// a lightly damped mode (which does get a shifted, decimated band). At
// 80 dB peak SNR the relative standard deviation of zeta is about 0.03 %,
// so 0.15 % is a bias test.
func TestAnalyzeHeavyDampingNotBiased(t *testing.T) {
	modes := []synth.Mode{
		{FrequencyHz: 150, DampingRatio: 0.08, Amplitude: 1, Phase: 0.4},
		{FrequencyHz: 900, DampingRatio: 0.10, Amplitude: 0.8, Phase: 1.9},
		{FrequencyHz: 40, DampingRatio: 0.005, Amplitude: 0.5, Phase: -1},
	}
	h := &synth.Hit{SampleRate: 12800, Duration: 3, PreTrigger: 0.05, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 80), Seed: 5, PulseWidth: 0.0002, PulsePeak: 50}
	d, err := Analyze(h.Response(), h.SampleRate, h.Force(), Options{})
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range modes {
		m, _ := modeNear(d, want.FrequencyHz)
		if m == nil {
			t.Fatalf("mode at %g Hz not found: %+v", want.FrequencyHz, d.Modes)
		}
		if e := (m.DampingRatio - want.DampingRatio) / want.DampingRatio; math.Abs(e) > 0.0015 {
			t.Errorf("%g Hz: zeta %.6f, true %.6f (%.3f %%)", want.FrequencyHz, m.DampingRatio, want.DampingRatio, 100*e)
		}
		if sub, ok := m.Estimate(MethodSubspace); !ok || math.Abs(sub.DampingRatio-want.DampingRatio) > 0.01*want.DampingRatio {
			t.Errorf("%g Hz: subspace estimate %+v, true zeta %g", want.FrequencyHz, sub, want.DampingRatio)
		}
	}
}

// Light damping (0.1 %) is not biased by spectral resolution: on a record
// of 100 cycles the half-power bandwidth cannot resolve it (its floor is
// 0.44 df / f_n = 0.44 %, DESIGN.md section 5), but the parametric
// estimate is not resolution-limited. Checked to 4 Cramer-Rao standard
// deviations or 0.5 %, whichever is larger.
func TestAnalyzeLightDampingNotResolutionLimited(t *testing.T) {
	modes := []synth.Mode{{FrequencyHz: 50, DampingRatio: 0.001, Amplitude: 1, Phase: 0.2}}
	h := &synth.Hit{SampleRate: 1280, Duration: 2.1, PreTrigger: 0.1, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 60), Seed: 9, PulseWidth: 0.002, PulsePeak: 50}
	d, err := Analyze(h.Response(), h.SampleRate, h.Force(), Options{})
	if err != nil {
		t.Fatal(err)
	}
	m, _ := modeNear(d, 50)
	if m == nil {
		t.Fatalf("mode not found: %+v", d.Modes)
	}
	df := h.SampleRate / float64(h.Samples()-d.Onset)
	if floor := 0.44 * df / 50; floor < 4*0.001 {
		t.Fatalf("test premise: resolution floor %.4f is not far above zeta", floor)
	}
	bound := crbOf(h, modes[0], d.Onset)
	if e := math.Abs(m.DampingRatio - 0.001); e > math.Max(4*bound, 0.005*0.001) {
		t.Errorf("zeta %.7f, true 0.001, error %.3g (CRB %.3g)", m.DampingRatio, e, bound)
	}
}

// Two close modes (2 Hz apart at 100 Hz, 3.3 half-power bandwidths) share
// one band and are fitted together; both come out within 2 % in damping,
// and neither is treated as band-isolated.
func TestAnalyzeCloseModesShareBand(t *testing.T) {
	modes := []synth.Mode{
		{FrequencyHz: 100, DampingRatio: 0.003, Amplitude: 1, Phase: 0},
		{FrequencyHz: 102, DampingRatio: 0.003, Amplitude: 0.7, Phase: 1},
	}
	h := &synth.Hit{SampleRate: 2560, Duration: 12, PreTrigger: 0.1, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 60), Seed: 3, PulseWidth: 0.002, PulsePeak: 50}
	d, err := Analyze(h.Response(), h.SampleRate, h.Force(), Options{})
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range modes {
		m, dg := modeNear(d, want.FrequencyHz)
		if m == nil {
			t.Fatalf("mode at %g Hz not found: %+v", want.FrequencyHz, d.Modes)
		}
		if math.Abs(m.FrequencyHz-want.FrequencyHz) > 5e-4*want.FrequencyHz {
			t.Errorf("f %.4f, true %g", m.FrequencyHz, want.FrequencyHz)
		}
		if e := math.Abs(m.DampingRatio-want.DampingRatio) / want.DampingRatio; e > 0.02 {
			t.Errorf("%g Hz: zeta %.6f, true %g", want.FrequencyHz, m.DampingRatio, want.DampingRatio)
		}
		if dg.Isolated {
			t.Errorf("%g Hz marked band-isolated next to a mode 2 Hz away", want.FrequencyHz)
		}
	}
}

// Exponential window (DESIGN.md section 5): the recorder's window
// exp(-t/tau) moves every pole from -sigma to -(sigma + 1/tau). Without
// the correction the damping reads high by about 1/(tau omega_n); with
// opt.WindowTauS every estimate is corrected.
func TestAnalyzeExponentialWindow(t *testing.T) {
	modes := []synth.Mode{{FrequencyHz: 80, DampingRatio: 0.002, Amplitude: 1, Phase: 0.5}}
	h := &synth.Hit{SampleRate: 2560, Duration: 8, PreTrigger: 0.05, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 70), Seed: 4, PulseWidth: 0.002, PulsePeak: 50}
	x := h.Response()
	tau := TauFromEndFraction(h.Duration, 0.01) // ends at 1 % of its start
	for i := range x {
		x[i] *= math.Exp(-float64(i) / h.SampleRate / tau)
	}
	wn := 2 * math.Pi * 80
	raw, err := Analyze(x, h.SampleRate, h.Force(), Options{})
	if err != nil {
		t.Fatal(err)
	}
	m, _ := modeNear(raw, 80)
	if m == nil {
		t.Fatal("mode not found without correction")
	}
	if want := 0.002 + 1/(tau*wn); math.Abs(m.DampingRatio-want) > 0.02*want {
		t.Errorf("uncorrected zeta %.6f, expected about %.6f", m.DampingRatio, want)
	}
	d, err := Analyze(x, h.SampleRate, h.Force(), Options{WindowTauS: tau})
	if err != nil {
		t.Fatal(err)
	}
	m, _ = modeNear(d, 80)
	if m == nil {
		t.Fatal("mode not found with correction")
	}
	if math.Abs(m.DampingRatio-0.002) > 0.005*0.002 {
		t.Errorf("corrected zeta %.6f, true 0.002", m.DampingRatio)
	}
	if m.DampingRatioCI[0] > 0.002 || m.DampingRatioCI[1] < 0.002 {
		t.Errorf("95 %% interval %v misses the true 0.002", m.DampingRatioCI)
	}
	for _, e := range m.Estimates {
		if math.Abs(e.DampingRatio-0.002) > 0.05*0.002 {
			t.Errorf("%s: corrected zeta %.6f, true 0.002", e.Method, e.DampingRatio)
		}
	}
	if len(m.Estimates) < 4 {
		t.Errorf("only %d estimates: %+v", len(m.Estimates), m.Estimates)
	}
}

// Nothing decays: white noise alone, and a steady sine in noise (a
// machine hum, not a structural mode), give no mode and no error.
func TestAnalyzeNoDecayingMode(t *testing.T) {
	r := rand.New(rand.NewPCG(8, 8))
	for trial := 0; trial < 5; trial++ {
		x := make([]float64, 20000)
		for i := range x {
			x[i] = r.NormFloat64()
		}
		d, err := Analyze(x, 5000, nil, Options{})
		if err != nil {
			t.Fatal(err)
		}
		if len(d.Modes) != 0 {
			t.Errorf("noise trial %d: modes %+v", trial, d.Modes)
		}
	}
	x := make([]float64, 30000)
	for i := range x {
		x[i] = math.Sin(2*math.Pi*50*float64(i)/5000+0.3) + 0.01*r.NormFloat64()
	}
	d, err := Analyze(x, 5000, nil, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(d.Modes) != 0 {
		t.Errorf("steady sine gave modes %+v", d.Modes)
	}
}

func TestAnalyzeBadInput(t *testing.T) {
	good := make([]float64, 1000)
	for i := range good {
		good[i] = math.Exp(-float64(i)/200) * math.Sin(float64(i)/3)
	}
	nan := append([]float64(nil), good...)
	nan[17] = math.NaN()
	inf := append([]float64(nil), good...)
	inf[3] = math.Inf(1)
	cases := []struct {
		name  string
		x     []float64
		fs    float64
		force []float64
		want  string
	}{
		{"too short", good[:10], 1000, nil, "10 samples"},
		{"all zero", make([]float64, 1000), 1000, nil, "constant"},
		{"NaN", nan, 1000, nil, "sample 17"},
		{"Inf", inf, 1000, nil, "sample 3"},
		{"rate", good, 0, nil, "sample rate"},
		{"force length", good, 1000, make([]float64, 999), "force channel has 999"},
	}
	for _, c := range cases {
		_, err := Analyze(c.x, c.fs, c.force, Options{})
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one mentioning %q", c.name, err, c.want)
		}
	}
}

// The fields of Decay and Mode against closed-form values of the
// generator: trigger and onset at the force pulse, noise, peak, energy
// shares (energy of A exp(-sigma t) sin(...) is about A^2 fs/(4 sigma)
// samples), ENR, SNR, usable cycles above 10 times the band noise, and the
// interval around the truth.
func TestAnalyzeFields(t *testing.T) {
	modes := []synth.Mode{
		{FrequencyHz: 60, DampingRatio: 0.01, Amplitude: 1, Phase: 0},
		{FrequencyHz: 330, DampingRatio: 0.02, Amplitude: 0.5, Phase: 1},
	}
	h := &synth.Hit{SampleRate: 5120, Duration: 3, PreTrigger: 0.1, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 60), Seed: 12, PulseWidth: 0.001, PulsePeak: 80}
	d, err := Analyze(h.Response(), h.SampleRate, h.Force(), Options{})
	if err != nil {
		t.Fatal(err)
	}
	if want := int(h.PreTrigger * h.SampleRate); d.Trigger < want-1 || d.Trigger > want+1 {
		t.Errorf("trigger %d, want %d", d.Trigger, want)
	}
	if want := int(math.Ceil((h.PreTrigger+h.PulseWidth)*h.SampleRate)) + filterSettle; d.Onset < want-1 || d.Onset > want+1 {
		t.Errorf("onset %d, want %d (end of the pulse and filterSettle samples for the anti-alias filter)", d.Onset, want)
	}
	if math.Abs(d.NoiseRMS-h.NoiseSD) > 0.1*h.NoiseSD {
		t.Errorf("noise %.4g, true %.4g", d.NoiseRMS, h.NoiseSD)
	}
	if len(d.Modes) != 2 || len(d.Diag) != 2 {
		t.Fatalf("%d modes, %d diagnostics", len(d.Modes), len(d.Diag))
	}
	energy := func(m synth.Mode) float64 {
		return m.Amplitude * m.Amplitude * h.SampleRate / (4 * m.DampingRatio * 2 * math.Pi * m.FrequencyHz)
	}
	etot := energy(modes[0]) + energy(modes[1])
	for i, want := range modes {
		m, dg := &d.Modes[i], &d.Diag[i]
		if math.Abs(m.FrequencyHz-want.FrequencyHz) > 1e-3*want.FrequencyHz {
			t.Errorf("mode %d: f %g, true %g", i, m.FrequencyHz, want.FrequencyHz)
		}
		if m.DampingRatioCI[0] > want.DampingRatio || m.DampingRatioCI[1] < want.DampingRatio {
			t.Errorf("mode %d: interval %v misses %g", i, m.DampingRatioCI, want.DampingRatio)
		}
		if m.FrequencyCI95[0] > want.FrequencyHz || m.FrequencyCI95[1] < want.FrequencyHz {
			t.Errorf("mode %d: frequency interval %v misses %g", i, m.FrequencyCI95, want.FrequencyHz)
		}
		if !(m.DampingRatioSD > 0) || math.Abs((m.DampingRatioCI[1]-m.DampingRatioCI[0])/(2*m.DampingRatioSD)-1.96) > 0.01 {
			t.Errorf("mode %d: sd %g and interval %v disagree", i, m.DampingRatioSD, m.DampingRatioCI)
		}
		// amplitude at the onset
		sigma := want.DampingRatio * 2 * math.Pi * want.FrequencyHz
		tOn := float64(d.Onset)/h.SampleRate - h.PreTrigger
		amp := want.Amplitude * math.Exp(-sigma*tOn)
		if math.Abs(m.Amplitude-amp) > 0.01*amp {
			t.Errorf("mode %d: amplitude %.4g, true %.4g", i, m.Amplitude, amp)
		}
		if share := energy(want) / etot; math.Abs(m.EnergyShare-share) > 0.02 {
			t.Errorf("mode %d: energy share %.4f, closed form %.4f", i, m.EnergyShare, share)
		}
		if enr := energy(want) / (h.NoiseSD * h.NoiseSD); math.Abs(dg.ENR-enr) > 0.15*enr {
			t.Errorf("mode %d: ENR %.4g, closed form %.4g", i, dg.ENR, enr)
		}
		if snr := 20 * math.Log10(amp/h.NoiseSD); math.Abs(m.DecaySNRdB-snr) > 1 {
			t.Errorf("mode %d: SNR %.2f dB, closed form %.2f", i, m.DecaySNRdB, snr)
		}
		// cycles until the envelope meets 10 x the noise in a band of
		// crossBandFactor x 7 half-power bandwidths
		bw := crossBandFactor * MinBandwidth(want.FrequencyHz, want.DampingRatio)
		nb := h.NoiseSD * math.Sqrt(2*bw/h.SampleRate)
		cyc := math.Log(amp/(10*nb)) / sigma * want.FrequencyHz
		if math.Abs(m.Cycles-cyc) > 0.1*cyc {
			t.Errorf("mode %d: %.1f cycles, closed form %.1f", i, m.Cycles, cyc)
		}
		if m.Estimates[0].Method != MethodNLS || m.Estimates[0].DampingRatio != m.DampingRatio {
			t.Errorf("mode %d: primary estimate first: %+v", i, m.Estimates[0])
		}
		for _, meth := range []string{MethodSubspace, MethodEnvelope, MethodLogDec, MethodHalfPower} {
			e, ok := m.Estimate(meth)
			if !ok {
				t.Errorf("mode %d: no %s estimate", i, meth)
				continue
			}
			if dv := math.Abs(e.DampingRatio-m.DampingRatio) / m.DampingRatio; dv > m.Spread+1e-12 {
				t.Errorf("mode %d: %s deviates %.3f, above the spread %.3f", i, meth, dv, m.Spread)
			}
		}
		if !dg.Isolated || !(dg.BandHighHz > dg.BandLowHz) || dg.UsableS <= 0 {
			t.Errorf("mode %d: diagnostics %+v", i, *dg)
		}
		if math.Abs(dg.ZetaEarly-want.DampingRatio) > 0.1*want.DampingRatio || math.Abs(dg.ZetaLate-want.DampingRatio) > 0.1*want.DampingRatio {
			t.Errorf("mode %d: early/late zeta %.5f/%.5f, true %g", i, dg.ZetaEarly, dg.ZetaLate, want.DampingRatio)
		}
		if !(dg.ExpRSS < dg.LinRSS) {
			t.Errorf("mode %d: exponential RSS %.3g not below linear %.3g", i, dg.ExpRSS, dg.LinRSS)
		}
	}
}

// A hammer bounce (second pulse 0.2 s after the first) ends the free decay
// used; the first decay still gives the damping.
func TestAnalyzeDoubleHit(t *testing.T) {
	modes := []synth.Mode{{FrequencyHz: 50, DampingRatio: 0.01, Amplitude: 1, Phase: 0}}
	h := &synth.Hit{SampleRate: 2560, Duration: 2, PreTrigger: 0.1, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 60), Seed: 2, PulseWidth: 0.002, PulsePeak: 50,
		DoubleHitDelay: 0.2, DoubleHitScale: 0.6}
	d, err := Analyze(h.Response(), h.SampleRate, h.Force(), Options{})
	if err != nil {
		t.Fatal(err)
	}
	m, _ := modeNear(d, 50)
	if m == nil {
		t.Fatalf("mode not found: %+v", d.Modes)
	}
	if e := math.Abs(m.DampingRatio-0.01) / 0.01; e > 0.02 {
		t.Errorf("zeta %.5f, true 0.01", m.DampingRatio)
	}
}

// Without a force channel the response alone locates the hit.
func TestAnalyzeResponseOnly(t *testing.T) {
	modes := []synth.Mode{{FrequencyHz: 120, DampingRatio: 0.02, Amplitude: 1, Phase: 0.3}}
	h := &synth.Hit{SampleRate: 3072, Duration: 1, PreTrigger: 0.1, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 40), Seed: 7}
	d, err := Analyze(h.Response(), h.SampleRate, nil, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if want := int(h.PreTrigger * h.SampleRate); d.Trigger < want-2 || d.Trigger > want+3 {
		t.Errorf("trigger %d, want about %d", d.Trigger, want)
	}
	m, _ := modeNear(d, 120)
	if m == nil {
		t.Fatalf("mode not found: %+v", d.Modes)
	}
	bound := crbOf(h, modes[0], d.Onset)
	if math.Abs(m.DampingRatio-0.02) > 4*bound {
		t.Errorf("zeta %.5f, true 0.02, CRB %.3g", m.DampingRatio, bound)
	}
	// a force channel that holds only noise (no pulse) is not used
	r := rand.New(rand.NewPCG(1, 2))
	f := make([]float64, h.Samples())
	for i := range f {
		f[i] = 0.01 * r.NormFloat64()
	}
	d2, err := Analyze(h.Response(), h.SampleRate, f, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if d2.Trigger != d.Trigger || d2.Onset != d.Onset {
		t.Errorf("noise-only force channel: trigger/onset %d/%d, response alone %d/%d", d2.Trigger, d2.Onset, d.Trigger, d.Onset)
	}
}

// A steady hum (50 Hz, never decaying) under a hit is fitted with the
// modes, so that it does not bias them, but it is not reported as a mode.
func TestAnalyzeIgnoresSteadyHum(t *testing.T) {
	modes := []synth.Mode{{FrequencyHz: 80, DampingRatio: 0.01, Amplitude: 1, Phase: 0.3}}
	h := &synth.Hit{SampleRate: 2048, Duration: 3, PreTrigger: 0.2, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 60), Seed: 6, PulseWidth: 0.002, PulsePeak: 50}
	x := h.Response()
	for i := range x {
		x[i] += 0.05 * math.Sin(2*math.Pi*50*float64(i)/h.SampleRate)
	}
	d, err := Analyze(x, h.SampleRate, h.Force(), Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(d.Modes) != 1 {
		t.Fatalf("%d modes, want the 80 Hz mode alone: %+v", len(d.Modes), d.Modes)
	}
	m := d.Modes[0]
	bound := crbOf(h, modes[0], d.Onset)
	if math.Abs(m.FrequencyHz-80) > 0.01 || math.Abs(m.DampingRatio-0.01) > 4*bound {
		t.Errorf("mode %.4f Hz, zeta %.6f (CRB %.2g)", m.FrequencyHz, m.DampingRatio, bound)
	}
}

// Odd records must not make Analyze panic or report non-finite numbers
// (project rule: bad input gives a clear error or a result, never a
// panic): an impulse, a step, a square wave, a random walk, a clipped sine,
// a non-oscillating exponential, alternating samples at the Nyquist
// frequency, a 64-sample decay, and a hit at the very end of the record.
func TestAnalyzeOddRecords(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 5))
	mk := func(n int, f func(i int) float64) []float64 {
		x := make([]float64, n)
		for i := range x {
			x[i] = f(i) + 1e-3*r.NormFloat64()
		}
		return x
	}
	walk := 0.0
	recs := map[string][]float64{
		"impulse":     mk(4000, func(i int) float64 { return map[bool]float64{true: 1}[i == 1000] }),
		"step":        mk(4000, func(i int) float64 { return map[bool]float64{true: 1}[i >= 1000] }),
		"square":      mk(4000, func(i int) float64 { return math.Copysign(1, math.Sin(float64(i)/20)) }),
		"random walk": mk(4000, func(int) float64 { walk += r.NormFloat64(); return walk }),
		"clipped":     mk(4000, func(i int) float64 { return math.Max(-0.3, math.Min(0.3, math.Sin(float64(i)/7))) }),
		"exponential": mk(4000, func(i int) float64 { return math.Exp(-float64(i) / 300) }),
		"nyquist":     mk(4000, func(i int) float64 { return float64(1 - 2*(i%2)) }),
		"short":       mk(64, func(i int) float64 { return math.Exp(-float64(i)/20) * math.Sin(float64(i)) }),
		"late hit": mk(4000, func(i int) float64 {
			if i < 3990 {
				return 0
			}
			return math.Sin(float64(i-3990) / 2)
		}),
	}
	for name, x := range recs {
		for _, force := range [][]float64{nil, mk(len(x), func(i int) float64 { return map[bool]float64{true: 5}[i == len(x)/4] })} {
			d, err := Analyze(x, 1000, force, Options{})
			if err != nil {
				t.Errorf("%s: %v", name, err)
				continue
			}
			for _, m := range d.Modes {
				for _, v := range []float64{m.FrequencyHz, m.DampingRatio, m.DampingRatioSD, m.DampingRatioCI[0], m.DampingRatioCI[1], m.Amplitude, m.EnergyShare} {
					if math.IsNaN(v) || math.IsInf(v, 0) {
						t.Errorf("%s: non-finite value in %+v", name, m)
						break
					}
				}
			}
		}
	}
}
