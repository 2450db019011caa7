package db_test

import (
	"context"
	"fmt"
	"log"
	"os"
	"path/filepath"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
)

func Example() {
	ctx := context.Background()
	dir, err := os.MkdirTemp("", "ringlog-example")
	if err != nil {
		log.Fatal(err)
	}
	defer os.RemoveAll(dir)

	h, err := db.Open(ctx, filepath.Join(dir, "history.sqlite"))
	if err != nil {
		log.Fatal(err)
	}
	defer h.Close()

	// A daemon takes the single-writer lock first.
	release, err := h.LockWriter()
	if err != nil {
		log.Fatal(err)
	}
	defer release()

	// One mode with the numbers of Thomson, Theory of Vibration with
	// Applications, Example 2.7-1 (omega_n = 34.0 rad/s, zeta = 0.0681),
	// used here only as plausible values to store and read back.
	res := &pipeline.Result{File: "/lab/bay1/frame_rev2_017.csv", Format: "csv", Channel: "acc_z",
		SampleRate: 5120, DurationS: 4, AnalysisVersion: pipeline.AnalysisVersion,
		Modes: []pipeline.Mode{{FrequencyHz: 34.0 / (2 * 3.141592653589793), DampingRatio: 0.0681,
			Estimates: []pipeline.Estimate{{Method: "logdec", FrequencyHz: 5.41, DampingRatio: 0.0681}}}}}
	res.Decide()
	fi := db.FileInfo{Path: res.File, Size: 81920, MTime: time.Date(2025, 5, 6, 10, 0, 0, 0, time.UTC),
		SHA256: "9f86d081884c7d659a2feaa0c55ad015a3bf4f1b2b0b822cd15d6c15b0f00a08"}
	meta := db.HitMeta{Prototype: "frame", Revision: "2", Bay: "1", Point: "17", Direction: "z"}
	out, err := h.RecordResult(ctx, fi, meta, res, map[string]float64{"min_cycles": 5})
	if err != nil {
		log.Fatal(err)
	}
	fmt.Println("duplicate:", out.Duplicate)

	hits, err := h.Hits(ctx, db.Filter{Prototype: "frame", Revision: "2"})
	if err != nil {
		log.Fatal(err)
	}
	for _, hit := range hits {
		m := hit.Result.Modes[0]
		fmt.Printf("%s point %s: %s, f = %.2f Hz, zeta = %.2f %%\n", hit.Meta.Prototype, hit.Meta.Point,
			hit.Result.Verdict, m.FrequencyHz, 100*m.DampingRatio)
	}
	// Output:
	// duplicate: false
	// frame point 17: accepted, f = 5.41 Hz, zeta = 6.81 %
}
