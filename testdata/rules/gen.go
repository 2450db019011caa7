//go:build ignore

// gen writes the quality-rule test hits of testdata/rules: small CSV
// files made with pipeline/synth, one that must raise each rule's reason
// code and one that must not. Run it once from the repository root:
//
//	go run ./testdata/rules/gen.go
//
// The files are committed; README.md beside them lists each file, how it
// was made and what it must raise. Every hit is 1 s at 4000 Hz (a time
// step of exactly 0.00025 s, so the time column is exact in 5 decimals),
// with a force column in N and an acceleration column in m/s^2.
package main

import (
	"bufio"
	"fmt"
	"log"
	"os"
	"path/filepath"
	"strconv"

	"github.com/ringlog/ringlog/pipeline/synth"
)

const (
	fs       = 4000.0 // Hz
	duration = 1.0    // s
	lead     = 0.05   // s of quiet record before the hit
	snrDB    = 40     // peak signal-to-noise ratio of the response
)

// base is the ordinary good hit the others vary: one mode at 60 Hz with
// 1 % damping and 20 m/s^2, a 1 ms half-sine blow of 200 N.
func base(seed uint64, modes ...synth.Mode) synth.Hit {
	if len(modes) == 0 {
		modes = []synth.Mode{{FrequencyHz: 60, DampingRatio: 0.01, Amplitude: 20}}
	}
	return synth.Hit{
		SampleRate: fs, Duration: duration, PreTrigger: lead, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, snrDB), Seed: seed,
		PulseWidth: 0.001, PulsePeak: 200,
	}
}

type file struct {
	name string
	meta [][2]string
	hit  synth.Hit
}

func main() {
	dir := filepath.Join("testdata", "rules")
	if _, err := os.Stat(dir); err != nil {
		log.Fatalf("run from the repository root: %v", err)
	}
	var files []file
	add := func(name string, h synth.Hit, meta ...[2]string) {
		files = append(files, file{name: name, meta: meta, hit: h})
	}
	single := [2]string{"expect_single_mode", "true"}

	// Shared good references.
	add("good-ok.csv", base(1))
	add("good-multi-ok.csv", base(2,
		synth.Mode{FrequencyHz: 45, DampingRatio: 0.012, Amplitude: 15},
		synth.Mode{FrequencyHz: 210, DampingRatio: 0.008, Amplitude: 10, Phase: 0.4},
		synth.Mode{FrequencyHz: 640, DampingRatio: 0.005, Amplitude: 6, Phase: 1.1}))

	// clipped: the amplifier saturates at 12 m/s^2 (60 % of the first peak).
	h := base(3)
	h.ClipLevel = 12
	add("clipping-bad.csv", h)

	// double_strike: the hammer bounces back 30 ms later with 40 % of the blow.
	h = base(4)
	h.DoubleHitDelay, h.DoubleHitScale = 0.030, 0.4
	add("double-strike-bad.csv", h)
	h = base(5)
	h.DoubleHitDelay, h.DoubleHitScale = 0.030, 0.06 // under the 10 % rise threshold
	add("double-strike-ok.csv", h)

	// under_excited: a 900 Hz mode beside the 60 Hz one; a soft tip (4 ms
	// pulse) leaves it ~40 dB down, a hard one (0.5 ms) excites it.
	two := []synth.Mode{
		{FrequencyHz: 60, DampingRatio: 0.01, Amplitude: 20},
		{FrequencyHz: 900, DampingRatio: 0.005, Amplitude: 8},
	}
	h = base(6, two...)
	h.PulseWidth = 0.004
	add("excitation-bad.csv", h)
	h = base(7, two...)
	h.PulseWidth = 0.0005
	add("excitation-ok.csv", h)

	// short_decay: a 3.5 Hz mode gives at most 3.3 cycles in the 0.95 s
	// after the hit; at 12 Hz there are 11 (damped 4 %, so that it decays
	// within the record like the 60 Hz reference: the same sigma, 3.0 1/s).
	add("short-decay-bad.csv", base(8, synth.Mode{FrequencyHz: 3.5, DampingRatio: 0.01, Amplitude: 20}))
	add("short-decay-ok.csv", base(9, synth.Mode{FrequencyHz: 12, DampingRatio: 0.04, Amplitude: 20}))

	// mixed_modes: one mode meant, a second of equal amplitude carries
	// ~40 % of the energy; at a tenth of the amplitude, under 1 %.
	add("several-modes-bad.csv", base(10,
		synth.Mode{FrequencyHz: 60, DampingRatio: 0.01, Amplitude: 20},
		synth.Mode{FrequencyHz: 150, DampingRatio: 0.006, Amplitude: 20, Phase: 0.5}), single)
	add("several-modes-ok.csv", base(11,
		synth.Mode{FrequencyHz: 60, DampingRatio: 0.01, Amplitude: 20},
		synth.Mode{FrequencyHz: 150, DampingRatio: 0.006, Amplitude: 2, Phase: 0.5}), single)

	// beating_modes: 2.5 Hz apart at 100 Hz (half-power bandwidth 1 Hz),
	// against 15 Hz apart.
	add("close-modes-bad.csv", base(12,
		synth.Mode{FrequencyHz: 100, DampingRatio: 0.005, Amplitude: 10},
		synth.Mode{FrequencyHz: 102.5, DampingRatio: 0.005, Amplitude: 10, Phase: 1}))
	add("close-modes-ok.csv", base(13,
		synth.Mode{FrequencyHz: 100, DampingRatio: 0.005, Amplitude: 10},
		synth.Mode{FrequencyHz: 115, DampingRatio: 0.005, Amplitude: 10, Phase: 1}))

	// friction_decay: the envelope falls linearly by 25 m/s^2 per second
	// (to zero at 0.8 s after the hit) instead of exponentially.
	h = base(14)
	h.Friction = 25
	add("non-viscous-bad.csv", h)

	// no_decay: the accelerometer cable is unplugged: noise only, with the
	// blow on the force channel.
	h = base(15)
	h.Modes = nil
	h.NoiseSD = 0.05
	add("no-decay-bad.csv", h)

	// pre_ringing: the structure rings at its mode with 10 % of the hit's
	// amplitude from the start of the record (and on through it).
	h = base(16)
	h.PreTrigger = 0.1
	h.RingingBefore = 2
	add("pre-trigger-bad.csv", h)

	// no_lead_in: the hit falls on the first sample.
	h = base(17)
	h.PreTrigger = 0
	add("no-lead-in-bad.csv", h)

	for _, f := range files {
		path := filepath.Join(dir, f.name)
		if err := write(path, f); err != nil {
			log.Fatal(err)
		}
		st, err := os.Stat(path)
		if err != nil {
			log.Fatal(err)
		}
		fmt.Printf("%-24s %7d bytes\n", f.name, st.Size())
	}
}

// write stores one hit: metadata lines, a header, then time, force and
// acceleration with 6 significant digits.
func write(path string, f file) (err error) {
	out, err := os.Create(path)
	if err != nil {
		return err
	}
	defer func() {
		if cerr := out.Close(); err == nil {
			err = cerr
		}
	}()
	w := bufio.NewWriter(out)
	fmt.Fprintf(w, "# source: synthetic hit, testdata/rules/gen.go\n")
	for _, kv := range f.meta {
		fmt.Fprintf(w, "# %s: %s\n", kv[0], kv[1])
	}
	fmt.Fprintf(w, "time [s],force [N],accel [m/s^2]\n")
	x := f.hit.Response()
	force := f.hit.Force()
	for i := range x {
		fv := 0.0
		if force != nil {
			fv = force[i]
		}
		fmt.Fprintf(w, "%.5f,%s,%s\n", float64(i)/fs, num(fv), num(x[i]))
	}
	if err := w.Flush(); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	return nil
}

func num(v float64) string { return strconv.FormatFloat(v, 'g', 6, 64) }
