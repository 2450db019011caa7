package page

import (
	"strings"
	"testing"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/report"
)

// TestLevelViewThinsDots: a revision with more hits than MaxLevelDots has
// every k-th of them drawn and the caption says so; a small one is drawn
// whole.
func TestLevelViewThinsDots(t *testing.T) {
	for _, tc := range []struct {
		n    int
		want string
	}{{40, ""}, {2*MaxLevelDots + 1, "every 2nd of "}} {
		// invented synthetic hits (db.SyntheticHit), one revision; of 3001,
		// about 2660 are usable per mode (some are rejected or dropped): every 2nd
		opt := db.SyntheticOptions{Hits: tc.n, Revisions: []string{"A"}, End: time.Date(2026, 6, 30, 12, 0, 0, 0, time.UTC)}
		hits := make([]db.Hit, tc.n)
		for i := range hits {
			meta, res := db.SyntheticHit(opt, i)
			hits[i] = db.Hit{ID: int64(i + 1), Path: res.File, Meta: meta, Result: res}
		}
		id := report.Identify(hits, report.IdentifyOptions{})
		views := levelViews(id, hits, []string{"A"}, map[string]string{"A": "rev0"})
		if len(views) == 0 {
			t.Fatalf("%d hits: no level view", tc.n)
		}
		for _, v := range views {
			if tc.want == "" && v.Thinned != "" || tc.want != "" && !strings.Contains(v.Thinned, tc.want) {
				t.Fatalf("%d hits, %s: thinned %q, want it to contain %q", tc.n, v.Name, v.Thinned, tc.want)
			}
			if v.Plot == "" {
				t.Fatalf("%d hits, %s: no plot (%s)", tc.n, v.Name, v.PlotError)
			}
		}
	}
}
