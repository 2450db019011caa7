package check

import (
	"fmt"
	"math"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/modal"
	"github.com/ringlog/ringlog/pipeline/robust"
	"gonum.org/v1/gonum/stat"
)

// finite reports whether v is neither NaN nor infinite.
func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// usable reports whether a channel has samples and a sample rate.
func usable(ch *pipeline.Channel) bool {
	return ch != nil && len(ch.Samples) > 0 && ch.SampleRate > 0 && finite(ch.SampleRate)
}

// modes returns the modes of the decay, nil when there is none.
func modes(in Input) []pipeline.Mode {
	if in.Decay == nil {
		return nil
	}
	return in.Decay.Modes
}

// diag returns the diagnostics of mode i when the estimators filled them.
func diag(in Input, i int) (modal.ModeDiag, bool) {
	if in.Decay == nil || i < 0 || i >= len(in.Decay.Diag) || len(in.Decay.Diag) != len(in.Decay.Modes) {
		return modal.ModeDiag{}, false
	}
	return in.Decay.Diag[i], true
}

// modeName names a mode by its frequency for messages.
func modeName(m pipeline.Mode) string {
	return "mode at " + hz(m.FrequencyHz)
}

// hz formats a frequency for messages.
func hz(f float64) string {
	switch {
	case !finite(f):
		return "? Hz"
	case math.Abs(f) < 10:
		return fmt.Sprintf("%.2f Hz", f)
	default:
		return fmt.Sprintf("%.1f Hz", f)
	}
}

// pct formats a fraction as a percentage.
func pct(v float64) string {
	a := math.Abs(v * 100)
	switch {
	case a < 1:
		return fmt.Sprintf("%.2f %%", v*100)
	case a < 10:
		return fmt.Sprintf("%.1f %%", v*100)
	default:
		return fmt.Sprintf("%.0f %%", v*100)
	}
}

// channelLabel names a channel for messages.
func channelLabel(ch *pipeline.Channel) string {
	role := string(ch.Role)
	if role == "" {
		role = "channel"
	}
	if ch.Name == "" {
		return role + " channel"
	}
	return fmt.Sprintf("%s channel %q", role, ch.Name)
}

// median returns the median of the finite values of x (0 for none).
func median(x []float64) float64 {
	s := make([]float64, 0, len(x))
	for _, v := range x {
		if finite(v) {
			s = append(s, v)
		}
	}
	if len(s) == 0 {
		return 0
	}
	// Selection instead of a full sort: a force channel of a long record
	// has close to a million samples.
	return robust.MedianInPlace(s)
}

// robustSD returns 1.4826 times the median absolute deviation from the
// median, a standard deviation estimate that a pulse in the data barely
// moves (the factor makes it unbiased for Gaussian noise).
func robustSD(x []float64, center float64) float64 {
	d := make([]float64, 0, len(x))
	for _, v := range x {
		if finite(v) {
			d = append(d, math.Abs(v-center))
		}
	}
	return 1.4826 * median(d)
}

// rmsAboutMean returns the standard deviation (population form) of the
// finite values of x, 0 for fewer than two.
func rmsAboutMean(x []float64) float64 {
	var s []float64
	for _, v := range x {
		if finite(v) {
			s = append(s, v)
		}
	}
	if len(s) < 2 {
		return 0
	}
	_, sd := stat.PopMeanStdDev(s, nil)
	return sd
}

// peakAbs returns the largest finite |x[i]|.
func peakAbs(x []float64) float64 {
	p := 0.0
	for _, v := range x {
		if finite(v) && math.Abs(v) > p {
			p = math.Abs(v)
		}
	}
	return p
}

// qty formats a value with its unit ("12 m/s^2", or "12" without unit).
func qty(v float64, unit string) string {
	if unit == "" {
		return fmt.Sprintf("%.4g", v)
	}
	return fmt.Sprintf("%.4g %s", v, unit)
}
