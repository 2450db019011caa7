package report

import (
	"fmt"
	"math"
	"testing"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
)

// BenchmarkFitRayleigh is one fit of four modes with its 2000 Monte Carlo
// refits.
func BenchmarkFitRayleigh(b *testing.B) {
	var modes []RayleighMode
	for i, f := range []float64{31, 88, 170, 290} {
		z := RayleighDamping(2, 3e-5, 2*math.Pi*f) * (1 + 0.05*math.Sin(float64(i)))
		modes = append(modes, RayleighMode{Label: fmt.Sprint("m", i+1), FrequencyHz: f, Damping: z, SD: 0.03 * z, ScatterSD: 0.1 * z, N: 10})
	}
	for b.Loop() {
		if _, err := FitRayleigh(modes, RayleighOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkIdentifyStats is the statistics of a campaign of 2000 hits with
// four modes each over two revisions (clustering, bootstrap, outliers).
func BenchmarkIdentifyStats(b *testing.B) {
	var hits []db.Hit
	for i := range 2000 {
		var ms []pipeline.Mode
		for k, f := range []float64{31, 88, 170, 290} {
			ms = append(ms, mode(f*(1+0.01*math.Sin(float64(3*i+k))), 0.01*(1+0.1*math.Cos(float64(i*k)))))
		}
		rev := "A"
		if i%2 == 1 {
			rev = "B"
		}
		hits = append(hits, hit(int64(i+1), rev, t0.Add(time.Duration(i)*time.Minute), pipeline.Accepted, ms...))
	}
	for b.Loop() {
		st := Stats(Identify(hits, IdentifyOptions{}))
		if len(st) != 2 || len(st[0].Modes) != 4 {
			b.Fatalf("%d revisions", len(st))
		}
	}
}
