package live

import (
	"context"
	"fmt"
	"testing"
)

// BenchmarkRender draws the page's main part over a history of 100 hits
// (synthetic, pipeline/synth), as the daemon does after each commit; the
// campaign is identified again on every drawing here (the daemon keeps it
// for campaignMaxAge).
func BenchmarkRender(b *testing.B) {
	f := newFixture(b)
	for i := range 100 {
		f.record(b, hitSpec{name: fmt.Sprintf("r%03d.csv", i), prototype: "bracket", revision: []string{"S1", "S2"}[i/50], seed: uint64(i)})
	}
	s := f.server(b, Options{})
	ctx := context.Background()
	for _, cached := range []bool{false, true} {
		b.Run(fmt.Sprintf("campaign-cached=%v", cached), func(b *testing.B) {
			for b.Loop() {
				if !cached {
					s.camp = nil
				}
				if _, _, err := s.renderMain(ctx); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
