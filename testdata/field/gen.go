//go:build ignore

// gen writes the realistic test corpus of testdata/field: one CSV file per
// case of field.Corpus (package pipeline/synth/field), recordings made the
// way a test bay records them (time-integrated structure, hammer, sensor
// noise, amplifier, anti-alias filter, ADC, window). Run it from the
// repository root whenever the corpus or the generator changes:
//
//	go run ./testdata/field/gen.go
//
// README.md beside the files says how each was made and what verdict it
// must get; the field package's tests check that every file is exactly
// what the generator makes today.
package main

import (
	"fmt"
	"log"
	"os"
	"path/filepath"
	"strings"

	"github.com/ringlog/ringlog/pipeline/synth/field"
)

func main() {
	dir := filepath.Join("testdata", "field")
	var readme strings.Builder
	readme.WriteString(header)
	for _, c := range field.Corpus() {
		want := "clean: accepted, no reason"
		if !c.Clean {
			want = "`" + c.Want + "`"
			if c.Strict {
				want += " and nothing else"
			}
			if c.NoSplit {
				want += "; not split into close poles"
			}
		}
		item := ""
		if c.Item > 0 {
			item = fmt.Sprint(c.Item)
		}
		fmt.Fprintf(&readme, "| `%s` | %s | %s | %s | %s |\n", c.File(), c.Effect, item, want, c.About)
		rec, err := field.Generate(c.Spec)
		if err != nil {
			log.Fatalf("%s: %v", c.Name, err)
		}
		b, err := field.Encode(rec)
		if err != nil {
			log.Fatalf("%s: %v", c.Name, err)
		}
		if err := os.WriteFile(filepath.Join(dir, c.File()), b, 0o644); err != nil {
			log.Fatal(err)
		}
	}
	if err := os.WriteFile(filepath.Join(dir, "README.md"), []byte(readme.String()), 0o644); err != nil {
		log.Fatal(err)
	}
}

const header = `# Realistic test corpus

Hit recordings made the way a test bay records them, by package
` + "`pipeline/synth/field`" + ` (see its doc.go): each mode of the structure is a modal
oscillator integrated in time with the fourth-order Runge-Kutta method at 16
times the record's rate (with cubic damping or Coulomb friction where a case
says so), struck by a half-sine hammer pulse; the accelerometer adds Gaussian
noise with a white floor and 1/f below a corner; the amplifier adds AC
coupling (first-order high-pass), drift and mains hum; the recorder applies a
Butterworth anti-alias filter at the oversampled rate, decimates, clips and
rounds in its ADC, and may apply an exponential window. None of this uses the
damped-sinusoid model the estimators fit. The filters are checked against
scipy (` + "`make_refs.py`" + `, run once with Debian's python3-scipy, wrote
` + "`filter_refs.json`" + `).

Written, together with this README, by ` + "`gen.go`" + ` from the case list
` + "`field.Corpus()`" + `, from the repository root:

    go run ./testdata/field/gen.go

The field package's tests check that every file is exactly what the generator
makes; ` + "`pipeline/process/field_test.go`" + ` runs each file through the whole
analysis and checks the verdict below (cases today's analysis gets wrong are
listed there, with their issue item, and skipped).

## Common parameters

CSV, comma-delimited, 7 significant digits, ` + "`# key: value`" + ` metadata
(` + "`case`, `source`" + ` with the seed, ` + "`window_tau_s`" + ` where windowed),
columns ` + "`force [N]`" + ` and ` + "`accel [m/s^2]`" + `. Unless a row says
otherwise: 2560 Hz for 1.2 s, the strike 0.1 s into the record; two modes,
95 Hz at 1.2 % damping (15 m/s^2) and 410 Hz at 0.8 % (8 m/s^2, opposite
sign); a 0.2 kg hammer on a 2e6 N/m tip (1 ms contact), 250 N; white sensor
noise of 1e-3 m/s^2/sqrt(Hz) (about 100 micro-g/sqrt(Hz)); 6th-order
Butterworth anti-alias filter at 0.4 times the rate; 24-bit ADC with a
50 m/s^2 range; force noise 5e-3 N/sqrt(Hz). Seeds differ per file.

"Clean" means accepted with no reason, every mode found within 3.29 standard
errors of the truth, no phantom mode, and (for white noise without hum) a
noise level within a factor 2 of the recorded one.

| file | effect | issue 8 item | must get | how it was made |
|---|---|---|---|---|
`
