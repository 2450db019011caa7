package main

import (
	"fmt"
	"io"
	"strings"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
	rpt "github.com/ringlog/ringlog/report"
)

// printAmplitudeCurves writes, per mode with an amplitude curve, its
// damping ratio against the amplitude along the decay (largest amplitude
// first), for the human view of `analyze`.
func printAmplitudeCurves(w io.Writer, r *pipeline.Result) {
	for i, m := range r.Modes {
		if len(m.AmplitudeDamping) == 0 {
			continue
		}
		fmt.Fprintf(w, "  mode %d damping ratio against amplitude (amplitude in channel %s units: zeta %%, 95 %% interval):\n", i+1, r.Channel)
		if m.MergedPoles > 0 {
			fmt.Fprintf(w, "    one mode whose decay is not exponential: %d close poles of the fit merged\n", m.MergedPoles)
		}
		var parts []string
		for _, b := range m.AmplitudeDamping {
			parts = append(parts, fmt.Sprintf("%.4g: %.3f (%.3f .. %.3f)", b.Amplitude,
				100*b.DampingRatio, 100*b.DampingRatioCI[0], 100*b.DampingRatioCI[1]))
		}
		for len(parts) > 0 {
			n := min(3, len(parts))
			fmt.Fprintf(w, "    %s\n", strings.Join(parts[:n], "   "))
			parts = parts[n:]
		}
	}
}

// addLevelTables fills each revision's damping-against-level tables for
// the modes it lists.
func addLevelTables(all []rpt.RevisionStats, id *rpt.Identified, hits []db.Hit) {
	for i := range all {
		keep := map[string]bool{}
		for _, m := range all[i].Modes {
			keep[m.Label] = true
		}
		all[i].DampingVsLevel = []rpt.LevelStat{}
		for _, ls := range rpt.DampingVsLevel(id, hits, all[i].Revision) {
			if keep[ls.Label] {
				all[i].DampingVsLevel = append(all[i].DampingVsLevel, ls)
			}
		}
	}
}

// printLevelTables writes the damping-against-level tables of `stats`.
func printLevelTables(w io.Writer, tables []rpt.LevelStat) {
	for _, ls := range tables {
		what := "peak force"
		if ls.Level == rpt.LevelResponse {
			what = "response amplitude (no force channel)"
		}
		fmt.Fprintf(w, "  damping against %s, %s: %d hit(s) used", what, ls.Name, ls.N)
		if len(ls.LeftOut) > 0 {
			var parts []string
			for _, o := range ls.LeftOut {
				parts = append(parts, fmt.Sprintf("hit %d %s (%s)", o.HitID, o.File, strings.ReplaceAll(o.Reason, "_", " ")))
			}
			fmt.Fprintf(w, ", %d left out: %s", len(ls.LeftOut), strings.Join(parts, "; "))
		}
		fmt.Fprintln(w)
		for _, g := range ls.Groups {
			fmt.Fprintf(w, "    level %10.4g .. %-10.4g n %3d  zeta %s %% (95 %%: %s)\n", g.LevelRange[0], g.LevelRange[1], g.N,
				fpct(g.GeoMean), fint(fpct, g.GeoMeanCI))
		}
		fmt.Fprintf(w, "    %s\n", ls.Verdict)
	}
}
