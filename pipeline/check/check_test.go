// Check values in this file: the inputs are hand-built decays; the limits
// are the default thresholds of thresholds.go, each marked there as common
// practice or our own choice; messages quote the numbers they were given.

package check

import (
	"fmt"
	"math"
	"reflect"
	"strings"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/modal"
	"github.com/ringlog/ringlog/pipeline/synth"
)

// An ordinary good hit (one mode, 40 dB, 1 % damping, clean half-sine
// pulse) and good multi-mode hits raise nothing at the defaults, for
// several noise draws.
func TestRunGoodHits(t *testing.T) {
	th := DefaultThresholds()
	for seed := uint64(1); seed <= 10; seed++ {
		h := goodHit()
		h.Seed = seed
		wantNone(t, Run(input(h), th))
		m := multiHit()
		m.Seed = seed
		wantNone(t, Run(input(m), th))
	}
	// Two modes far apart, no force channel.
	h := goodHit()
	h.PulseWidth = 0
	h.Modes = append(h.Modes, synth.Mode{FrequencyHz: 310, DampingRatio: 0.007, Amplitude: 12})
	in := input(h)
	if in.Force != nil {
		t.Fatal("want no force channel")
	}
	wantNone(t, Run(in, th))
}

// Each bad hit gives its own code through Run.
func TestRunBadHits(t *testing.T) {
	clipped := goodHit()
	clipped.ClipLevel = 12
	double := goodHit()
	double.DoubleHitDelay, double.DoubleHitScale = 0.03, 0.4
	for _, c := range []struct {
		name string
		in   Input
		want string
	}{
		{"clipped", input(clipped), CodeClipped},
		{"double", input(double), CodeDoubleStrike},
		{"excitation", input(excitationHit(0.004)), CodeUnderExcited},
	} {
		rs := Run(c.in, DefaultThresholds())
		found := false
		for _, r := range rs {
			found = found || r.Code == c.want
		}
		if !found {
			t.Errorf("%s: got %v, want %q among them", c.name, codes(rs), c.want)
		}
	}
}

// No input makes a rule panic.
func TestRunOddInputs(t *testing.T) {
	nan := math.NaN()
	good := input(goodHit())
	oddDecays := []*modal.Decay{
		nil,
		{},
		{Trigger: -5, Onset: -1, NoiseRMS: nan, Peak: nan},
		{Trigger: 1 << 30, Onset: 1 << 30},
		{Modes: []pipeline.Mode{{}}},
		{Modes: []pipeline.Mode{{FrequencyHz: nan, DampingRatio: nan, Amplitude: nan, EnergyShare: nan, Cycles: nan, Spread: nan}},
			Diag: []modal.ModeDiag{{ENR: nan, ZetaEarly: nan, ZetaLate: nan, ExpRSS: nan, LinRSS: nan, UsableS: nan}}},
		{Modes: []pipeline.Mode{{FrequencyHz: 1e9, DampingRatio: 2, Amplitude: -1, Estimates: []pipeline.Estimate{{}, {Method: MethodHalfPower}}}},
			Diag: []modal.ModeDiag{{}, {}, {}}},
		{Modes: good.Decay.Modes, Diag: good.Decay.Diag[:0], Trigger: 3},
	}
	oddChannels := []*pipeline.Channel{
		nil,
		{},
		{SampleRate: fsTest},
		{SampleRate: fsTest, Samples: []float64{1}},
		{SampleRate: fsTest, Samples: []float64{nan, math.Inf(1), -1, 0}},
		{SampleRate: nan, Samples: []float64{1, 2, 3}},
		{SampleRate: fsTest, Samples: make([]float64, 100), FullScale: 1},
		good.Response,
		good.Force,
	}
	th := DefaultThresholds()
	n := 0
	for _, d := range oddDecays {
		for _, resp := range oddChannels {
			for _, force := range oddChannels {
				for _, rec := range []*pipeline.Recording{nil, {Meta: map[string]string{MetaExpectSingleMode: "maybe", MetaTargetHz: "x"}}} {
					func() {
						defer func() {
							if p := recover(); p != nil {
								t.Fatalf("panic with decay %+v, response %v, force %v: %v", d, resp != nil, force != nil, p)
							}
						}()
						Run(Input{Rec: rec, Response: resp, Force: force, Decay: d}, th)
						n++
					}()
				}
			}
		}
	}
	if n == 0 {
		t.Fatal("nothing ran")
	}
}

func TestDescribe(t *testing.T) {
	tags := map[string]bool{}
	rt := reflect.TypeOf(Thresholds{})
	for i := 0; i < rt.NumField(); i++ {
		f := rt.Field(i)
		tk, js := f.Tag.Get("toml"), f.Tag.Get("json")
		if tk == "" || tk != js {
			t.Errorf("field %s: toml tag %q and json tag %q must be equal and set", f.Name, tk, js)
		}
		tags[tk] = false
	}
	seen := map[string]bool{}
	for _, ri := range Describe() {
		if seen[ri.Code] {
			t.Errorf("code %q described twice", ri.Code)
		}
		seen[ri.Code] = true
		// hit_time_in_future is given where hits are recorded, by a fixed
		// allowance for clocks, not by a rule with thresholds.
		if ri.Summary == "" || ri.Severity == "" || ri.Thresholds == nil || (len(ri.Thresholds) == 0 && ri.Code != CodeFutureHitTime) {
			t.Errorf("code %q: incomplete description %+v", ri.Code, ri)
		}
		if ri.Code != strings.ToLower(ri.Code) || strings.ContainsAny(ri.Code, " -") {
			t.Errorf("code %q is not lower-case snake words", ri.Code)
		}
		for _, k := range ri.Thresholds {
			if _, ok := tags[k]; !ok {
				t.Errorf("code %q lists unknown threshold %q", ri.Code, k)
			}
			tags[k] = true
		}
	}
	for k, used := range tags {
		if !used {
			t.Errorf("threshold %q is used by no rule", k)
		}
	}
	for _, c := range []string{CodeClipped, CodeDoubleStrike, CodePreRinging, CodeNoLeadIn, CodeNoDecay, CodeUnderExcited,
		CodeShortDecay, CodeMixedModes, CodeBeatingModes, CodeFrictionDecay, CodeDampingDrift, CodeEstimatesApart,
		CodeTransient, CodeModeLimit, CodeAmplitudeDamping, CodeFutureHitTime} {
		if !seen[c] {
			t.Errorf("code %q not described", c)
		}
	}
	// Every code has an effect of its own (not the default for unknown
	// codes), every classified code is described, and a code that rejects
	// a hit or drops a mode doubts.
	for _, ri := range Describe() {
		e, ok := effects[ri.Code]
		if !ok || ri.Effect != e {
			t.Errorf("code %q: effect %q, classified %v", ri.Code, ri.Effect, ok)
		}
		if ri.Severity != pipeline.SeverityFlag && e != Doubts {
			t.Errorf("code %q (%s) informs only", ri.Code, ri.Severity)
		}
	}
	for c := range effects {
		if !seen[c] {
			t.Errorf("classified code %q is not described", c)
		}
	}
	if Effect("made_up_code") != Doubts || Effect(CodeBeatingModes) != Doubts || Effect(CodeModeLimit) != Informs {
		t.Error("Effect: unknown codes doubt, beating_modes doubts, mode_limit informs")
	}
	for _, r := range Rules() {
		if !seen[r.Code()] {
			t.Errorf("rule code %q not described", r.Code())
		}
	}
}

func TestThresholdsValidate(t *testing.T) {
	if err := DefaultThresholds().Validate(); err != nil {
		t.Fatalf("defaults invalid: %v", err)
	}
	th := DefaultThresholds()
	th.ClipFlatRun = 1
	th.StrikeRiseFraction = 0.01 // below the return fraction
	th.MaxOtherEnergyShare = math.NaN()
	err := th.Validate()
	if err == nil {
		t.Fatal("want an error")
	}
	for _, k := range []string{"clip_flat_run", "strike_rise_fraction", "max_other_energy_share"} {
		if !strings.Contains(err.Error(), k) {
			t.Errorf("error %q does not name %s", err, k)
		}
	}
}

func ExampleRun() {
	// A hit whose amplifier saturated at 12 m/s^2, with what the
	// estimators found in it (here written by hand).
	h := synth.Hit{
		SampleRate: 4000, Duration: 1, PreTrigger: 0.05, Seed: 1,
		Modes:      []synth.Mode{{FrequencyHz: 60, DampingRatio: 0.01, Amplitude: 20}},
		NoiseSD:    0.2,
		PulseWidth: 0.001, PulsePeak: 200,
		ClipLevel: 12,
	}
	resp := pipeline.Channel{Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: 4000, Samples: h.Response()}
	force := pipeline.Channel{Name: "force", Unit: "N", Role: pipeline.RoleForce, SampleRate: 4000, Samples: h.Force()}
	decay := &modal.Decay{
		Trigger: 200, Onset: 204, NoiseRMS: 0.2, Peak: 12,
		Modes: []pipeline.Mode{{FrequencyHz: 60, DampingRatio: 0.0104, Amplitude: 17, EnergyShare: 1, Cycles: 35,
			Estimates: []pipeline.Estimate{{Method: "subspace", DampingRatio: 0.0104}}}},
		Diag: []modal.ModeDiag{{UsableS: 0.6, ENR: 1e6, ZetaEarly: 0.0102, ZetaLate: 0.0101, ExpRSS: 1, LinRSS: 4, Isolated: true}},
	}
	for _, r := range Run(Input{Response: &resp, Force: &force, Decay: decay}, DefaultThresholds()) {
		fmt.Println(r.Severity, r.Code)
	}
	// Output:
	// reject clipped
}

func BenchmarkRun(b *testing.B) {
	in := input(multiHit())
	th := DefaultThresholds()
	b.ResetTimer()
	for b.Loop() {
		Run(in, th)
	}
}
