package report

import (
	"math"
	"strings"
	"testing"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
)

// Check values: a damping ratio that follows an exact power law of the
// level, zeta = 0.01 (F/100)^0.5, must give the exponent 0.5 and a change
// per doubling of 2^0.5 - 1 = 41.42 % (arithmetic); a damping ratio that
// does not depend on the level must give an interval that holds 0.

func levelHits(force bool, zeta func(level float64) float64, levels ...float64) []db.Hit {
	var hs []db.Hit
	for i, lv := range levels {
		m := mode(60, zeta(lv))
		h := hit(int64(i+1), "A", t0.Add(time.Duration(i)*time.Hour), pipeline.Accepted, m)
		if force {
			h.Result.PeakForce = lv
			h.Result.Modes[0].Amplitude = 1 // not the level when a force channel is there
		} else {
			h.Result.Modes[0].Amplitude = lv
		}
		hs = append(hs, h)
	}
	return hs
}

func TestDampingVsPeakForcePowerLaw(t *testing.T) {
	hs := levelHits(true, func(f float64) float64 { return 0.01 * math.Sqrt(f/100) }, 50, 70, 100, 140, 200, 280, 400, 560, 800, 1100, 1600, 2200)
	// a hit without a force channel among hits with one is left out
	extra := hit(99, "A", t0.Add(100*time.Hour), pipeline.Accepted, mode(60, 0.02))
	extra.Result.Modes[0].Amplitude = 3
	hs = append(hs, extra)
	id := Identify(hs, IdentifyOptions{})
	ls := DampingVsLevel(id, hs, "A")
	if len(ls) != 1 {
		t.Fatalf("%d tables", len(ls))
	}
	s := ls[0]
	if s.Level != LevelPeakForce || s.N != 12 {
		t.Fatalf("level %s, n %d", s.Level, s.N)
	}
	near(t, "exponent", s.Exponent, 0.5, 1e-9)
	near(t, "change per doubling", s.PerDoubling, math.Sqrt2-1, 1e-9)
	if len(s.LeftOut) != 1 || s.LeftOut[0].HitID != 99 || s.LeftOut[0].Reason != LeftNoForce {
		t.Errorf("left out %+v, want hit 99 without a force channel", s.LeftOut)
	}
	if len(s.Groups) != 4 || s.Groups[0].N != 3 || !(s.Groups[0].GeoMean < s.Groups[3].GeoMean) {
		t.Errorf("groups %+v", s.Groups)
	}
	near(t, "span", s.LevelSpan, 44, 1e-9)
	if !strings.Contains(s.Verdict, "rises with the peak force") || !strings.Contains(s.Verdict, "+41 %") {
		t.Errorf("verdict %q", s.Verdict)
	}
}

func TestDampingVsResponseAmplitudeNoDependence(t *testing.T) {
	// alternating +/- 5 % scatter around 1 %, no dependence on the level
	i := 0
	z := func(float64) float64 {
		i++
		if i%2 == 0 {
			return 0.0105
		}
		return 0.0095
	}
	hs := levelHits(false, z, 1, 2, 3, 4, 5, 6, 7, 8, 9)
	ls := DampingVsLevel(Identify(hs, IdentifyOptions{}), hs, "A")
	s := ls[0]
	if s.Level != LevelResponse || s.N != 9 {
		t.Fatalf("level %s, n %d", s.Level, s.N)
	}
	if !(s.ExponentCI[0] < 0 && s.ExponentCI[1] > 0) {
		t.Errorf("exponent interval %v should hold 0", s.ExponentCI)
	}
	if !strings.Contains(s.Verdict, "no dependence on the response amplitude") {
		t.Errorf("verdict %q", s.Verdict)
	}
	// too narrow a range of levels
	hs = levelHits(false, func(float64) float64 { return 0.01 }, 1, 1.1, 1.2, 1.3)
	s = DampingVsLevel(Identify(hs, IdentifyOptions{}), hs, "A")[0]
	if !strings.Contains(s.Verdict, "too narrow") {
		t.Errorf("verdict %q", s.Verdict)
	}
}
