package live

import (
	"context"
	"fmt"
	"math"
	"net/url"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/robust"
	"github.com/ringlog/ringlog/report"
	"github.com/ringlog/ringlog/report/page"
)

// recentShown is how many hits the list of recent hits shows.
const recentShown = 8

// minBandHits is the number of earlier usable hits of a revision a mode
// needs before the page draws its campaign band.
const minBandHits = 5

// bandK is the half-width of the campaign band in scaled median absolute
// deviations: the outlier rule of package report (report.OutlierK).
const bandK = 3

// view is what the main part of the page shows.
type view struct {
	Now         string
	Last        *hitView
	Failed      *failView
	Tally       []tallyRow
	TallyTotal  tallyRow
	Recent      []recentRow
	DailyLink   string
	CompareLink string
	CompareText string
}

type hitView struct {
	ID                  int64
	Verdict             string // accepted, flagged, rejected
	Headline, Counts    string
	File, Where, Time   string
	Decided, Do, Code   string
	Message             string
	Others              []reasonView
	Modes               []modeView
	PlotURL, PlotAlt    string
	NoModes             bool
	CampaignNote        string
	BandRevision        string
	BandHits            int
	BandInsufficientMsg string
}

type reasonView struct{ Code, Severity, Message string }

type modeView struct {
	Label              string
	Freq, FreqCI       string
	Damp, DampCI       string
	Dropped            bool
	FreqBand, DampBand *bandView
}

// bandView places a value with its interval against the campaign band on
// a scale of 0..100 for the small drawing.
type bandView struct {
	Text      string // the band in numbers
	Judgement string // inside, above or below
	Inside    bool
	Lo, W     float64 // band start and width on the scale
	X         float64 // the value
	CILo, CIW float64 // its interval
}

type failView struct{ File, Message, Time string }

type tallyRow struct {
	Prototype, Revision         string
	Accepted, Flagged, Rejected int
	Total                       int
}

type recentRow struct {
	ID                    int64
	Time, File, Where     string
	Verdict, Word, Reason string
}

// buildView reads what the page shows from the store.
func (s *Server) buildView(ctx context.Context) (*view, error) {
	now := s.opt.Now()
	v := &view{Now: now.Format("15:04:05")}
	since, until := dayBounds(now)
	v.DailyLink = "daily?day=" + since.Format("2006-01-02")
	tally, err := s.store.TallyRecorded(ctx, since, until)
	if err != nil {
		return nil, err
	}
	for _, t := range tally {
		r := tallyRow{Prototype: orNone(t.Prototype), Revision: orNone(t.Revision), Accepted: t.Verdicts[pipeline.Accepted],
			Flagged: t.Verdicts[pipeline.Flagged], Rejected: t.Verdicts[pipeline.Rejected], Total: t.Total}
		v.Tally = append(v.Tally, r)
		v.TallyTotal.Accepted += r.Accepted
		v.TallyTotal.Flagged += r.Flagged
		v.TallyTotal.Rejected += r.Rejected
		v.TallyTotal.Total += r.Total
	}
	recent, err := s.store.RecentHits(ctx, recentShown)
	if err != nil {
		return nil, err
	}
	for _, h := range recent {
		r := recentRow{ID: h.ID, Time: h.IngestedAt.In(now.Location()).Format("15:04:05"), File: baseName(h.Path),
			Where: where(h), Verdict: string(h.Result.Verdict), Word: verdictWord(h.Result.Verdict)}
		if rs, ok := deciding(h.Result); ok {
			r.Reason = adviceFor(rs).What
		}
		v.Recent = append(v.Recent, r)
	}
	st, err := s.store.Status(ctx)
	if err != nil {
		return nil, err
	}
	if len(recent) == 0 {
		if le := st.LastError; le != nil && le.Final {
			v.Failed = &failView{File: baseName(le.Path), Message: le.Message, Time: le.Time.In(now.Location()).Format("15:04:05")}
		}
		return v, nil
	}
	last := recent[0]
	if le := st.LastError; le != nil && le.Final && le.Time.After(last.IngestedAt) {
		v.Failed = &failView{File: baseName(le.Path), Message: le.Message, Time: le.Time.In(now.Location()).Format("15:04:05")}
	}
	hv, revs, err := s.hitView(ctx, last, now.Location())
	if err != nil {
		return nil, err
	}
	v.Last = hv
	if a, b, ok := comparePair(revs, last.Meta.Revision); ok {
		q := url.Values{"prototype": {last.Meta.Prototype}, "a": {a}, "b": {b}}
		v.CompareLink = "compare?" + q.Encode()
		v.CompareText = fmt.Sprintf("Revision %s against %s of %s", orNone(b), orNone(a), orNone(last.Meta.Prototype))
	}
	return v, nil
}

// comparePair picks the revisions to compare for the last hit's revision
// cur: the one before it in order of first appearance (cur against its
// predecessor), or, for the first revision, the one after it.
func comparePair(revs []string, cur string) (a, b string, ok bool) {
	i := slices.Index(revs, cur)
	switch {
	case i < 0 || len(revs) < 2:
		return "", "", false
	case i == 0:
		return cur, revs[1], true
	default:
		return revs[i-1], cur, true
	}
}

// hitView describes the last hit, its modes against their campaign bands.
func (s *Server) hitView(ctx context.Context, h db.Hit, loc *time.Location) (*hitView, []string, error) {
	res := h.Result
	hv := &hitView{ID: h.ID, Verdict: string(res.Verdict), File: baseName(h.Path), Where: where(h),
		Time: h.Meta.HitTime.In(loc).Format("15:04:05")}
	switch res.Verdict {
	case pipeline.Accepted:
		hv.Headline, hv.Counts = "ACCEPTED", "This hit counts."
		hv.Decided = "Every check passed."
	case pipeline.Flagged:
		hv.Headline, hv.Counts = "FLAGGED", "This hit counts, with a caution."
	default:
		hv.Headline, hv.Counts = "REJECTED", "This hit does not count: strike again."
	}
	if r, ok := deciding(res); ok {
		a := adviceFor(r)
		hv.Decided, hv.Do, hv.Code, hv.Message = a.What, a.Do, r.Code, r.Message
	} else if res.Verdict == pipeline.Rejected {
		hv.Decided, hv.Do = "No mode of the hit could be used.", "Strike again."
	}
	seen := map[string]bool{hv.Code: true}
	for _, r := range res.Reasons {
		if seen[r.Code] {
			continue
		}
		seen[r.Code] = true
		hv.Others = append(hv.Others, reasonView{Code: r.Code, Severity: string(r.Severity), Message: r.Message})
	}
	hv.PlotURL = fmt.Sprintf("plot/%d-%d.svg", h.ID, h.ResultID)
	hv.PlotAlt = "decay and spectrum of " + hv.File

	// The campaign: every hit of the prototype, so that labels are those
	// of the daily report.
	id, err := s.campaign(ctx, h)
	if err != nil {
		return nil, nil, err
	}
	labels := map[int]string{}
	for _, o := range id.Obs {
		if o.HitID == h.ID {
			labels[o.Mode] = o.Label
		}
	}
	hv.BandRevision = orNone(h.Meta.Revision)
	earlier := map[int64]bool{}
	for _, x := range id.Hits {
		if x.ID < h.ID && x.Revision == h.Meta.Revision {
			earlier[x.ID] = true
		}
	}
	for i, m := range res.Modes {
		mv := modeView{Label: labels[i], Freq: page.Hz(m.FrequencyHz), FreqCI: page.HzInterval(m.FrequencyCI95),
			Damp: page.Pct(m.DampingRatio), DampCI: page.PctInterval(m.DampingRatioCI), Dropped: m.Dropped}
		if mv.Label == "" {
			mv.Label = m.Label
		}
		if mv.Label == "" {
			mv.Label = nearestLabel(id.Labels, m.FrequencyHz)
		}
		if mv.Label == "" {
			mv.Label = "mode " + strconv.Itoa(i+1)
		} else if l := labels[i]; l != "" && !m.Dropped {
			var f, z []float64
			for _, o := range id.Select(h.Meta.Revision, l) {
				if earlier[o.HitID] {
					f = append(f, o.FrequencyHz)
					z = append(z, o.DampingRatio)
				}
			}
			hv.BandHits = max(hv.BandHits, len(f))
			if len(f) >= minBandHits {
				mv.FreqBand = band(f, m.FrequencyHz, m.FrequencyCI95, page.Hz, " Hz")
				mv.DampBand = band(z, m.DampingRatio, m.DampingRatioCI, page.Pct, " %")
			}
		}
		hv.Modes = append(hv.Modes, mv)
	}
	hv.NoModes = len(hv.Modes) == 0
	if hv.BandHits < minBandHits {
		hv.BandInsufficientMsg = fmt.Sprintf("The campaign bands appear once revision %s has %d earlier usable hits of a mode (%d so far).",
			hv.BandRevision, minBandHits, hv.BandHits)
	}
	revs := id.Revisions()
	if !slices.Contains(revs, h.Meta.Revision) {
		revs = append(revs, h.Meta.Revision)
	}
	return hv, revs, nil
}

// campaignMaxAge is how long the identified campaign of a prototype is
// kept before it is computed again: loading and identifying a long
// history on every hit of a burst would take the daemon's processors
// from the recording. The hits of the last seconds then join the bands
// late; the last hit is always named, by the nearest identified mode.
const campaignMaxAge = 10 * time.Second

// campaignCache keeps the identified campaign of one prototype.
type campaignCache struct {
	prototype string
	at        time.Time
	id        *report.Identified
}

// campaign returns the identified hits of h's prototype, from the cache
// when it is young enough.
func (s *Server) campaign(ctx context.Context, h db.Hit) (*report.Identified, error) {
	s.campMu.Lock()
	defer s.campMu.Unlock()
	now := time.Now()
	if c := s.camp; c != nil && c.prototype == h.Meta.Prototype && now.Sub(c.at) < campaignMaxAge {
		return c.id, nil
	}
	var expected []report.Expected
	if s.opt.Expected != nil {
		expected = s.opt.Expected(h.Meta.Prototype)
	}
	hits, err := s.store.Hits(ctx, db.Filter{Prototype: h.Meta.Prototype, ForStats: true})
	if err != nil {
		return nil, err
	}
	if !slices.ContainsFunc(hits, func(x db.Hit) bool { return x.ID == h.ID }) {
		hits = append(hits, h)
	}
	id := report.Identify(hits, report.IdentifyOptions{Expected: expected})
	s.camp = &campaignCache{prototype: h.Meta.Prototype, at: now, id: id}
	return id, nil
}

// nearestLabel names a mode the statistics left out (of a rejected hit,
// or dropped) after the nearest identified mode within its tolerance
// (report.DefaultTolerance when it states none); "" when none is near.
func nearestLabel(labels []report.ModeLabel, f float64) string {
	best, name := math.Inf(1), ""
	for _, l := range labels {
		tol := l.Tolerance
		if tol <= 0 {
			tol = report.DefaultTolerance
		}
		ref := l.FrequencyHz
		if l.NominalHz > 0 {
			ref = l.NominalHz
		}
		if d := math.Abs(f-ref) / ref; d <= tol && d < best {
			best, name = d, l.Label
		}
	}
	return name
}

// band is the campaign band of earlier values x, with value v and its
// interval ci placed on a common scale.
func band(x []float64, v float64, ci [2]float64, format func(float64) string, unit string) *bandView {
	med := robust.Median(x)
	dev := bandK * report.MADScale * report.MAD(x)
	lo, hi := med-dev, med+dev
	b := &bandView{Text: format(lo) + " – " + format(hi) + unit}
	switch {
	case math.IsNaN(v):
		b.Judgement = "not known"
	case v < lo:
		b.Judgement = "below the band"
	case v > hi:
		b.Judgement = "above the band"
	default:
		b.Judgement, b.Inside = "inside the band", true
	}
	// The scale: the band and the value with its interval, padded.
	smin, smax := lo, hi
	for _, y := range []float64{v, ci[0], ci[1]} {
		if !math.IsNaN(y) && !math.IsInf(y, 0) {
			smin, smax = math.Min(smin, y), math.Max(smax, y)
		}
	}
	pad := 0.08 * (smax - smin)
	if pad == 0 {
		pad = math.Max(math.Abs(smax)*0.01, 1e-12)
	}
	smin, smax = smin-pad, smax+pad
	at := func(y float64) float64 {
		if math.IsNaN(y) || math.IsInf(y, 0) {
			return -1
		}
		return math.Round(1000*(y-smin)/(smax-smin)) / 10
	}
	b.Lo, b.W = at(lo), math.Max(at(hi)-at(lo), 0.4)
	b.X = at(v)
	b.CILo = at(ci[0])
	b.CIW = math.Max(at(ci[1])-b.CILo, 0)
	if b.CILo < 0 {
		b.CILo, b.CIW = 0, 0
	}
	return b
}

func verdictWord(v pipeline.Verdict) string {
	switch v {
	case pipeline.Accepted:
		return "accepted"
	case pipeline.Flagged:
		return "flagged"
	}
	return "rejected"
}

// where names the prototype, revision, bay, point and direction of a hit.
func where(h db.Hit) string {
	var parts []string
	for _, kv := range [][2]string{{"", h.Meta.Prototype}, {"revision ", h.Meta.Revision}, {"", h.Meta.Bay},
		{"point ", h.Meta.Point}, {"direction ", h.Meta.Direction}} {
		if kv[1] != "" {
			parts = append(parts, kv[0]+kv[1])
		}
	}
	return strings.Join(parts, " · ")
}

func orNone(s string) string {
	if s == "" {
		return "(none)"
	}
	return s
}

// baseName is the last element of a slash or backslash path.
func baseName(p string) string {
	if i := strings.LastIndexAny(p, `/\`); i >= 0 {
		return p[i+1:]
	}
	return p
}

// dayBounds returns the start of t's calendar day and of the next.
func dayBounds(t time.Time) (since, until time.Time) {
	y, m, d := t.Date()
	since = time.Date(y, m, d, 0, 0, 0, 0, t.Location())
	return since, since.AddDate(0, 0, 1)
}
