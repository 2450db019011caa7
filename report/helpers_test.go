package report

import (
	"fmt"
	"math"
	"testing"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
)

// t0 is the start of the invented test campaigns.
var t0 = time.Date(2024, 3, 4, 9, 0, 0, 0, time.UTC)

// mode is a usable mode with a per-hit standard error of 10 % of zeta.
func mode(f, z float64) pipeline.Mode {
	return pipeline.Mode{FrequencyHz: f, DampingRatio: z, DampingRatioSD: 0.1 * z,
		DampingRatioCI: [2]float64{0.8 * z, 1.2 * z}}
}

// hit makes a stored hit of prototype "bracket" with the given modes.
func hit(id int64, rev string, at time.Time, v pipeline.Verdict, modes ...pipeline.Mode) db.Hit {
	return db.Hit{
		ID: id, SHA256: fmt.Sprintf("%064x", id), Path: fmt.Sprintf("/lab/%s/hit%03d.csv", rev, id),
		Meta: db.HitMeta{Prototype: "bracket", Revision: rev, HitTime: at},
		Result: &pipeline.Result{Verdict: v, Modes: modes, Reasons: []pipeline.Reason{},
			AnalysisVersion: pipeline.AnalysisVersion},
		ModeIDs: make([]int64, len(modes)),
	}
}

func near(t *testing.T, what string, got, want, tol float64) {
	t.Helper()
	if !(math.Abs(got-want) <= tol) {
		t.Errorf("%s = %.10g, want %.10g (tolerance %g)", what, got, want, tol)
	}
}

func nearRel(t *testing.T, what string, got, want, rel float64) {
	t.Helper()
	if !(math.Abs(got-want) <= rel*math.Abs(want)) {
		t.Errorf("%s = %.10g, want %.10g (relative tolerance %g)", what, got, want, rel)
	}
}
