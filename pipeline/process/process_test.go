package process_test

import (
	"context"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/check"
	"github.com/ringlog/ringlog/pipeline/process"
)

// TestRuleFiles runs each rule test file of testdata/rules through the whole
// pipeline (reader, estimators, rules, verdict). The files come from the
// closed-form generator pipeline/synth (testdata/rules/README.md says how
// each was made); the expected codes are the rule definitions of DESIGN.md
// section 4 applied to the generator's known faults.
func TestRuleFiles(t *testing.T) {
	cases := []struct {
		file     string
		want     []string // codes that must be among the reasons
		wantNot  []string // codes that must not be
		none     bool     // no reason at all
		verdicts []pipeline.Verdict
	}{
		{file: "good-ok.csv", none: true, verdicts: []pipeline.Verdict{pipeline.Accepted}},
		{file: "good-multi-ok.csv", none: true, verdicts: []pipeline.Verdict{pipeline.Accepted}},
		{file: "clipping-bad.csv", want: []string{check.CodeClipped}, verdicts: []pipeline.Verdict{pipeline.Rejected}},
		{file: "double-strike-bad.csv", want: []string{check.CodeDoubleStrike}, verdicts: []pipeline.Verdict{pipeline.Rejected}},
		{file: "double-strike-ok.csv", wantNot: []string{check.CodeDoubleStrike}},
		{file: "excitation-bad.csv", want: []string{check.CodeUnderExcited}},
		{file: "excitation-ok.csv", wantNot: []string{check.CodeUnderExcited}},
		{file: "short-decay-bad.csv", want: []string{check.CodeShortDecay}, verdicts: []pipeline.Verdict{pipeline.Rejected}},
		{file: "short-decay-ok.csv", wantNot: []string{check.CodeShortDecay}},
		{file: "several-modes-bad.csv", want: []string{check.CodeMixedModes}},
		{file: "several-modes-ok.csv", wantNot: []string{check.CodeMixedModes}},
		{file: "close-modes-bad.csv", want: []string{check.CodeBeatingModes}, wantNot: []string{check.CodeFrictionDecay}},
		{file: "close-modes-ok.csv", wantNot: []string{check.CodeBeatingModes}},
		{file: "non-viscous-bad.csv", want: []string{check.CodeFrictionDecay}},
		{file: "no-decay-bad.csv", want: []string{check.CodeNoDecay}, verdicts: []pipeline.Verdict{pipeline.Rejected}},
		{file: "pre-trigger-bad.csv", want: []string{check.CodePreRinging}, verdicts: []pipeline.Verdict{pipeline.Rejected}},
		{file: "no-lead-in-bad.csv", want: []string{check.CodeNoLeadIn}, wantNot: []string{check.CodePreRinging}},
	}
	for _, c := range cases {
		t.Run(c.file, func(t *testing.T) {
			res, err := process.File(context.Background(), filepath.Join("..", "..", "testdata", "rules", c.file), process.Defaults())
			if err != nil {
				t.Fatal(err)
			}
			codes := map[string]bool{}
			for _, r := range res.Reasons {
				codes[r.Code] = true
			}
			if c.none && len(res.Reasons) > 0 {
				t.Errorf("want no reason, got %+v", res.Reasons)
			}
			for _, w := range c.want {
				if !codes[w] {
					t.Errorf("want reason %q, got %+v", w, res.Reasons)
				}
			}
			for _, w := range c.wantNot {
				if codes[w] {
					t.Errorf("reason %q raised on a file that must not raise it: %+v", w, res.Reasons)
				}
			}
			if len(c.verdicts) > 0 && res.Verdict != c.verdicts[0] {
				t.Errorf("verdict %s, want %s (reasons %+v)", res.Verdict, c.verdicts[0], res.Reasons)
			}
			for i := 1; i < len(res.Modes); i++ {
				if res.Modes[i].FrequencyHz < res.Modes[i-1].FrequencyHz {
					t.Errorf("modes not in ascending frequency: %v", res.Modes)
				}
			}
		})
	}
}

// TestGoodHitNumbers checks the primary estimate of the good reference hit
// against the generator's parameters (60 Hz, 1 % damping; closed-form
// generator pipeline/synth, testdata/rules/README.md) within its interval.
func TestGoodHitNumbers(t *testing.T) {
	res, err := process.File(context.Background(), filepath.Join("..", "..", "testdata", "rules", "good-ok.csv"), process.Defaults())
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Modes) != 1 {
		t.Fatalf("want one mode, got %d: %+v", len(res.Modes), res.Modes)
	}
	m := res.Modes[0]
	if math.Abs(m.FrequencyHz-60) > 0.05 {
		t.Errorf("f_n = %.4f Hz, want 60", m.FrequencyHz)
	}
	// 4 standard errors: fails with probability < 1e-4 for a correct estimator.
	if math.Abs(m.DampingRatio-0.01) > 4*m.DampingRatioSD || m.DampingRatioSD <= 0 {
		t.Errorf("zeta = %.5f +/- %.5f, want 0.01", m.DampingRatio, m.DampingRatioSD)
	}
	if !(m.DampingRatioCI[0] < m.DampingRatio && m.DampingRatio < m.DampingRatioCI[1]) {
		t.Errorf("interval %v does not contain the estimate %v", m.DampingRatioCI, m.DampingRatio)
	}
	if res.ForceChannel == "" {
		t.Error("force channel not found by name")
	}
}

// TestChannelErrors: asking for a channel the file does not have is an
// error that names the file and lists the channels.
func TestChannelErrors(t *testing.T) {
	opt := process.Defaults()
	opt.Channel = "strain"
	_, err := process.File(context.Background(), filepath.Join("..", "..", "testdata", "rules", "good-ok.csv"), opt)
	if err == nil {
		t.Fatal("want an error for a missing channel")
	}
	for _, want := range []string{"good-ok.csv", "strain", "accel"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("error %q does not mention %q", err, want)
		}
	}
}

// TestCalibrationFormats: a channel sensitivity applies to the formats it
// lists only (a CSV export already in engineering units is not divided
// again), and to every format when none are listed. The expected values
// are the generator's 60 Hz, 20 m/s^2 mode (testdata/rules/README.md)
// divided by the sensitivity or not.
func TestCalibrationFormats(t *testing.T) {
	path := filepath.Join("..", "..", "testdata", "rules", "good-ok.csv")
	amp := func(cal map[string]process.Calibration) float64 {
		opt := process.Defaults()
		opt.Calibration = cal
		res, err := process.File(context.Background(), path, opt)
		if err != nil {
			t.Fatal(err)
		}
		if len(res.Modes) == 0 {
			t.Fatal("no mode")
		}
		return res.Modes[0].Amplitude
	}
	plain := amp(nil)
	if got := amp(map[string]process.Calibration{"accel": {Sensitivity: 2, Formats: []string{"wav"}}}); got != plain {
		t.Errorf("a WAV-only sensitivity changed a CSV file: amplitude %v, want %v", got, plain)
	}
	if got := amp(map[string]process.Calibration{"accel": {Sensitivity: 2}}); math.Abs(got-plain/2) > 1e-9*plain {
		t.Errorf("sensitivity 2 for all formats: amplitude %v, want %v", got, plain/2)
	}
}
