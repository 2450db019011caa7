package accuracy

import (
	"fmt"
	"math"
	"os"
	"strconv"
	"testing"

	"github.com/ringlog/ringlog/pipeline/modal"
)

func TestDevCell(t *testing.T) {
	if os.Getenv("ACC_CELL") == "" {
		t.Skip()
	}
	f, _ := strconv.ParseFloat(os.Getenv("ACC_F"), 64)
	z, _ := strconv.ParseFloat(os.Getenv("ACC_Z"), 64)
	snr, _ := strconv.ParseFloat(os.Getenv("ACC_S"), 64)
	n, _ := strconv.Atoi(os.Getenv("ACC_TRIALS"))
	cfg := Config{}.withDefaults()
	var outs []trialOut
	for trial := 0; trial < n; trial++ {
		seed := trialSeed(cfg.Seed, 999, trial)
		phase := 2 * math.Pi * float64(seed>>11) / float64(1<<53)
		h := Hit(f, z, snr, cfg.MinCycles, phase, seed, os.Getenv("ACC_NOFORCE") == "")
		d, _ := modal.Analyze(h.Response(), h.SampleRate, h.Force(), modal.Options{})
		o := trialOut{crb: crb(h)}
		if i := nearest(d, f); i >= 0 {
			m := d.Modes[i]
			o.found, o.zeta, o.lo, o.hi = true, m.DampingRatio, m.DampingRatioCI[0], m.DampingRatioCI[1]
			if e := (m.DampingRatio - z) / o.crb; math.Abs(e) > 3.5 {
				fmt.Printf("trial %d phase %.3f: zeta %.6g (%.1f CRB) sd %.3g  onset %d noise %.3g\n", trial, phase, m.DampingRatio, e, m.DampingRatioSD, d.Onset, d.NoiseRMS)
			}
		} else {
			fmt.Printf("trial %d: not found, %d modes\n", trial, len(d.Modes))
		}
		outs = append(outs, o)
	}
	r := summarize(cellKey{f, z, snr}, outs)
	fmt.Printf("%+v\n", r)
}
