package modal_test

import (
	"fmt"

	"github.com/ringlog/ringlog/pipeline/modal"
	"github.com/ringlog/ringlog/pipeline/synth"
)

// A synthetic hit (pipeline/synth: two damped modes, white noise, a
// half-sine hammer pulse) analysed with its force channel.
func ExampleAnalyze() {
	modes := []synth.Mode{
		{FrequencyHz: 42, DampingRatio: 0.012, Amplitude: 1},
		{FrequencyHz: 156, DampingRatio: 0.025, Amplitude: 0.4, Phase: 1},
	}
	hit := &synth.Hit{SampleRate: 2048, Duration: 4, PreTrigger: 0.25, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 50), Seed: 7, PulseWidth: 0.002, PulsePeak: 200}
	d, err := modal.Analyze(hit.Response(), hit.SampleRate, hit.Force(), modal.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("impact at sample %d, free decay from sample %d\n", d.Trigger, d.Onset)
	for _, m := range d.Modes {
		fmt.Printf("%.2f Hz: damping ratio %.3f %% (95 %% interval %.3f-%.3f %%), %.0f %% of the energy\n",
			m.FrequencyHz, 100*m.DampingRatio, 100*m.DampingRatioCI[0], 100*m.DampingRatioCI[1], 100*m.EnergyShare)
	}
	// Output:
	// impact at sample 513, free decay from sample 520
	// 42.00 Hz: damping ratio 1.198 % (95 % interval 1.197-1.200 %), 98 % of the energy
	// 156.01 Hz: damping ratio 2.506 % (95 % interval 2.480-2.532 %), 2 % of the energy
}
