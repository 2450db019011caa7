package main

import (
	"fmt"
	"io"
	"strings"

	"github.com/ringlog/ringlog/pipeline"
)

// printAmplitudeCurves writes, per mode with an amplitude curve, its
// damping ratio against the amplitude along the decay (largest amplitude
// first), for the human view of `analyze`.
func printAmplitudeCurves(w io.Writer, r *pipeline.Result) {
	for i, m := range r.Modes {
		if len(m.AmplitudeDamping) == 0 {
			continue
		}
		fmt.Fprintf(w, "  mode %d damping ratio against amplitude (amplitude in channel %s units: zeta %%, 95 %% interval):\n", i+1, r.Channel)
		if m.MergedPoles > 0 {
			fmt.Fprintf(w, "    one mode whose decay is not exponential: %d close poles of the fit merged\n", m.MergedPoles)
		}
		var parts []string
		for _, b := range m.AmplitudeDamping {
			parts = append(parts, fmt.Sprintf("%.4g: %.3f (%.3f .. %.3f)", b.Amplitude,
				100*b.DampingRatio, 100*b.DampingRatioCI[0], 100*b.DampingRatioCI[1]))
		}
		for len(parts) > 0 {
			n := min(3, len(parts))
			fmt.Fprintf(w, "    %s\n", strings.Join(parts[:n], "   "))
			parts = parts[n:]
		}
	}
}
