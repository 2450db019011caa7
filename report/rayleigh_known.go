package report

import (
	"fmt"
	"math"
	"slices"
	"strconv"
)

// KnownMode is a damping ratio an analyst already has, with no history
// behind it: the natural frequency in Hz, the damping ratio as a fraction
// of critical and, when known, its standard uncertainty SD (0 when not
// given).
type KnownMode struct {
	// Label names the mode in the report (the value as the analyst wrote
	// it, for instance "14.2:1%").
	Label       string
	FrequencyHz float64
	Damping     float64
	SD          float64
}

// RayleighKnown fits Rayleigh coefficients to known damping ratios, the
// same fit as RayleighFor with the same report, the stiffness-only fit
// beside and the cautions. A mode's SD, when given, is both the weight
// 1/SD^2 and the scatter the curve is judged against (within 2 SD). When
// no mode has an SD (every SD 0), the fit weighs the modes relatively (SD
// = the damping ratio itself: each value known to the same relative
// precision), the intervals come from the misfit alone (see
// RayleighOptions.UnknownSD) and a warning says that they hold no
// hit-to-hit scatter. Either every mode has an SD or none has. The report
// has no prototype, revision or hits (NHits 0, each mode's N 0).
func RayleighKnown(known []KnownMode, opt RayleighOptions) (RayleighReport, error) {
	rep := RayleighReport{Units: rayleighUnits(), Cautions: Cautions(), Warnings: []string{}, Excluded: []Exclusion{}, ExcludedByHand: []ExcludedHit{}}
	withSD := 0
	for _, k := range known {
		if k.SD != 0 {
			withSD++
		}
	}
	if withSD != 0 && withSD != len(known) {
		return rep, fmt.Errorf("%d of %d damping ratios have an SD: give one for every mode or for none", withSD, len(known))
	}
	opt.UnknownSD = withSD == 0
	modes := make([]RayleighMode, len(known))
	for i, k := range known {
		sd := k.SD
		if opt.UnknownSD {
			sd = k.Damping
		}
		modes[i] = RayleighMode{Label: k.Label, Name: strconv.FormatFloat(k.FrequencyHz, 'g', 6, 64) + " Hz",
			FrequencyHz: k.FrequencyHz, Damping: k.Damping, SD: sd, ScatterSD: sd, Fitted: math.NaN()}
	}
	fit, err := FitRayleigh(modes, opt)
	if err != nil {
		return rep, err
	}
	rep.RayleighFit = fit
	so := fit
	if !opt.StiffnessOnly {
		o := opt
		o.StiffnessOnly = true
		if so, err = FitRayleigh(modes, o); err != nil {
			return rep, fmt.Errorf("stiffness-only fit: %w", err)
		}
	}
	rep.StiffnessOnly = &so
	if opt.UnknownSD {
		// The SDs were weights; the values have none of their own.
		for _, f := range []*RayleighFit{&rep.RayleighFit, rep.StiffnessOnly} {
			f.Modes = slices.Clone(f.Modes)
			for i := range f.Modes {
				f.Modes[i].SD = math.NaN()
			}
		}
		w := "no SD given: the damping ratios are taken as exact and weighted relatively (each to the same relative precision), so the intervals hold no hit-to-hit scatter and no uncertainty of the values themselves"
		if fit.DOF == 0 {
			w += "; the curve passes through every value, so there is no interval"
		} else {
			w += "; they show only how far the values stray from the curve"
		}
		rep.Warnings = append(rep.Warnings, w+". Give each value's standard uncertainty (FREQ:ZETA:SD) for intervals that can be quoted.")
	}
	return rep, nil
}
