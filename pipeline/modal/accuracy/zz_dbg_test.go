package accuracy

import (
	"fmt"
	"math"
	"testing"

	"github.com/ringlog/ringlog/pipeline/modal"
)

func TestDevMiss(t *testing.T) {
	cfg := Config{Quick: true}.withDefaults()
	k := cellKey{1000, 0.1, 60}
	for trial := 0; trial < 40; trial++ {
		seed := trialSeed(cfg.Seed, 11, trial)
		phase := 2 * math.Pi * float64(seed>>11) / float64(1<<53)
		h := Hit(k.f, k.z, k.snr, cfg.MinCycles, phase, seed, true)
		d, _ := modal.Analyze(h.Response(), h.SampleRate, h.Force(), modal.Options{})
		if nearest(d, k.f) < 0 {
			fmt.Println("seed", seed, "dur", h.Duration, "pw", h.PulseWidth, "trial", trial, "phase", phase, "onset", d.Onset, "noise", d.NoiseRMS, len(d.Modes))
			for _, m := range d.Modes { fmt.Println(m.FrequencyHz, m.DampingRatio) }
		}
	}
}
