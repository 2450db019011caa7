package report

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"
	"time"
)

// ExportMode is one row of the per-mode damping table of an export.
type ExportMode struct {
	Label  string      `json:"label"`
	Name   string      `json:"name"`
	Source LabelSource `json:"label_source"`
	N      int         `json:"n"`
	// Frequency: mean, Student t interval of the mean, sample SD.
	FrequencyHz   float64    `json:"frequency_hz"`
	FrequencyCI95 [2]float64 `json:"frequency_ci95"`
	FrequencySD   float64    `json:"frequency_sd"`
	// Damping ratio (fraction of critical): mean, Student t interval of
	// the mean, sample SD, geometric mean and its interval (t on log).
	DampingRatio       float64    `json:"damping_ratio"`
	DampingRatioCI95   [2]float64 `json:"damping_ratio_ci95"`
	DampingRatioSD     float64    `json:"damping_ratio_sd"`
	GeometricMean      float64    `json:"geometric_mean"`
	GeometricMeanCI95  [2]float64 `json:"geometric_mean_ci95"`
	BootstrapCI95      [2]float64 `json:"bootstrap_ci95"`
	FittedDampingRatio float64    `json:"fitted_damping_ratio"` // of the Rayleigh fit, NaN without one
}

// Provenance says which hits and which analysis an export comes from.
type Provenance struct {
	Hits             []HitRef    `json:"hits"`
	AnalysisVersions []string    `json:"analysis_versions"`
	Excluded         []Exclusion `json:"excluded"`
	// ExcludedByHand lists the hits excluded by hand, with why, by whom
	// and when.
	ExcludedByHand []ExcludedHit `json:"excluded_by_hand"`
}

// Export is the exportable summary of one revision of a prototype.
type Export struct {
	Format      string            `json:"format"` // "ringlog-damping-export 1"
	Prototype   string            `json:"prototype"`
	Revision    string            `json:"revision"`
	GeneratedAt time.Time         `json:"generated_at"`
	Tool        string            `json:"tool"`
	Units       map[string]string `json:"units"`
	Modes       []ExportMode      `json:"modes"`
	// Rayleigh is the fit over every labelled mode (nil when it cannot be
	// made, RayleighNote then says why); StiffnessOnly the alpha = 0 fit.
	Rayleigh      *RayleighFit `json:"rayleigh"`
	StiffnessOnly *RayleighFit `json:"stiffness_only"`
	RayleighNote  string       `json:"rayleigh_note,nullempty"`
	Provenance    Provenance   `json:"provenance"`
	Cautions      []string     `json:"cautions"`
}

// ExportFormat names the layout of Export; it changes when a key changes
// meaning.
const ExportFormat = "ringlog-damping-export 1"

// ExportOptions tune BuildExport.
type ExportOptions struct {
	Tool        string    // the program and version that writes the export
	GeneratedAt time.Time // stamped into the export
	Rayleigh    RayleighOptions
}

// BuildExport assembles the export of one revision's statistics: the mode
// table, the Rayleigh and stiffness-only fits over all its modes, and the
// hits and analysis versions behind them.
func BuildExport(rs RevisionStats, opt ExportOptions) Export {
	ex := Export{Format: ExportFormat, Prototype: rs.Prototype, Revision: rs.Revision, GeneratedAt: opt.GeneratedAt,
		Tool: opt.Tool, Units: rayleighUnits(), Modes: []ExportMode{}, Cautions: Cautions()}
	seen := map[int64]bool{}
	for _, ms := range rs.Modes {
		ex.Modes = append(ex.Modes, ExportMode{
			Label: ms.Label, Name: ms.Name, Source: ms.Source, N: ms.Damping.N,
			FrequencyHz: ms.Frequency.Mean, FrequencyCI95: ms.Frequency.MeanCI95, FrequencySD: ms.Frequency.SD,
			DampingRatio: ms.Damping.Mean, DampingRatioCI95: ms.Damping.MeanCI95, DampingRatioSD: ms.Damping.SD,
			GeometricMean: ms.Damping.GeoMean, GeometricMeanCI95: ms.Damping.GeoMeanCI, BootstrapCI95: ms.Damping.BootstrapCI95,
			FittedDampingRatio: math.NaN(),
		})
		for _, h := range ms.Hits {
			if !seen[h.ID] {
				seen[h.ID] = true
				ex.Provenance.Hits = append(ex.Provenance.Hits, *h)
			}
		}
	}
	sort.Slice(ex.Provenance.Hits, func(a, b int) bool { return ex.Provenance.Hits[a].ID < ex.Provenance.Hits[b].ID })
	ex.Provenance.AnalysisVersions = analysisVersions(ex.Provenance.Hits)
	ex.Provenance.Excluded, ex.Provenance.ExcludedByHand = rs.Excluded, rs.ExcludedByHand
	rep, err := RayleighFor(rs, nil, opt.Rayleigh)
	switch {
	case err == nil:
		fit := rep.RayleighFit
		ex.Rayleigh, ex.StiffnessOnly = &fit, rep.StiffnessOnly
		for i := range ex.Modes {
			for _, m := range fit.Modes {
				if m.Label == ex.Modes[i].Label {
					ex.Modes[i].FittedDampingRatio = m.Fitted
				}
			}
		}
	case errors.Is(err, ErrNoModes) && len(rs.Modes) == 1:
		ex.RayleighNote = "one mode only: no Rayleigh fit; the stiffness-only fit matches it exactly"
		o := opt.Rayleigh
		o.StiffnessOnly = true
		if so, err := RayleighFor(rs, nil, o); err == nil {
			fit := so.RayleighFit
			ex.StiffnessOnly = &fit
		}
	default:
		ex.RayleighNote = err.Error()
	}
	return ex
}

// WriteExportJSON writes each export as one JSON object on a line of its
// own (NaN as null).
func WriteExportJSON(w io.Writer, exs []Export) error {
	bw := bufio.NewWriter(w)
	for _, ex := range exs {
		b, err := JSON(ex)
		if err != nil {
			return err
		}
		bw.Write(b)
		bw.WriteByte('\n')
	}
	return bw.Flush()
}

// ExportCSVHeader is the column header of WriteExportCSV.
var ExportCSVHeader = []string{
	"revision", "record", "name", "unit", "value", "ci95_low", "ci95_high", "sd", "n",
	"frequency_hz", "frequency_ci95_low", "frequency_ci95_high",
	"geometric_mean", "geometric_mean_ci95_low", "geometric_mean_ci95_high",
	"mc_ci95_low", "mc_ci95_high", "fitted_damping_ratio", "method",
}

// ExportCSVOptions tune WriteExportCSV.
type ExportCSVOptions struct {
	CSVOptions
	// WithProvenance puts the provenance (ExportProvenance) above the
	// table as "# " comment lines; without it the file is the table alone
	// and imports cleanly into a spreadsheet.
	WithProvenance bool
}

// ExportProvenance returns the provenance of a CSV export, one line each:
// format, tool, time, units, conventions, cautions, and per revision the
// hits used (id, SHA-256, analysis version, file), the analysis versions,
// the constraint or note of its Rayleigh fit and the excluded counts. A
// line break inside a value becomes a space.
func ExportProvenance(exs []Export) []string {
	var lines []string
	line := func(format string, args ...any) {
		lines = append(lines, strings.NewReplacer("\n", " ", "\r", " ").Replace(fmt.Sprintf(format, args...)))
	}
	line("format: %s", ExportFormat)
	if len(exs) > 0 {
		line("tool: %s", exs[0].Tool)
		line("generated_at: %s", exs[0].GeneratedAt.Format(time.RFC3339))
		line("prototype: %s", exs[0].Prototype)
	}
	line("units: frequency in Hz; damping ratio as a fraction of critical (0.02 = 2 %%); alpha in 1/s; beta in s; zeta(w) = alpha/(2 w) + beta w/2 with w = 2 pi f in rad/s")
	line("intervals: 95 %%; mode ci95 = Student t interval of the mean; geometric_mean_ci95 = Student t interval on log damping ratio, back-transformed; coefficient ci95 from the weighted least-squares covariance (lower ends clipped at 0); mc_ci95 = Monte Carlo over each mode's uncertainty")
	for _, c := range Cautions() {
		line("caution: %s", c)
	}
	for _, ex := range exs {
		line("revision %s: %d hit(s) used, analysis version(s) %s", revName(ex.Revision), len(ex.Provenance.Hits), strings.Join(ex.Provenance.AnalysisVersions, ", "))
		if ex.Rayleigh != nil && ex.Rayleigh.Constraint != "" {
			line("revision %s: %s", revName(ex.Revision), ex.Rayleigh.Constraint)
		}
		if ex.RayleighNote != "" {
			line("revision %s: %s", revName(ex.Revision), ex.RayleighNote)
		}
		for _, e := range ex.Provenance.Excluded {
			line("revision %s: excluded %d %s(s): %s", revName(ex.Revision), e.Count, e.What, e.Code)
		}
		for _, x := range ex.Provenance.ExcludedByHand {
			line("revision %s: excluded by hand: hit %d sha256 %s file %s by %s at %s: %s", revName(ex.Revision), x.HitID, x.SHA256, x.File,
				x.By, x.At.UTC().Format(time.RFC3339), x.Why)
		}
		for _, h := range ex.Provenance.Hits {
			line("revision %s hit: id %d sha256 %s analysis %s file %s", revName(ex.Revision), h.ID, h.SHA256, h.AnalysisVersion, h.File)
		}
	}
	return lines
}

// WriteExportProvenance writes ExportProvenance, one line each: the
// companion file of a CSV export.
func WriteExportProvenance(w io.Writer, exs []Export) error {
	bw := bufio.NewWriter(w)
	for _, l := range ExportProvenance(exs) {
		bw.WriteString(l + "\n")
	}
	return bw.Flush()
}

// WriteExportCSV writes the exports as one CSV table (with
// opt.WithProvenance, the provenance first as "# " comment lines): the
// header ExportCSVHeader and one row per record:
//   - record "mode": a mode's damping ratio (value = mean, ci95 = Student t
//     interval of the mean, sd = hit-to-hit SD, n = hits), its mean
//     frequency with interval, geometric mean with interval, and the
//     Rayleigh curve's damping ratio at it;
//   - records "rayleigh_alpha", "rayleigh_beta" (main fit) and
//     "stiffness_only_beta": value, ci95 from the covariance, sd, n = hits,
//     mc_ci95 the Monte Carlo interval, method.
//
// Cells that cannot be computed are empty. Numbers carry 6 significant
// digits. Cells are written by CSVWriter: none is taken as a formula.
func WriteExportCSV(w io.Writer, exs []Export, opt ExportCSVOptions) error {
	bw := bufio.NewWriter(w)
	if opt.WithProvenance {
		for _, l := range ExportProvenance(exs) {
			bw.WriteString("# " + l + "\n")
		}
	}
	cw := NewCSVWriter(bw, opt.CSVOptions)
	num := cw.Num
	if err := cw.Write(ExportCSVHeader); err != nil {
		return err
	}
	for _, ex := range exs {
		for _, m := range ex.Modes {
			cw.Write([]string{ex.Revision, "mode", m.Label, "1", num(m.DampingRatio), num(m.DampingRatioCI95[0]), num(m.DampingRatioCI95[1]),
				num(m.DampingRatioSD), strconv.Itoa(m.N), num(m.FrequencyHz), num(m.FrequencyCI95[0]), num(m.FrequencyCI95[1]),
				num(m.GeometricMean), num(m.GeometricMeanCI95[0]), num(m.GeometricMeanCI95[1]), "", "", num(m.FittedDampingRatio), ""})
		}
		n := strconv.Itoa(len(ex.Provenance.Hits))
		coef := func(record, name, unit string, v float64, ci [2]float64, sd float64, mc [2]float64, method string) {
			cw.Write([]string{ex.Revision, record, name, unit, num(v), num(ci[0]), num(ci[1]), num(sd), n,
				"", "", "", "", "", "", num(mc[0]), num(mc[1]), "", method})
		}
		if r := ex.Rayleigh; r != nil {
			coef("rayleigh_alpha", "alpha", "1/s", r.Alpha, r.AlphaCI95, r.AlphaSD, r.MCAlphaCI95, r.Method)
			coef("rayleigh_beta", "beta", "s", r.Beta, r.BetaCI95, r.BetaSD, r.MCBetaCI95, r.Method)
		}
		if r := ex.StiffnessOnly; r != nil {
			coef("stiffness_only_beta", "beta", "s", r.Beta, r.BetaCI95, r.BetaSD, r.MCBetaCI95, r.Method)
		}
	}
	if err := cw.Flush(); err != nil {
		return err
	}
	return bw.Flush()
}

// analysisVersions returns the distinct analysis versions of hits, sorted.
func analysisVersions(hits []HitRef) []string {
	var out []string
	for _, h := range hits {
		if !slices.Contains(out, h.AnalysisVersion) {
			out = append(out, h.AnalysisVersion)
		}
	}
	sort.Strings(out)
	return out
}
