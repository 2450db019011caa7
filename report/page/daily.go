package page

import (
	"cmp"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"html/template"
	"io"
	"io/fs"
	"math"
	"runtime"
	"slices"
	"sort"
	"strings"
	"sync"
	"time"

	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/check"
	"github.com/ringlog/ringlog/pipeline/read"
	"github.com/ringlog/ringlog/report"
)

// Source is the part of the history the reports read; *db.DB has it.
type Source interface {
	Hits(ctx context.Context, f db.Filter) ([]db.Hit, error)
	StoredFiles(ctx context.Context, f db.Filter) ([]db.StoredFile, error)
	// SupersededBetween lists the hits superseded in [since, until) by a
	// later version of their file; FailedBetween the files given up then.
	SupersededBetween(ctx context.Context, since, until time.Time) ([]db.SupersededHit, error)
	FailedBetween(ctx context.Context, since, until time.Time) ([]db.FailedFile, error)
}

// DailyOptions set up a daily summary. Only Day is required.
type DailyOptions struct {
	// Day is any instant of the day to report on; the day runs from
	// midnight to midnight in Day.Location().
	Day time.Time
	// Expected returns the expected modes of a prototype (the
	// configuration's [[prototype.mode]] entries); nil, or no modes, lets
	// report.Identify cluster the frequencies.
	Expected func(prototype string) []report.Expected
	// Read returns the options to read a hit's file again as the daemon
	// read it (WAV channel names, sensitivities, the force channel); nil
	// reads with the zero read.Options.
	Read func(h db.Hit) read.Options
	// MaxFileSize caps the size of a hit's file read again for its plot
	// (read.DefaultMaxFileSize when zero); only regular files are read.
	MaxFileSize int64
	// Generator names the program in the page footer, e.g. "ringlog 1.2".
	Generator string
	// Database is the database path shown in the footer.
	Database string
	// Now is the time of writing shown on the page; zero is time.Now().
	Now time.Time
	// MaxDecayPlots caps the decay plots of flagged and rejected hits
	// (default 80); the others are listed without a plot.
	MaxDecayPlots int
	// MaxCampaignPoints caps the campaign points of one scatter plot
	// (default 1500): beyond, every k-th is drawn and the page says so.
	// The day's hits are always drawn.
	MaxCampaignPoints int
	// WithFlagged counts the modes a doubting flag names too
	// (report.IdentifyOptions.WithFlagged).
	WithFlagged bool
}

// Default caps of DailyOptions.
const (
	DefaultMaxDecayPlots     = 80
	DefaultMaxCampaignPoints = 1500
)

// DailySummary is what Daily reports back for a log line.
type DailySummary struct {
	Day                         string // YYYY-MM-DD
	Hits                        int
	Accepted, Flagged, Rejected int
	// Plotted counts the decay plots drawn; Unplotted the flagged or
	// rejected hits whose file was gone, changed or unreadable.
	Plotted, Unplotted int
	// Superseded counts the hits superseded on the day by a later version
	// of their file; Failed the files given up on the day.
	Superseded, Failed int
	// LeftOutHits and LeftOutModes count what the campaigns' statistics
	// left out (report.Identify), the page says why.
	LeftOutHits, LeftOutModes int
	Bytes                     int64 // size of the page written
}

// DayBounds returns the start of the calendar day of t and the start of
// the next day, in t's location (days of 23 or 25 hours included).
func DayBounds(t time.Time) (since, until time.Time) {
	y, m, d := t.Date()
	since = time.Date(y, m, d, 0, 0, 0, 0, t.Location())
	return since, since.AddDate(0, 0, 1)
}

// Daily writes the daily summary of opt.Day to w: the hits of the day per
// bay, prototype and revision; the verdict counts with the reason that
// decided each spoiled hit's verdict (side flags apart) and the reason
// codes; the hits superseded that day by a later version of their file;
// the files given up that day with their errors;
// per prototype and mode the damping and the frequency over the campaign
// (every hit of the prototype up to the end of the day) with the day's
// hits marked and the mean with its 95 % interval; the
// Rayleigh coefficients of the revisions hit that day; every flagged and
// rejected hit with a small plot of its decay and fitted envelope; the
// cautions. A day without hits gives a page that says so.
func Daily(ctx context.Context, w io.Writer, src Source, opt DailyOptions) (DailySummary, error) {
	if opt.Day.IsZero() {
		return DailySummary{}, errors.New("daily report: no day given")
	}
	if opt.Now.IsZero() {
		opt.Now = time.Now()
	}
	if opt.MaxDecayPlots <= 0 {
		opt.MaxDecayPlots = DefaultMaxDecayPlots
	}
	if opt.MaxCampaignPoints <= 0 {
		opt.MaxCampaignPoints = DefaultMaxCampaignPoints
	}
	loc := opt.Day.Location()
	since, until := DayBounds(opt.Day)
	hits, err := src.Hits(ctx, db.Filter{Since: since, Until: until})
	if err != nil {
		return DailySummary{}, err
	}
	v := &dailyView{
		Title:     "Daily summary " + since.Format("2006-01-02"),
		DayISO:    since.Format("2006-01-02"),
		DayLong:   since.Format("Monday 2 January 2006"),
		Generated: opt.Now.In(loc).Format("2006-01-02 15:04 MST"),
		Generator: opt.Generator,
		Database:  opt.Database,
		Cautions:  report.Cautions(),
		Hits:      len(hits),
	}
	sum := DailySummary{Day: v.DayISO, Hits: len(hits)}
	for _, h := range hits {
		switch h.Result.Verdict {
		case pipeline.Accepted:
			v.Accepted++
		case pipeline.Flagged:
			v.Flagged++
		case pipeline.Rejected:
			v.Rejected++
		}
	}
	sum.Accepted, sum.Flagged, sum.Rejected = v.Accepted, v.Flagged, v.Rejected
	if len(hits) > 0 {
		n := float64(len(hits))
		v.Bar = []barPart{
			{"accepted", 100 * float64(v.Accepted) / n, v.Accepted},
			{"flagged", 100 * float64(v.Flagged) / n, v.Flagged},
			{"rejected", 100 * float64(v.Rejected) / n, v.Rejected},
		}
	}
	v.Groups = groupRows(hits, loc)
	v.Reasons = reasonRows(hits)
	v.Decisive, v.AlsoFlagged = decisiveRows(v.Reasons), sideRows(v.Reasons)
	v.TopReasons = v.Decisive[:min(3, len(v.Decisive))]
	sup, err := src.SupersededBetween(ctx, since, until)
	if err != nil {
		return DailySummary{}, err
	}
	v.Superseded = supersededRows(sup, loc)
	failed, err := src.FailedBetween(ctx, since, until)
	if err != nil {
		return DailySummary{}, err
	}
	v.Failed = failedRows(failed, loc)
	sum.Superseded, sum.Failed = len(v.Superseded), len(v.Failed)
	var protos []string
	for _, h := range hits {
		if !slices.Contains(protos, h.Meta.Prototype) {
			protos = append(protos, h.Meta.Prototype)
		}
	}
	slices.Sort(protos)
	for _, p := range protos {
		pv, err := prototypeView(ctx, src, p, since, until, opt)
		if err != nil {
			return sum, err
		}
		v.Prototypes = append(v.Prototypes, pv)
		h, m := pv.LeftOut.counts()
		sum.LeftOutHits += h
		sum.LeftOutModes += m
	}
	cards, plotted, unplotted, err := spoiledCards(ctx, src, hits, since, until, opt)
	if err != nil {
		return sum, err
	}
	v.Spoiled = cards
	sum.Plotted, sum.Unplotted = plotted, unplotted
	cw := &countWriter{w: w}
	if err := dailyTmpl.Execute(cw, v); err != nil {
		return sum, fmt.Errorf("daily report: %w", err)
	}
	sum.Bytes = cw.n
	return sum, nil
}

// countWriter counts the bytes written through it.
type countWriter struct {
	w io.Writer
	n int64
}

func (c *countWriter) Write(p []byte) (int, error) {
	n, err := c.w.Write(p)
	c.n += int64(n)
	return n, err
}

// dailyView is what the daily template shows.
type dailyView struct {
	Title, DayISO, DayLong string
	Generated              string
	Generator, Database    string
	Hits                   int
	Accepted, Flagged      int
	Rejected               int
	Bar                    []barPart
	TopReasons             []reasonRow // the first three of Decisive
	Decisive               []reasonRow // by hits whose verdict the code decided
	AlsoFlagged            []reasonRow // by hits carrying the code beside the deciding one
	Groups                 []groupRow
	Reasons                []reasonRow
	Superseded             []supersededRow
	Failed                 []failedRow
	Prototypes             []protoView
	Spoiled                []hitCard
	Cautions               []string
}

type barPart struct {
	Class string
	Pct   float64
	N     int
}

type groupRow struct {
	Bay, Prototype, Revision     string
	Hits, Accepted, Flagged, Rej int
	First, Last                  string
}

// groupRows counts the day's hits per bay, prototype and revision.
func groupRows(hits []db.Hit, loc *time.Location) []groupRow {
	type key struct{ bay, proto, rev string }
	idx := map[key]int{}
	var rows []groupRow
	for _, h := range hits {
		k := key{h.Meta.Bay, h.Meta.Prototype, h.Meta.Revision}
		i, ok := idx[k]
		t := h.Meta.HitTime.In(loc).Format("15:04")
		if !ok {
			i = len(rows)
			idx[k] = i
			rows = append(rows, groupRow{Bay: orNone(k.bay), Prototype: orNone(k.proto), Revision: orNone(k.rev), First: t})
		}
		r := &rows[i]
		r.Hits++
		r.Last = t
		switch h.Result.Verdict {
		case pipeline.Accepted:
			r.Accepted++
		case pipeline.Flagged:
			r.Flagged++
		case pipeline.Rejected:
			r.Rej++
		}
	}
	sort.SliceStable(rows, func(a, b int) bool {
		ra, rb := rows[a], rows[b]
		return cmp.Or(cmp.Compare(ra.Bay, rb.Bay), cmp.Compare(ra.Prototype, rb.Prototype), cmp.Compare(ra.Revision, rb.Revision)) < 0
	})
	return rows
}

func orNone(s string) string {
	if s == "" {
		return "(none)"
	}
	return s
}

type reasonRow struct {
	Code, Severity, Meaning, Example string
	Hits, Flagged, Rejected          int // hits carrying the code, and of them flagged and rejected
	// Decided counts the hits whose verdict the code decided (see
	// decisive), DecidedFlagged and DecidedRejected by verdict; Side the
	// hits that carry it beside the deciding reason.
	Decided, DecidedFlagged, DecidedRejected, Side int
}

// ruleMeaning is the plain-language summary of each reason code.
var ruleMeaning = sync.OnceValue(func() map[string]string {
	m := map[string]string{}
	for _, r := range check.Describe() {
		if _, ok := m[r.Code]; !ok {
			m[r.Code] = r.Summary
		}
	}
	return m
})

// ruleRank is the place of each reason code in the order the quality
// rules run (check.Describe); codes of no rule come after.
var ruleRank = sync.OnceValue(func() map[string]int {
	m := map[string]int{}
	for i, r := range check.Describe() {
		if _, ok := m[r.Code]; !ok {
			m[r.Code] = i
		}
	}
	return m
})

func rankOf(code string) int {
	if i, ok := ruleRank()[code]; ok {
		return i
	}
	return math.MaxInt
}

// decisive returns the index in r.Reasons of the reason that decided the
// verdict of a spoiled hit, -1 for an accepted hit. For a rejected hit it
// is its first rejecting reason in rule order (when no rule rejected it,
// every mode was dropped: its first dropping reason); for a flagged hit
// its first dropping reason (a mode was lost), else its first flag. Among
// reasons of one code or of codes of no rule, the stored order decides.
func decisive(r *pipeline.Result) int {
	var order []pipeline.Severity
	switch r.Verdict {
	case pipeline.Rejected:
		order = []pipeline.Severity{pipeline.SeverityReject, pipeline.SeverityDrop, pipeline.SeverityFlag}
	case pipeline.Flagged:
		order = []pipeline.Severity{pipeline.SeverityDrop, pipeline.SeverityFlag}
	default:
		return -1
	}
	for _, sev := range order {
		best := -1
		for i, rs := range r.Reasons {
			if rs.Severity == sev && (best < 0 || rankOf(rs.Code) < rankOf(r.Reasons[best].Code)) {
				best = i
			}
		}
		if best >= 0 {
			return best
		}
	}
	return -1
}

// reasonRows counts, per reason code, the day's hits that carry it (once
// per hit), split by the hit's verdict, and how often it decided the
// verdict or stood beside the deciding reason; most frequent first.
func reasonRows(hits []db.Hit) []reasonRow {
	idx := map[string]int{}
	var rows []reasonRow
	for _, h := range hits {
		seen := map[string]bool{}
		decided := ""
		if d := decisive(h.Result); d >= 0 {
			r := h.Result.Reasons[d]
			decided = r.Code
			i := rowOf(&rows, idx, r)
			rows[i].Decided++
			if h.Result.Verdict == pipeline.Rejected {
				rows[i].DecidedRejected++
			} else {
				rows[i].DecidedFlagged++
			}
		}
		for _, r := range h.Result.Reasons {
			if seen[r.Code] {
				continue
			}
			seen[r.Code] = true
			i := rowOf(&rows, idx, r)
			rows[i].Hits++
			if decided != "" && r.Code != decided {
				rows[i].Side++
			}
			switch h.Result.Verdict {
			case pipeline.Flagged:
				rows[i].Flagged++
			case pipeline.Rejected:
				rows[i].Rejected++
			}
		}
	}
	sort.SliceStable(rows, func(a, b int) bool {
		if rows[a].Hits != rows[b].Hits {
			return rows[a].Hits > rows[b].Hits
		}
		return rows[a].Code < rows[b].Code
	})
	return rows
}

// rowOf returns the index of the row of r's code, adding it when new.
func rowOf(rows *[]reasonRow, idx map[string]int, r pipeline.Reason) int {
	i, ok := idx[r.Code]
	if !ok {
		i = len(*rows)
		idx[r.Code] = i
		*rows = append(*rows, reasonRow{Code: r.Code, Severity: string(r.Severity), Meaning: ruleMeaning()[r.Code], Example: r.Message})
	}
	return i
}

// decisiveRows keeps the rows of codes that decided a verdict, ranked by
// the hits they decided (one count per spoiled hit).
func decisiveRows(rows []reasonRow) []reasonRow {
	var out []reasonRow
	for _, r := range rows {
		if r.Decided > 0 {
			out = append(out, r)
		}
	}
	sort.SliceStable(out, func(a, b int) bool {
		if out[a].Decided != out[b].Decided {
			return out[a].Decided > out[b].Decided
		}
		return out[a].Code < out[b].Code
	})
	return out
}

// sideRows keeps the rows of codes carried beside a hit's deciding
// reason, ranked by those hits: the side flags.
func sideRows(rows []reasonRow) []reasonRow {
	var out []reasonRow
	for _, r := range rows {
		if r.Side > 0 {
			out = append(out, r)
		}
	}
	sort.SliceStable(out, func(a, b int) bool {
		if out[a].Side != out[b].Side {
			return out[a].Side > out[b].Side
		}
		return out[a].Code < out[b].Code
	})
	return out
}

// supersededRow is a hit superseded on the day, with what took its place.
type supersededRow struct {
	File, Path, At, HitTime string
	SHA256, BySHA256        string // the first 12 hex digits
	Verdict, ByVerdict      string
	ByFile                  string // the other file, when the new bytes were another's hit; "" for the same file
}

func supersededRows(sup []db.SupersededHit, loc *time.Location) []supersededRow {
	var out []supersededRow
	for _, s := range sup {
		r := supersededRow{File: baseName(s.Path), Path: s.Path, At: s.SupersededAt.In(loc).Format("15:04"),
			HitTime: s.HitTime.In(loc).Format("2006-01-02 15:04"), SHA256: short(s.SHA256), BySHA256: short(s.BySHA256),
			Verdict: string(s.Verdict), ByVerdict: string(s.ByVerdict)}
		if s.ByPath != s.Path {
			r.ByFile = s.ByPath
		}
		out = append(out, r)
	}
	return out
}

func short(sha string) string { return sha[:min(12, len(sha))] }

// maxFailedError bounds an error text shown on the page: a reader quotes
// the file, and a file can hold anything.
const maxFailedError = 400

// failedRow is a file given up on the day, with its error.
type failedRow struct {
	File, Path, Time, Error string
	Attempts                int
}

func failedRows(fs []db.FailedFile, loc *time.Location) []failedRow {
	var out []failedRow
	for _, f := range fs {
		out = append(out, failedRow{File: baseName(f.Path), Path: f.Path, Time: f.Updated.In(loc).Format("15:04"),
			Error: read.Clip(f.Error, maxFailedError), Attempts: f.Attempts})
	}
	return out
}

// protoView is one prototype's campaign on the daily page.
type protoView struct {
	Name      string
	Revisions []revSwatch
	Campaign  string // what the campaign is: hits and dates
	Modes     []modeView
	Rayleigh  []rayleighView
	Note      string      // unmatched modes, thinned points
	Levels    []levelView // damping against the excitation level (amplitude.go)
	LeftOut   leftOutView // what the campaign's statistics left out (leftout.go)
}

type revSwatch struct {
	Name, Class string
	Campaign    int // hits of the campaign
	Today       int
}

type modeView struct {
	Name               string
	Rows               []modeRow
	Damping, Frequency template.HTML
	PlotError          string
}

type modeRow struct {
	Revision, Class        string
	N                      int
	Mean, CI, Geo, GeoCI   string
	Freq, FreqCI           string
	TodayN                 int
	TodayMean, TodayFreq   string
	Outliers               int
	Position, PositionNote string
}

// prototypeView gathers the campaign of one prototype: every hit of it
// in the history up to the end of the day, so that the page of a past day
// is the same whenever it is written.
func prototypeView(ctx context.Context, src Source, proto string, since, until time.Time, opt DailyOptions) (protoView, error) {
	pv := protoView{Name: orNone(proto)}
	hits, err := src.Hits(ctx, db.Filter{Prototype: proto, Until: until, ForStats: true})
	if err != nil {
		return pv, err
	}
	iopt := report.IdentifyOptions{WithFlagged: opt.WithFlagged}
	if opt.Expected != nil {
		iopt.Expected = opt.Expected(proto)
	}
	id := report.Identify(hits, iopt)
	stats := report.Stats(id)
	revs := id.Revisions()
	pv.LeftOut = leftOut(id, revs)
	revClass := map[string]string{}
	for i, r := range revs {
		revClass[r] = fmt.Sprintf("rev%d", i%len(revColors))
		sw := revSwatch{Name: orNone(r), Class: revClass[r]}
		for _, h := range id.Hits {
			if h.Revision == r {
				sw.Campaign++
				if !h.Time.Before(since) && h.Time.Before(until) {
					sw.Today++
				}
			}
		}
		pv.Revisions = append(pv.Revisions, sw)
	}
	loc := since.Location()
	if len(hits) > 0 {
		first, last := hits[0].Meta.HitTime.In(loc), hits[len(hits)-1].Meta.HitTime.In(loc)
		pv.Campaign = fmt.Sprintf("The campaign up to this day: %d hits from %s to %s", len(hits), first.Format("2006-01-02"), last.Format("2006-01-02"))
	}
	today := func(t time.Time) bool { return !t.Before(since) && t.Before(until) }
	var thinned []string
	unmatched := 0
	for _, o := range id.Obs {
		if o.Label == "" && today(o.Time) {
			unmatched++
		}
	}
	for _, l := range id.Labels {
		mv := modeView{Name: l.Name()}
		for _, rs := range stats {
			for _, ms := range rs.Modes {
				if ms.Label != l.Label {
					continue
				}
				row := modeRow{Revision: orNone(rs.Revision), Class: revClass[rs.Revision], N: ms.Damping.N,
					Mean: Pct(ms.Damping.Mean), CI: PctInterval(ms.Damping.MeanCI95),
					Geo: Pct(ms.Damping.GeoMean), GeoCI: PctInterval(ms.Damping.GeoMeanCI),
					Freq: Hz(ms.Frequency.Mean), FreqCI: HzInterval(ms.Frequency.MeanCI95), Outliers: len(ms.Outliers)}
				var tz, tf []float64
				for _, o := range ms.Obs {
					if today(o.Time) {
						tz = append(tz, o.DampingRatio)
						tf = append(tf, o.FrequencyHz)
					}
				}
				row.TodayN = len(tz)
				if len(tz) > 0 {
					mz, mf := mean(tz), mean(tf)
					row.TodayMean, row.TodayFreq = Pct(mz), Hz(mf)
					row.Position, row.PositionNote = position(mz, ms.Damping.Summary)
				}
				mv.Rows = append(mv.Rows, row)
			}
		}
		if len(mv.Rows) == 0 {
			continue
		}
		dz, df, note, err := modeScatter(id, stats, l, revs, since, until, opt.MaxCampaignPoints)
		if err != nil {
			mv.PlotError = err.Error()
		}
		mv.Damping, mv.Frequency = dz, df
		if note != "" {
			thinned = append(thinned, l.Label+": "+note)
		}
		pv.Modes = append(pv.Modes, mv)
	}
	var notes []string
	if unmatched > 0 {
		notes = append(notes, fmt.Sprintf("%d mode(s) of the day's hits match no labelled mode and are not in these plots.", unmatched))
	}
	if len(thinned) > 0 {
		notes = append(notes, "Campaign points thinned to keep the page small ("+strings.Join(thinned, "; ")+"); the day's hits are all drawn and the statistics use every hit.")
	}
	pv.Note = strings.Join(notes, " ")
	pv.Levels = levelViews(id, hits, revs, revClass)
	// Rayleigh coefficients of the revisions hit today.
	for ri, rs := range stats {
		hitToday := false
		for _, h := range id.Hits {
			if h.Revision == rs.Revision && today(h.Time) {
				hitToday = true
				break
			}
		}
		if !hitToday {
			continue
		}
		pv.Rayleigh = append(pv.Rayleigh, rayleighOf(rs, revClass[rs.Revision], ri))
	}
	return pv, nil
}

// position says where the day's mean damping stands against the campaign
// of its revision: inside the interval of the mean, or above or below the
// whole scatter.
func position(z float64, s report.Summary) (string, string) {
	switch {
	case s.N < 2 || math.IsNaN(s.MeanCI95[0]):
		return "", ""
	case z >= s.MeanCI95[0] && z <= s.MeanCI95[1]:
		return "within", "inside the 95 % interval of the campaign mean"
	case z > s.Mean+2*s.SD:
		return "high", "more than two standard deviations above the campaign mean"
	case z < s.Mean-2*s.SD:
		return "low", "more than two standard deviations below the campaign mean"
	case z > s.Mean:
		return "above", "above the interval of the campaign mean, within its scatter"
	default:
		return "below", "below the interval of the campaign mean, within its scatter"
	}
}

func mean(x []float64) float64 {
	s := 0.0
	for _, v := range x {
		s += v
	}
	return s / float64(len(x))
}

// Sizes of the campaign scatter plots.
var scatterW, scatterH = 11.5 * vg.Centimeter, 5.6 * vg.Centimeter

// modeScatter draws the damping ratio and the frequency of one mode over
// the campaign: every revision in its colour, the campaign's hits as small
// dots, the day's hits as rings, each revision's mean as a line over its
// hits with the 95 % interval of the mean as a band.
func modeScatter(id *report.Identified, stats []report.RevisionStats, l report.ModeLabel, revs []string, since, until time.Time,
	maxPoints int) (dz, df template.HTML, note string, err error) {
	type series struct {
		camp, day plotter.XYs
	}
	z := map[string]*series{}
	f := map[string]*series{}
	total := 0
	for _, o := range id.Obs {
		if o.Label != l.Label {
			continue
		}
		if z[o.Revision] == nil {
			z[o.Revision], f[o.Revision] = &series{}, &series{}
		}
		x := float64(o.Time.Unix())
		zp, fp := plotter.XY{X: x, Y: 100 * o.DampingRatio}, plotter.XY{X: x, Y: o.FrequencyHz}
		if !o.Time.Before(since) && o.Time.Before(until) {
			z[o.Revision].day = append(z[o.Revision].day, zp)
			f[o.Revision].day = append(f[o.Revision].day, fp)
		} else {
			z[o.Revision].camp = append(z[o.Revision].camp, zp)
			f[o.Revision].camp = append(f[o.Revision].camp, fp)
			total++
		}
	}
	step := 1
	if total > maxPoints {
		step = (total + maxPoints - 1) / maxPoints
		note = fmt.Sprintf("every %d%s of %d earlier hits drawn", step, ordinalSuffix(step), total)
	}
	loc := since.Location()
	build := func(data map[string]*series, ylabel string, stat func(ms report.ModeStat) (m float64, ci [2]float64)) (template.HTML, error) {
		p := newPlot("", ylabel)
		p.X.Tick.Marker = timeTicks{loc: loc}
		xmin, xmax := math.Inf(1), math.Inf(-1)
		ymin, ymax := math.Inf(1), math.Inf(-1)
		// Bands and means first, the points over them.
		for ri, r := range revs {
			s := data[r]
			if s == nil {
				continue
			}
			c := revColor(ri)
			for _, rs := range stats {
				if rs.Revision != r {
					continue
				}
				for _, ms := range rs.Modes {
					if ms.Label != l.Label {
						continue
					}
					m, ci := stat(ms)
					all := append(slices.Clone(s.camp), s.day...)
					x0, x1, _, _ := plotter.XYRange(all)
					if x1-x0 < 1 {
						x0, x1 = x0-1800, x1+1800
					}
					if !math.IsNaN(ci[0]) && !math.IsNaN(ci[1]) {
						b, err := hband(x0, x1, ci[0], ci[1], withAlpha(c, 0.22))
						if err != nil {
							return "", err
						}
						p.Add(b)
						ymin, ymax = math.Min(ymin, ci[0]), math.Max(ymax, ci[1])
					}
					if !math.IsNaN(m) {
						ln, err := line(plotter.XYs{{X: x0, Y: m}, {X: x1, Y: m}}, c, 1.2)
						if err != nil {
							return "", err
						}
						p.Add(ln)
					}
				}
			}
		}
		for ri, r := range revs {
			s := data[r]
			if s == nil {
				continue
			}
			c := revColor(ri)
			var camp plotter.XYs
			for i := 0; i < len(s.camp); i += step {
				camp = append(camp, s.camp[i])
			}
			if len(camp) > 0 {
				p.Add(dots{xy: camp, color: lighten(c, 0.35), size: vg.Points(2.6)})
			}
			if len(s.day) > 0 {
				sc, err := plotter.NewScatter(s.day)
				if err != nil {
					return "", err
				}
				sc.GlyphStyle = draw.GlyphStyle{Color: inkColor, Radius: vg.Points(3.1), Shape: draw.RingGlyph{}}
				inner, err := plotter.NewScatter(s.day)
				if err != nil {
					return "", err
				}
				inner.GlyphStyle = draw.GlyphStyle{Color: c, Radius: vg.Points(2.3), Shape: draw.CircleGlyph{}}
				p.Add(inner, sc)
			}
			for _, xy := range [][]plotter.XY{s.camp, s.day} {
				for _, pt := range xy {
					xmin, xmax = math.Min(xmin, pt.X), math.Max(xmax, pt.X)
					ymin, ymax = math.Min(ymin, pt.Y), math.Max(ymax, pt.Y)
				}
			}
		}
		if math.IsInf(xmin, 0) {
			return "", nil
		}
		p.X.Min, p.X.Max = padRange(xmin, xmax, 0.03, 1800)
		p.Y.Min, p.Y.Max = padRange(ymin, ymax, 0.08, math.Max(math.Abs(ymin)*0.05, 1e-3))
		return plotSVG(p, scatterW, scatterH, ylabel+" of "+l.Name()+" over the campaign")
	}
	dz, err = build(z, "damping ratio [%]", func(ms report.ModeStat) (float64, [2]float64) {
		return 100 * ms.Damping.Mean, [2]float64{100 * ms.Damping.MeanCI95[0], 100 * ms.Damping.MeanCI95[1]}
	})
	if err != nil {
		return "", "", note, err
	}
	df, err = build(f, "frequency [Hz]", func(ms report.ModeStat) (float64, [2]float64) {
		return ms.Frequency.Mean, ms.Frequency.MeanCI95
	})
	return dz, df, note, err
}

func ordinalSuffix(n int) string {
	if n%100 >= 11 && n%100 <= 13 {
		return "th"
	}
	switch n % 10 {
	case 1:
		return "st"
	case 2:
		return "nd"
	case 3:
		return "rd"
	}
	return "th"
}

// hitCard is one flagged or rejected hit with its decay plot.
type hitCard struct {
	File, Path    string
	Time, Verdict string
	Where         string
	Reasons       []reasonLine
	Modes         []string
	Plot          template.HTML
	NoPlot        string
	Note          string
	hit           db.Hit
	paths         []string
	read          read.Options
	maxSize       int64
	wantPlot      bool
}

type reasonLine struct {
	Code, Severity, Message string
	More                    int // further findings of the same code
}

// maxCardModes caps the modes listed on a hit card.
const maxCardModes = 5

// groupReasons lists each reason code of a hit once, with its first
// message and the number of further findings of the same code.
func groupReasons(rs []pipeline.Reason) []reasonLine {
	var out []reasonLine
	idx := map[string]int{}
	for _, r := range rs {
		if i, ok := idx[r.Code]; ok {
			out[i].More++
			continue
		}
		idx[r.Code] = len(out)
		out = append(out, reasonLine{Code: r.Code, Severity: string(r.Severity), Message: r.Message})
	}
	return out
}

// spoiledCards lists the day's flagged and rejected hits and draws their
// decays, re-reading the files in parallel.
func spoiledCards(ctx context.Context, src Source, hits []db.Hit, since, until time.Time, opt DailyOptions) ([]hitCard, int, int, error) {
	loc := since.Location()
	var cards []hitCard
	for _, h := range hits {
		if h.Result.Verdict != pipeline.Flagged && h.Result.Verdict != pipeline.Rejected {
			continue
		}
		c := hitCard{File: baseName(h.Path), Path: h.Path, Time: h.Meta.HitTime.In(loc).Format("15:04:05"),
			Verdict: string(h.Result.Verdict), hit: h, paths: []string{h.Path}}
		var where []string
		for _, kv := range [][2]string{{"bay", h.Meta.Bay}, {"", h.Meta.Prototype}, {"revision", h.Meta.Revision},
			{"point", h.Meta.Point}, {"direction", h.Meta.Direction}} {
			if kv[1] != "" {
				where = append(where, strings.TrimSpace(kv[0]+" "+kv[1]))
			}
		}
		c.Where = strings.Join(where, " · ")
		c.Reasons = groupReasons(h.Result.Reasons)
		for i, m := range h.Result.Modes {
			if i == maxCardModes && len(h.Result.Modes) > maxCardModes+1 {
				c.Modes = append(c.Modes, fmt.Sprintf("and %d more", len(h.Result.Modes)-i))
				break
			}
			s := fmt.Sprintf("%d: %s Hz, ζ %s %% (%s)", i+1, Hz(m.FrequencyHz), Pct(m.DampingRatio), PctInterval(m.DampingRatioCI))
			if m.Label != "" {
				s = m.Label + " " + s
			}
			if m.Dropped {
				s += ", dropped"
			}
			c.Modes = append(c.Modes, s)
		}
		if len(c.Modes) == 0 {
			c.Modes = []string{"no mode found"}
		}
		c.wantPlot = len(cards) < opt.MaxDecayPlots
		if !c.wantPlot {
			c.NoPlot = fmt.Sprintf("Not plotted: the page draws the first %d flagged or rejected hits.", opt.MaxDecayPlots)
		}
		if opt.Read != nil {
			c.read = opt.Read(h)
		}
		c.maxSize = opt.MaxFileSize
		cards = append(cards, c)
	}
	if len(cards) == 0 {
		return nil, 0, 0, nil
	}
	// The other paths the same bytes were seen under, in case the first
	// is gone.
	files, err := src.StoredFiles(ctx, db.Filter{Since: since, Until: until,
		Verdicts: []pipeline.Verdict{pipeline.Flagged, pipeline.Rejected}})
	if err != nil {
		return nil, 0, 0, err
	}
	others := map[int64][]string{}
	for _, f := range files {
		others[f.HitID] = f.Others
	}
	work := make(chan int)
	var wg sync.WaitGroup
	for range max(1, runtime.GOMAXPROCS(0)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range work {
				c := &cards[i]
				c.paths = append(c.paths, others[c.hit.ID]...)
				drawCard(ctx, c)
			}
		}()
	}
	for i := range cards {
		if cards[i].wantPlot {
			work <- i
		}
	}
	close(work)
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return nil, 0, 0, err
	}
	plotted, unplotted := 0, 0
	for _, c := range cards {
		if c.Plot != "" {
			plotted++
		} else if c.wantPlot {
			unplotted++
		}
	}
	return cards, plotted, unplotted, nil
}

// drawCard re-reads the hit's file, checks that it is the recorded
// content, re-analyses it and draws the decay, or says why not.
func drawCard(ctx context.Context, c *hitCard) {
	if ctx.Err() != nil {
		return
	}
	var data []byte
	var path string
	var gone, changed []string
	for _, p := range c.paths {
		b, err := read.ReadRegular(ctx, p, c.maxSize)
		if errors.Is(err, fs.ErrNotExist) {
			gone = append(gone, p)
			continue
		}
		if err != nil {
			c.NoPlot = fmt.Sprintf("The file cannot be read now: %v", err)
			return
		}
		sum := sha256.Sum256(b)
		if !strings.EqualFold(hex.EncodeToString(sum[:]), c.hit.SHA256) {
			changed = append(changed, p)
			continue
		}
		data, path = b, p
		break
	}
	if data == nil {
		switch {
		case len(changed) > 0:
			c.NoPlot = fmt.Sprintf("The file at %s has changed since it was recorded (its content hash differs), so its decay is not drawn.", changed[0])
		default:
			c.NoPlot = fmt.Sprintf("The file is no longer at %s, so its decay cannot be drawn.", strings.Join(gone, " or "))
		}
		return
	}
	if path != c.hit.Path {
		c.Note = "Read from " + path + ", a copy with the same content."
	}
	rec, err := read.Data(path, data, c.read)
	if err != nil {
		c.NoPlot = fmt.Sprintf("The file cannot be read now: %v", err)
		return
	}
	tr, err := newTrace(rec, c.hit.Result)
	if err != nil {
		c.NoPlot = err.Error()
		return
	}
	svg, err := decaySVG(tr, "decay of "+c.File)
	if err != nil {
		c.NoPlot = err.Error()
		return
	}
	c.Plot = svg
}

// baseName is the last element of a slash or backslash path (hit paths
// may come from either system).
func baseName(p string) string {
	if i := strings.LastIndexAny(p, `/\`); i >= 0 {
		return p[i+1:]
	}
	return p
}
