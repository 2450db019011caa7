package report

import (
	"fmt"
	"math"
	"sort"

	"github.com/ringlog/ringlog/db"
)

// Damping against the excitation level over the hits of a revision: does
// the test amplitude matter before a damping ratio goes into a model?

// Excitation levels.
const (
	LevelPeakForce = "peak_force"         // peak of the hammer pulse, force units
	LevelResponse  = "response_amplitude" // the mode's initial amplitude, response units (no force channel)
)

// Reasons an observation is left out of a level table.
const (
	LeftNoForce   = "no_force_channel" // the hit has no force channel while others of the mode have one
	LeftNoLevel   = "no_level"         // the level is not a positive number
	LeftNoDamping = "no_damping"       // the damping ratio is not a positive number
)

// MaxLevelGroups is the largest number of level groups of a table; each
// group holds at least MinLevelGroupN hits.
const (
	MaxLevelGroups = 4
	MinLevelGroupN = 3
)

// LevelPoint is one hit's mode in a level table.
type LevelPoint struct {
	HitID        int64   `json:"hit_id"`
	File         string  `json:"file"`
	Level        float64 `json:"level"`
	DampingRatio float64 `json:"damping_ratio"`
}

// LeftOut is an observation left out of a level table, with why.
type LeftOut struct {
	HitID  int64  `json:"hit_id"`
	File   string `json:"file"`
	Reason string `json:"reason"`
}

// LevelGroup is the hits of one range of excitation levels.
type LevelGroup struct {
	N          int        `json:"n"`
	LevelRange [2]float64 `json:"level_range"` // lowest and highest level in the group
	Level      float64    `json:"level"`       // geometric mean level
	// GeoMean is the geometric mean damping ratio of the group with its
	// Student t interval on log zeta (NaN for one hit).
	GeoMean   float64    `json:"damping_ratio_geometric_mean"`
	GeoMeanCI [2]float64 `json:"damping_ratio_geometric_ci95"`
}

// LevelStat is the damping of one mode against the excitation level over
// the hits of one revision.
type LevelStat struct {
	Label string `json:"label"`
	Name  string `json:"name"`
	// Level is LevelPeakForce when the mode's hits have a force channel,
	// LevelResponse otherwise.
	Level  string       `json:"level"`
	N      int          `json:"n"`
	Points []LevelPoint `json:"points"`
	// Groups split the points by level into up to MaxLevelGroups groups of
	// equal size (lowest level first).
	Groups []LevelGroup `json:"groups"`
	// Exponent is the least-squares slope of ln zeta against ln level
	// (zeta ~ level^Exponent) with its Student t interval; NaN below three
	// points or one level.
	Exponent   float64    `json:"exponent"`
	ExponentCI [2]float64 `json:"exponent_ci95"`
	// PerDoubling is the relative change of the damping ratio per doubling
	// of the level, 2^Exponent - 1, with its interval.
	PerDoubling   float64    `json:"change_per_doubling"`
	PerDoublingCI [2]float64 `json:"change_per_doubling_ci95"`
	// LevelSpan is the ratio of the highest to the lowest level.
	LevelSpan float64   `json:"level_span"`
	LeftOut   []LeftOut `json:"left_out"`
	// Verdict is a plain sentence of what the table shows.
	Verdict string `json:"verdict"`
}

// DampingVsLevel returns, for one revision, a level table per labelled
// mode of id, in label order. hits must hold the hits id was made from
// (their results carry the peak force and the mode amplitudes).
func DampingVsLevel(id *Identified, hits []db.Hit, revision string) []LevelStat {
	byID := make(map[int64]*db.Hit, len(hits))
	for i := range hits {
		byID[hits[i].ID] = &hits[i]
	}
	out := []LevelStat{}
	for _, l := range id.Labels {
		// the observations of the revision and label, read in place: a
		// long history has hundreds of thousands
		var obs []*Observation
		for i := range id.Obs {
			if o := &id.Obs[i]; o.Revision == revision && o.Label == l.Label && l.Label != "" {
				obs = append(obs, o)
			}
		}
		if len(obs) == 0 {
			continue
		}
		ls := LevelStat{Label: l.Label, Name: l.Name(), Points: make([]LevelPoint, 0, len(obs)), Groups: []LevelGroup{}, LeftOut: []LeftOut{},
			Exponent: math.NaN(), ExponentCI: nan2, PerDoubling: math.NaN(), PerDoublingCI: nan2, LevelSpan: math.NaN()}
		force := 0
		for _, o := range obs {
			if h := byID[o.HitID]; h != nil && h.Result != nil && h.Result.PeakForce > 0 {
				force++
			}
		}
		ls.Level = LevelResponse
		if force > 0 {
			ls.Level = LevelPeakForce
		}
		for _, o := range obs {
			h := byID[o.HitID]
			level := math.NaN()
			if h != nil && h.Result != nil {
				if ls.Level == LevelPeakForce {
					level = h.Result.PeakForce
				} else if o.Mode >= 0 && o.Mode < len(h.Result.Modes) {
					level = h.Result.Modes[o.Mode].Amplitude
				}
			}
			switch {
			case ls.Level == LevelPeakForce && !(level > 0):
				ls.LeftOut = append(ls.LeftOut, LeftOut{o.HitID, o.File, LeftNoForce})
			case !(level > 0) || math.IsInf(level, 0):
				ls.LeftOut = append(ls.LeftOut, LeftOut{o.HitID, o.File, LeftNoLevel})
			case !(o.DampingRatio > 0) || math.IsInf(o.DampingRatio, 0):
				ls.LeftOut = append(ls.LeftOut, LeftOut{o.HitID, o.File, LeftNoDamping})
			default:
				ls.Points = append(ls.Points, LevelPoint{o.HitID, o.File, level, o.DampingRatio})
			}
		}
		ls.N = len(ls.Points)
		levelFit(&ls)
		out = append(out, ls)
	}
	return out
}

// levelFit fills the groups, the exponent and the verdict.
func levelFit(ls *LevelStat) {
	pts := append([]LevelPoint(nil), ls.Points...)
	sort.SliceStable(pts, func(i, j int) bool { return pts[i].Level < pts[j].Level })
	n := len(pts)
	what := "peak force"
	if ls.Level == LevelResponse {
		what = "response amplitude"
	}
	if n == 0 {
		ls.Verdict = "no hit with a usable level"
		return
	}
	ls.LevelSpan = pts[n-1].Level / pts[0].Level
	g := min(MaxLevelGroups, n/MinLevelGroupN)
	if g < 1 {
		g = 1
	}
	for k := 0; k < g; k++ {
		part := pts[k*n/g : (k+1)*n/g]
		lv := make([]float64, len(part))
		z := make([]float64, len(part))
		for i, p := range part {
			lv[i], z[i] = p.Level, p.DampingRatio
		}
		gl, _ := GeometricMean(lv)
		gm, ci := GeometricMean(z)
		ls.Groups = append(ls.Groups, LevelGroup{N: len(part), LevelRange: [2]float64{part[0].Level, part[len(part)-1].Level},
			Level: gl, GeoMean: gm, GeoMeanCI: ci})
	}
	x := make([]float64, n)
	y := make([]float64, n)
	for i, p := range pts {
		x[i], y[i] = math.Log(p.Level), math.Log(p.DampingRatio)
	}
	fit := LinearFit(x, y)
	ls.Exponent, ls.ExponentCI = fit.Slope, fit.SlopeCI95
	dbl := func(p float64) float64 { return math.Pow(2, p) - 1 }
	ls.PerDoubling = dbl(fit.Slope)
	ls.PerDoublingCI = [2]float64{dbl(fit.SlopeCI95[0]), dbl(fit.SlopeCI95[1])}
	switch {
	case math.IsNaN(fit.Slope):
		ls.Verdict = fmt.Sprintf("%d hit(s) with a %s: too few to tell whether the level matters", n, what)
	case ls.LevelSpan < 1.5:
		ls.Verdict = fmt.Sprintf("the %s varies only by a factor %.2f over these hits: too narrow a range to tell whether it matters; "+
			"strike softer and harder", what, ls.LevelSpan)
	case fit.SlopeCI95[0] > 0 || fit.SlopeCI95[1] < 0:
		dir := "rises"
		if fit.Slope < 0 {
			dir = "falls"
		}
		ls.Verdict = fmt.Sprintf("the damping ratio %s with the %s, %+.0f %% per doubling (95 %% interval %+.0f to %+.0f %%): "+
			"the test amplitude matters; use the damping ratio measured at the amplitude the model is for",
			dir, what, 100*ls.PerDoubling, 100*ls.PerDoublingCI[0], 100*ls.PerDoublingCI[1])
	default:
		ls.Verdict = fmt.Sprintf("no dependence on the %s shown over a factor %.1f of level: %+.0f %% per doubling "+
			"(95 %% interval %+.0f to %+.0f %%)", what, ls.LevelSpan, 100*ls.PerDoubling, 100*ls.PerDoublingCI[0], 100*ls.PerDoublingCI[1])
	}
}
