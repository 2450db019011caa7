package read

import (
	"errors"
	"math"
	"strings"
	"testing"

	"github.com/ringlog/ringlog/pipeline"
)

// wantErr checks that err is an *Error for file name at line (0: not
// checked when < 0) whose message holds every fragment, and returns it.
func wantErr(t *testing.T, err error, name string, line int, fragments ...string) *Error {
	t.Helper()
	if err == nil {
		t.Fatalf("want an error containing %q, got none", fragments)
	}
	var e *Error
	if !errors.As(err, &e) {
		t.Fatalf("error %v (%T) is not a *read.Error", err, err)
	}
	if e.File != name {
		t.Errorf("Error.File = %q, want %q", e.File, name)
	}
	if !strings.HasPrefix(err.Error(), name+": ") {
		t.Errorf("message %q does not start with the file name", err.Error())
	}
	if line >= 0 && e.Line != line {
		t.Errorf("Error.Line = %d, want %d (%v)", e.Line, line, err)
	}
	for _, f := range fragments {
		if !strings.Contains(err.Error(), f) {
			t.Errorf("message %q does not contain %q", err.Error(), f)
		}
	}
	return e
}

// checkConsistent asserts what every reader promises on success.
func checkConsistent(t testing.TB, rec *pipeline.Recording) {
	t.Helper()
	if rec == nil || len(rec.Channels) == 0 {
		t.Fatalf("recording without channels: %+v", rec)
	}
	n := len(rec.Channels[0].Samples)
	force := 0
	for _, c := range rec.Channels {
		if !(c.SampleRate > 0) || math.IsInf(c.SampleRate, 0) {
			t.Fatalf("channel %q: sample rate %g", c.Name, c.SampleRate)
		}
		if len(c.Samples) != n || n == 0 {
			t.Fatalf("channel %q: %d samples, first channel %d", c.Name, len(c.Samples), n)
		}
		for i, v := range c.Samples {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				t.Fatalf("channel %q sample %d = %g", c.Name, i, v)
			}
		}
		switch c.Role {
		case pipeline.RoleForce:
			force++
		case pipeline.RoleResponse:
		default:
			t.Fatalf("channel %q: role %q", c.Name, c.Role)
		}
	}
	if force > 1 {
		t.Fatalf("%d force channels", force)
	}
}

// decay is the closed-form free response of a viscously damped
// single-degree-of-freedom oscillator released at t0 (zero before):
// A exp(-zeta wn t) sin(wd t), wd = wn sqrt(1 - zeta^2). Written here from
// the textbook formula, not taken from pipeline/synth.
func decay(i int, fs, t0, amp, fn, zeta float64) float64 {
	t := float64(i)/fs - t0
	if t < 0 {
		return 0
	}
	wn := 2 * math.Pi * fn
	return amp * math.Exp(-zeta*wn*t) * math.Sin(wn*math.Sqrt(1-zeta*zeta)*t)
}

// halfSine is the hammer pulse: P sin(pi t / width) for 0 <= t <= width.
func halfSine(i int, fs, t0, peak, width float64) float64 {
	t := float64(i)/fs - t0
	if t < 0 || t > width {
		return 0
	}
	return peak * math.Sin(math.Pi*t/width)
}

func floatsNear(t *testing.T, what string, got, want []float64, abs, rel float64) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%s: %d samples, want %d", what, len(got), len(want))
	}
	for i := range got {
		if d := math.Abs(got[i] - want[i]); d > abs+rel*math.Abs(want[i]) {
			t.Fatalf("%s[%d] = %.17g, want %.17g (diff %g)", what, i, got[i], want[i], d)
		}
	}
}
