package report

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"sort"
	"strconv"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/check"
	"github.com/ringlog/ringlog/pipeline/robust"
)

// Expected is one mode a prototype is expected to have (from the
// configuration's [[prototype.mode]] entries).
type Expected struct {
	Label       string
	FrequencyHz float64
	// Tolerance is relative (0.1 for +/- 10 %); 0 means DefaultTolerance.
	Tolerance float64
}

// DefaultTolerance is the relative tolerance of an expected mode that
// states none: the same default the daemon uses when it labels modes.
const DefaultTolerance = 0.10

// DefaultClusterGap is the relative frequency gap that separates two
// clusters when no expected modes are given: sorted frequencies further
// apart than 5 % start a new cluster.
const DefaultClusterGap = 0.05

// DefaultMinShare is the share of the hits a cluster must be found in to
// be named; modes of smaller clusters are reported as unmatched.
const DefaultMinShare = 0.2

// LabelSource says where a mode label came from.
type LabelSource string

// Label sources.
const (
	SourceStored  LabelSource = "stored"  // stored with the mode in the history
	SourceConfig  LabelSource = "config"  // nearest expected mode of the configuration
	SourceCluster LabelSource = "cluster" // a cluster of the frequencies in the history
)

// Exclusion reason codes of our own, beside the quality-rule codes.
const (
	CodeAllModesDropped = "all_modes_dropped" // rejected because every mode was dropped
	CodeNoEstimate      = "no_estimate"       // a mode without a usable frequency or damping ratio
	CodeExcludedByHand  = "excluded_by_hand"  // a hit left out with 'ringlog exclude'
)

// IdentifyOptions tune Identify. The zero value uses the defaults.
type IdentifyOptions struct {
	// Expected modes of the prototype; when empty the frequencies are
	// clustered.
	Expected []Expected
	// ClusterGap is the relative gap that splits clusters (default
	// DefaultClusterGap).
	ClusterGap float64
	// MinShare is the share of the usable hits a cluster must be found in
	// (default DefaultMinShare); at least two hits when there are two or
	// more.
	MinShare float64
	// WithFlagged counts the modes that a doubting flag names too (the
	// --with-flagged of the history commands).
	WithFlagged bool
}

// Observation is one mode that counts: see Identify.
type Observation struct {
	HitID           int64       `json:"hit_id"`
	SHA256          string      `json:"sha256"`
	File            string      `json:"file"`
	Prototype       string      `json:"prototype"`
	Revision        string      `json:"revision"`
	Time            time.Time   `json:"hit_time"`
	AnalysisVersion string      `json:"analysis_version"`
	Mode            int         `json:"mode_index"` // index into the hit's result modes
	FrequencyHz     float64     `json:"frequency_hz"`
	DampingRatio    float64     `json:"damping_ratio"`
	DampingRatioSD  float64     `json:"damping_ratio_sd"` // the per-hit standard error
	Label           string      `json:"label"`            // "" when unmatched
	Source          LabelSource `json:"label_source,nullempty"`
}

// ModeLabel is one identified mode of the history.
type ModeLabel struct {
	Label  string      `json:"label"`
	Source LabelSource `json:"label_source"`
	// FrequencyHz is the median frequency of the observations carrying
	// the label (over every revision given to Identify).
	FrequencyHz float64 `json:"label_frequency_hz"`
	// NominalHz and Tolerance are the expected mode's, for config labels.
	NominalHz float64 `json:"nominal_frequency_hz,nullempty"`
	Tolerance float64 `json:"tolerance,nullempty"`
}

// Name is the label with its median frequency, e.g. "m2 (171 Hz)".
func (m ModeLabel) Name() string {
	return fmt.Sprintf("%s (%s Hz)", m.Label, fmtHz(m.FrequencyHz))
}

func fmtHz(f float64) string {
	if math.IsNaN(f) {
		return "?"
	}
	return strconv.FormatFloat(f, 'g', 4, 64)
}

// Exclusion counts what was left out of the statistics for one reason.
type Exclusion struct {
	Code string `json:"code"`
	// What is "hit" for rejected hits (counted once per hit and reason
	// code) and hits excluded by hand, "mode" for dropped, doubted or
	// unusable modes of kept hits.
	What  string   `json:"what"`
	Count int      `json:"count"`
	Files []string `json:"files"`
}

// ExcludedHit is a hit left out by hand, with the analyst's reason.
type ExcludedHit struct {
	HitID    int64     `json:"hit_id"`
	SHA256   string    `json:"sha256"`
	File     string    `json:"file"`
	Revision string    `json:"revision"`
	Why      string    `json:"why"`
	By       string    `json:"by"`
	At       time.Time `json:"at"`
}

// HitRef identifies a hit used by a report: its provenance.
type HitRef struct {
	ID              int64     `json:"id"`
	SHA256          string    `json:"sha256"`
	File            string    `json:"file"`
	Prototype       string    `json:"prototype"`
	Revision        string    `json:"revision"`
	Time            time.Time `json:"hit_time"`
	AnalysisVersion string    `json:"analysis_version"`
	Verdict         string    `json:"verdict"`
}

// Identified is the outcome of Identify.
type Identified struct {
	// Labels are the modes found, in frequency order.
	Labels []ModeLabel
	// Obs are the usable modes, labelled or not (Label "" is unmatched),
	// in the order of the hits and of the modes within a hit.
	Obs []Observation
	// Hits are the hits of the history that were looked at, usable or
	// rejected, in the order given.
	Hits []HitRef
	// Excluded counts, per revision, the rejected hits, the hits excluded
	// by hand and the dropped, doubted or unusable modes by reason code.
	Excluded map[string][]Exclusion
	// ByHand lists, per revision, the hits excluded by hand.
	ByHand map[string][]ExcludedHit
}

// Label returns the mode labelled l.
func (id *Identified) Label(l string) (ModeLabel, bool) {
	for _, m := range id.Labels {
		if m.Label == l {
			return m, true
		}
	}
	return ModeLabel{}, false
}

// Revisions returns the revisions of the hits in order of first
// appearance.
func (id *Identified) Revisions() []string {
	var out []string
	for _, h := range id.Hits {
		if !slices.Contains(out, h.Revision) {
			out = append(out, h.Revision)
		}
	}
	return out
}

// Select returns the labelled observations of one revision and label, in
// hit order.
func (id *Identified) Select(revision, label string) []Observation {
	n := 0
	for _, o := range id.Obs {
		if o.Revision == revision && o.Label == label && label != "" {
			n++
		}
	}
	if n == 0 {
		return nil
	}
	out := make([]Observation, 0, n)
	for _, o := range id.Obs {
		if o.Revision == revision && o.Label == label && label != "" {
			out = append(out, o)
		}
	}
	return out
}

// Unmatched returns the observations of a revision that carry no label.
func (id *Identified) Unmatched(revision string) []Observation {
	var out []Observation
	for _, o := range id.Obs {
		if o.Revision == revision && o.Label == "" {
			out = append(out, o)
		}
	}
	return out
}

// Identify decides which modes count and labels them. A mode counts when
// its hit is not rejected and not excluded by hand, the mode is not
// dropped, its frequency and damping ratio are usable, and no flag whose
// check.Effect doubts the value names it (a flag without a mode index names
// every mode of its hit); with opt.WithFlagged the doubted modes count too.
// What does not count is in Excluded, by reason code: a rejected hit under
// each rejecting code, a hit excluded by hand under excluded_by_hand (and
// in ByHand), a mode under the code that dropped or first doubted it.
//
// Identify labels every mode that counts. Hits should be of one
// prototype; pass every revision that is to be compared at once, so that a
// label names the same mode in each. Labels stored with a mode win; then
// the nearest expected mode within its tolerance (each label used at most
// once per hit, nearest first); without expected modes, clusters of the
// log frequencies. Modes that match nothing stay in Obs with an empty
// label.
func Identify(hits []db.Hit, opt IdentifyOptions) *Identified {
	if opt.ClusterGap <= 0 {
		opt.ClusterGap = DefaultClusterGap
	}
	if opt.MinShare <= 0 {
		opt.MinShare = DefaultMinShare
	}
	id := &Identified{Excluded: map[string][]Exclusion{}, ByHand: map[string][]ExcludedHit{}, Hits: make([]HitRef, 0, len(hits))}
	// one allocation for the observations: a long history has hundreds
	// of thousands
	nObs := 0
	for _, h := range hits {
		if h.Result != nil && h.Result.Verdict != pipeline.Rejected {
			nObs += len(h.Result.Modes)
		}
	}
	id.Obs = make([]Observation, 0, nObs)
	usableHits := 0
	for _, h := range hits {
		if h.Result == nil {
			continue
		}
		r := h.Result
		ref := HitRef{ID: h.ID, SHA256: h.SHA256, File: h.Path, Prototype: h.Meta.Prototype, Revision: h.Meta.Revision, Time: h.Meta.HitTime,
			AnalysisVersion: r.AnalysisVersion, Verdict: string(r.Verdict)}
		id.Hits = append(id.Hits, ref)
		rev := h.Meta.Revision
		if r.Verdict == pipeline.Rejected {
			codes := map[string]bool{}
			for _, rs := range r.Reasons {
				if rs.Severity == pipeline.SeverityReject && !codes[rs.Code] {
					codes[rs.Code] = true
					id.exclude(rev, rs.Code, "hit", h.Path)
				}
			}
			if len(codes) == 0 {
				id.exclude(rev, CodeAllModesDropped, "hit", h.Path)
			}
			continue
		}
		if x := h.Excluded; x != nil {
			id.exclude(rev, CodeExcludedByHand, "hit", h.Path)
			id.ByHand[rev] = append(id.ByHand[rev], ExcludedHit{HitID: h.ID, SHA256: h.SHA256, File: h.Path, Revision: rev,
				Why: x.Why, By: x.By, At: x.At})
			continue
		}
		usable := false
		for i, m := range r.Modes {
			if m.Dropped {
				found := false
				for _, rs := range r.Reasons {
					if rs.Severity == pipeline.SeverityDrop && rs.Mode != nil && *rs.Mode == i {
						found = true
						id.exclude(rev, rs.Code, "mode", h.Path)
						break
					}
				}
				if !found {
					id.exclude(rev, "dropped", "mode", h.Path)
				}
				continue
			}
			if !(m.FrequencyHz > 0) || math.IsInf(m.FrequencyHz, 0) || !(m.DampingRatio > 0 && m.DampingRatio < 1) {
				id.exclude(rev, CodeNoEstimate, "mode", h.Path)
				continue
			}
			if code := doubtingFlag(r.Reasons, i); code != "" && !opt.WithFlagged {
				id.exclude(rev, code, "mode", h.Path)
				continue
			}
			usable = true
			o := Observation{
				HitID: h.ID, SHA256: h.SHA256, File: h.Path, Prototype: h.Meta.Prototype, Revision: rev,
				Time: h.Meta.HitTime, AnalysisVersion: r.AnalysisVersion, Mode: i,
				FrequencyHz: m.FrequencyHz, DampingRatio: m.DampingRatio, DampingRatioSD: m.DampingRatioSD,
			}
			if m.Label != "" {
				o.Label, o.Source = m.Label, SourceStored
			}
			id.Obs = append(id.Obs, o)
		}
		if usable {
			usableHits++
		}
	}
	if len(opt.Expected) > 0 {
		id.matchExpected(opt.Expected)
	} else {
		id.cluster(opt, usableHits)
	}
	id.collectLabels(opt.Expected)
	return id
}

// excluded returns Excluded[rev], never nil.
func (id *Identified) excluded(rev string) []Exclusion {
	if x := id.Excluded[rev]; x != nil {
		return x
	}
	return []Exclusion{}
}

// byHand returns ByHand[rev], never nil.
func (id *Identified) byHand(rev string) []ExcludedHit {
	if x := id.ByHand[rev]; x != nil {
		return x
	}
	return []ExcludedHit{}
}

// doubtingFlag returns the code of the first flag that doubts the value of
// mode i (naming it, or naming no mode), "" when none does.
func doubtingFlag(reasons []pipeline.Reason, i int) string {
	for _, rs := range reasons {
		if rs.Severity == pipeline.SeverityFlag && (rs.Mode == nil || *rs.Mode == i) && check.Effect(rs.Code) == check.Doubts {
			return rs.Code
		}
	}
	return ""
}

func (id *Identified) exclude(rev, code, what, file string) {
	ex := id.Excluded[rev]
	for i := range ex {
		if ex[i].Code == code && ex[i].What == what {
			ex[i].Count++
			ex[i].Files = append(ex[i].Files, file)
			return
		}
	}
	id.Excluded[rev] = append(ex, Exclusion{Code: code, What: what, Count: 1, Files: []string{file}})
}

// byHit returns the index ranges of Obs belonging to one hit (Obs is in
// hit order).
func (id *Identified) byHit() [][2]int {
	var out [][2]int
	for lo := 0; lo < len(id.Obs); {
		hi := lo + 1
		for hi < len(id.Obs) && id.Obs[hi].HitID == id.Obs[lo].HitID {
			hi++
		}
		out = append(out, [2]int{lo, hi})
		lo = hi
	}
	return out
}

// matchExpected labels the unlabelled observations by the nearest expected
// mode within tolerance, each label at most once per hit, the closest pair
// first.
func (id *Identified) matchExpected(exp []Expected) {
	type pair struct {
		obs, exp int
		d        float64
	}
	for _, r := range id.byHit() {
		used := map[string]bool{}
		for i := r[0]; i < r[1]; i++ {
			if id.Obs[i].Label != "" {
				used[id.Obs[i].Label] = true
			}
		}
		var pairs []pair
		for i := r[0]; i < r[1]; i++ {
			if id.Obs[i].Label != "" {
				continue
			}
			for k, e := range exp {
				if !(e.FrequencyHz > 0) || used[e.Label] {
					continue
				}
				tol := e.Tolerance
				if tol <= 0 {
					tol = DefaultTolerance
				}
				d := math.Abs(id.Obs[i].FrequencyHz-e.FrequencyHz) / e.FrequencyHz
				if d <= tol {
					pairs = append(pairs, pair{i, k, d})
				}
			}
		}
		sort.SliceStable(pairs, func(a, b int) bool { return pairs[a].d < pairs[b].d })
		for _, p := range pairs {
			o := &id.Obs[p.obs]
			if o.Label != "" || used[exp[p.exp].Label] {
				continue
			}
			o.Label, o.Source = exp[p.exp].Label, SourceConfig
			used[o.Label] = true
		}
	}
}

// cluster groups the log frequencies of the unlabelled observations: sorted,
// split where neighbours are more than ClusterGap apart; a cluster wider
// than three gaps is split again at its widest gap (so that a few stray
// values cannot chain two modes together). A cluster found in fewer than
// MinShare of the usable hits stays unmatched. Within a cluster a hit's
// mode nearest the cluster median gets the label; its other modes there,
// and any member more than two gaps from the median, stay unmatched.
func (id *Identified) cluster(opt IdentifyOptions, usableHits int) {
	// the unlabelled observations by frequency, ties in their order
	type byFreq struct {
		f float64
		i int
	}
	order := make([]byFreq, 0, len(id.Obs))
	for i, o := range id.Obs {
		if o.Label == "" {
			order = append(order, byFreq{o.FrequencyHz, i})
		}
	}
	if len(order) == 0 {
		return
	}
	slices.SortFunc(order, func(a, b byFreq) int {
		if c := cmp.Compare(a.f, b.f); c != 0 {
			return c
		}
		return cmp.Compare(a.i, b.i)
	})
	idx := make([]int, len(order))
	logf := make([]float64, len(order))
	for k, o := range order {
		idx[k], logf[k] = o.i, math.Log(o.f)
	}
	gap := math.Log1p(opt.ClusterGap)
	var groups [][2]int
	var split func(lo, hi int)
	split = func(lo, hi int) {
		if hi-lo > 1 && logf[hi-1]-logf[lo] > 3*gap {
			best, at := -1.0, -1
			for k := lo + 1; k < hi; k++ {
				if d := logf[k] - logf[k-1]; d > best {
					best, at = d, k
				}
			}
			// Only split at a real gap: a dense continuum stays whole.
			if best > gap/2 {
				split(lo, at)
				split(at, hi)
				return
			}
		}
		groups = append(groups, [2]int{lo, hi})
	}
	lo := 0
	for k := 1; k <= len(logf); k++ {
		if k == len(logf) || logf[k]-logf[k-1] > gap {
			split(lo, k)
			lo = k
		}
	}
	need := int(math.Ceil(opt.MinShare * float64(usableHits)))
	need = max(need, min(2, usableHits))
	type named struct {
		members []int
		median  float64
	}
	var valid []named
	for _, g := range groups {
		members := idx[g[0]:g[1]]
		hits := map[int64]bool{}
		for _, i := range members {
			hits[id.Obs[i].HitID] = true
		}
		if len(hits) < need {
			continue
		}
		fs := make([]float64, len(members))
		for k, i := range members {
			fs[k] = id.Obs[i].FrequencyHz
		}
		valid = append(valid, named{members: slices.Clone(members), median: median(fs)})
	}
	taken := map[string]bool{}
	for _, o := range id.Obs {
		if o.Label != "" {
			taken[o.Label] = true
		}
	}
	n := 0
	for _, g := range valid {
		var label string
		for {
			n++
			label = "m" + strconv.Itoa(n)
			if !taken[label] {
				break
			}
		}
		// One label per hit: the member nearest the median, and none
		// further than two gaps from it.
		best := map[int64]int{}
		for _, i := range g.members {
			o := id.Obs[i]
			d := math.Abs(math.Log(o.FrequencyHz / g.median))
			if d > 2*gap {
				continue
			}
			if j, ok := best[o.HitID]; !ok || d < math.Abs(math.Log(id.Obs[j].FrequencyHz/g.median)) {
				best[o.HitID] = i
			}
		}
		for _, i := range best {
			id.Obs[i].Label, id.Obs[i].Source = label, SourceCluster
		}
	}
}

// collectLabels fills Labels from the labelled observations.
func (id *Identified) collectLabels(exp []Expected) {
	freqs := map[string][]float64{}
	src := map[string]LabelSource{}
	for _, o := range id.Obs {
		if o.Label == "" {
			continue
		}
		freqs[o.Label] = append(freqs[o.Label], o.FrequencyHz)
		if _, ok := src[o.Label]; !ok || o.Source == SourceStored {
			src[o.Label] = o.Source
		}
	}
	for l, fs := range freqs {
		m := ModeLabel{Label: l, Source: src[l], FrequencyHz: median(fs)}
		for _, e := range exp {
			if e.Label == l {
				m.NominalHz, m.Tolerance = e.FrequencyHz, e.Tolerance
				if m.Tolerance <= 0 {
					m.Tolerance = DefaultTolerance
				}
			}
		}
		id.Labels = append(id.Labels, m)
	}
	sort.Slice(id.Labels, func(a, b int) bool {
		if id.Labels[a].FrequencyHz != id.Labels[b].FrequencyHz {
			return id.Labels[a].FrequencyHz < id.Labels[b].FrequencyHz
		}
		return id.Labels[a].Label < id.Labels[b].Label
	})
}

// median returns the median of x (the mean of the two middle values when
// len(x) is even), NaN for no values. x is not modified. (gonum's
// stat.Quantile at 0.5 returns the lower middle value for even len(x),
// not the textbook median.) It selects rather than sorts: O(n).
func median(x []float64) float64 {
	if len(x) == 0 {
		return math.NaN()
	}
	return robust.MedianInPlace(slices.Clone(x))
}
