package page

import (
	"strings"
	"testing"

	"github.com/ringlog/ringlog/report"
)

// TestStripPlotThinsDots: past MaxStripDots a revision's dots are every
// k-th hit and the note says so; below it every hit is drawn, no note.
func TestStripPlotThinsDots(t *testing.T) {
	c := report.ModeComparison{Name: "m1 (31 Hz)", RevisionA: "A", RevisionB: "B"}
	few := make([]float64, 40)
	many := make([]float64, 3*MaxStripDots+1)
	for i := range many {
		many[i] = 0.01 * (1 + 0.1*float64(i%17)/17)
	}
	for i := range few {
		few[i] = 0.012 * (1 + 0.1*float64(i%7)/7)
	}
	svgFew, note, err := stripPlot(c, few, few)
	if err != nil || note != "" {
		t.Fatalf("40 hits each: note %q, error %v; want every hit drawn and no note", note, err)
	}
	svgMany, note, err := stripPlot(c, many, few)
	if err != nil {
		t.Fatal(err)
	}
	// 4501 values: every 4th drawn (ceil(4501/1500) = 4), 1126 dots
	if want := "every 4th of 4501 hits of A drawn"; note != want {
		t.Fatalf("note %q, want %q", note, want)
	}
	dots := func(svg string) int { return strings.Count(svg, "<path") }
	if n, n0 := dots(string(svgMany)), dots(string(svgFew)); n-n0 < 1000 || n-n0 > 1200 {
		t.Fatalf("%d paths with 4501 hits of A, %d with 40: want about 1126 - 40 more", n, n0)
	}
}
