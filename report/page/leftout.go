package page

import (
	"github.com/ringlog/ringlog/report"
)

// leftOutView is what the statistics of a page left out: counts by reason
// code and the hits excluded by hand with the analyst's reason.
type leftOutView struct {
	Rows   []leftOutRow
	ByHand []byHandRow
}

type leftOutRow struct {
	Code, What, Meaning string
	Count               int
}

type byHandRow struct {
	Revision, File, Why, By, At string
	Hit                         int64
}

// leftOut gathers what Identify left out of revs (all of a prototype's
// campaign on the daily page).
func leftOut(id *report.Identified, revs []string) leftOutView {
	var v leftOutView
	idx := map[[2]string]int{}
	for _, rev := range revs {
		for _, ex := range id.Excluded[rev] {
			key := [2]string{ex.Code, ex.What}
			i, ok := idx[key]
			if !ok {
				i = len(v.Rows)
				idx[key] = i
				v.Rows = append(v.Rows, leftOutRow{Code: ex.Code, What: ex.What, Meaning: codeMeaning(ex.Code)})
			}
			v.Rows[i].Count += ex.Count
		}
		v.ByHand = append(v.ByHand, byHandRows(id, rev)...)
	}
	return v
}

// counts returns the hits and the modes v left out.
func (v leftOutView) counts() (hits, modes int) {
	for _, r := range v.Rows {
		if r.What == "hit" {
			hits += r.Count
		} else {
			modes += r.Count
		}
	}
	return hits, modes
}

// byHandRows lists the hits of rev excluded by hand.
func byHandRows(id *report.Identified, rev string) []byHandRow {
	var out []byHandRow
	for _, h := range id.ByHand[rev] {
		out = append(out, byHandRow{Revision: orNone(rev), File: h.File, Why: h.Why, By: h.By, At: h.At.Format("2006-01-02 15:04 MST"), Hit: h.HitID})
	}
	return out
}

// codeMeaning is the plain-language meaning of a reason code: the quality
// rule's summary, or that of the codes package report adds.
func codeMeaning(code string) string {
	switch code {
	case report.CodeExcludedByHand:
		return "left out by hand with 'ringlog exclude' (listed below with the reason)"
	case report.CodeAllModesDropped:
		return "every mode of the hit was dropped"
	case report.CodeNoEstimate:
		return "no usable frequency or damping ratio"
	}
	return ruleMeaning()[code]
}

// leftOutBlock is the template of the list of hits excluded by hand; it is
// given a []byHandRow.
const leftOutBlock = `{{define "byhand"}}{{if .}}<h3>Excluded by hand</h3>
<table>
<thead><tr><th>hit</th><th>revision</th><th>file</th><th>why</th><th>by</th><th>when</th></tr></thead>
<tbody>{{range .}}<tr><td class="n">{{.Hit}}</td><td>{{.Revision}}</td><td>{{.File}}</td><td>{{.Why}}</td><td>{{.By}}</td><td>{{.At}}</td></tr>{{end}}</tbody>
</table>{{end}}{{end}}
{{define "leftout"}}{{if .Rows}}<h3>Left out of the statistics</h3>
<table>
<thead><tr><th>reason code</th><th>what</th><th class="n">count</th><th>what it means</th></tr></thead>
<tbody>{{range .Rows}}<tr><td><code>{{.Code}}</code></td><td>{{.What}}</td><td class="n">{{.Count}}</td><td>{{.Meaning}}</td></tr>{{end}}</tbody>
</table>
{{template "byhand" .ByHand}}{{end}}{{end}}`
