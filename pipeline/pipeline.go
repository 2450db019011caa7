package pipeline

import (
	"fmt"
	"sort"
)

// AnalysisVersion names the analysis that produced a Result. Bump it when
// an estimator or a rule changes in a way that can change stored numbers;
// the history keeps it beside every result.
const AnalysisVersion = "1.2.1"

// Role says what a channel measured.
type Role string

// Channel roles.
const (
	RoleResponse Role = "response" // accelerometer, velocity or displacement pick-up
	RoleForce    Role = "force"    // instrumented hammer load cell
	RoleTime     Role = "time"     // a time axis read from a file; never analysed
)

// Channel is one sampled signal of a recording.
type Channel struct {
	Name       string    // as the file names it
	Unit       string    // engineering unit, "" when unknown (WAV)
	Role       Role      // force or response
	SampleRate float64   // samples per second, > 0
	Samples    []float64 // in engineering units (after Sensitivity)
	// FullScale is the channel's measuring range in the same units as
	// Samples (the amplifier or ADC limit); 0 when unknown. The clipping
	// rule uses it when set and falls back to flat-topped runs otherwise.
	FullScale float64
}

// Duration returns the channel's length in seconds.
func (c *Channel) Duration() float64 {
	if c.SampleRate <= 0 {
		return 0
	}
	return float64(len(c.Samples)) / c.SampleRate
}

// Recording is one hit file read into memory, whatever its format.
type Recording struct {
	Path     string            // file the recording came from
	Format   string            // "csv", "wav", "uff58", "uff58b"
	Channels []Channel         // at least one
	Meta     map[string]string // metadata found in the file (key: value lines, UFF headers)
}

// Channel returns the channel with the given name, or nil.
func (r *Recording) Channel(name string) *Channel {
	for i := range r.Channels {
		if r.Channels[i].Name == name {
			return &r.Channels[i]
		}
	}
	return nil
}

// ByRole returns the channels with the given role, in file order.
func (r *Recording) ByRole(role Role) []*Channel {
	var out []*Channel
	for i := range r.Channels {
		if r.Channels[i].Role == role {
			out = append(out, &r.Channels[i])
		}
	}
	return out
}

// Severity says what a reason does to a hit or a mode.
type Severity string

// Severities, from mildest to harshest.
const (
	SeverityFlag   Severity = "flag"   // keep, but tell the engineer
	SeverityDrop   Severity = "drop"   // drop the mode it concerns; the hit stays
	SeverityReject Severity = "reject" // the hit is unusable
)

// Reason is one finding of a quality rule.
type Reason struct {
	Code     string   `json:"code"`     // stable reason code, e.g. "clipped"
	Message  string   `json:"message"`  // plain language, for the engineer
	Severity Severity `json:"severity"` // flag, drop or reject
	Mode     *int     `json:"mode"`     // index into Result.Modes when the reason concerns one mode
}

// ModeRef returns a pointer to i, for Reason.Mode.
func ModeRef(i int) *int { return &i }

// Estimate is one estimator's view of a mode.
type Estimate struct {
	Method       string  `json:"method"`        // "subspace", "nls", "envelope", "logdec", "halfpower"
	FrequencyHz  float64 `json:"frequency_hz"`  // natural frequency
	DampingRatio float64 `json:"damping_ratio"` // fraction of critical
	Note         string  `json:"note"`
}

// Mode is one structural mode found in a hit.
type Mode struct {
	FrequencyHz    float64    `json:"frequency_hz"`       // undamped natural frequency f_n
	FrequencyCI95  [2]float64 `json:"frequency_ci95"`     // 95 % interval of f_n
	DampingRatio   float64    `json:"damping_ratio"`      // primary value, fraction of critical
	DampingRatioCI [2]float64 `json:"damping_ratio_ci95"` // 95 % interval of the damping ratio
	DampingRatioSD float64    `json:"damping_ratio_sd"`   // standard error of the damping ratio
	Amplitude      float64    `json:"amplitude"`          // initial amplitude in channel units
	EnergyShare    float64    `json:"energy_share"`       // share of the modelled response energy, 0..1
	Cycles         float64    `json:"cycles"`             // cycles above the noise used by the estimate
	DecaySNRdB     float64    `json:"snr_db"`             // peak signal-to-noise ratio of this mode, dB
	Spread         float64    `json:"estimator_spread"`   // max relative deviation of the cross-checks from the primary zeta
	Estimates      []Estimate `json:"estimates"`          // all estimators, primary first
	Dropped        bool       `json:"dropped"`            // dropped by a rule; kept for the record
	Label          string     `json:"label"`              // expected-mode label when known
	// AmplitudeDamping is the damping ratio against the amplitude along the
	// decay, largest amplitude first; empty when the mode could not be
	// isolated or its decay spans too little amplitude.
	AmplitudeDamping []AmplitudeBin `json:"amplitude_damping"`
	// MergedPoles > 0 says that the least-squares fit had split this mode's
	// non-exponential decay into that many close poles, which were judged
	// to be one mode and merged (friction, amplitude-dependent damping).
	MergedPoles int `json:"merged_poles"`
}

// Estimate returns the estimate of the named method, if present.
func (m *Mode) Estimate(method string) (Estimate, bool) {
	for _, e := range m.Estimates {
		if e.Method == method {
			return e, true
		}
	}
	return Estimate{}, false
}

// Verdict is the outcome for a whole hit.
type Verdict string

// Verdicts.
const (
	Accepted Verdict = "accepted"
	Flagged  Verdict = "flagged"
	Rejected Verdict = "rejected"
)

// Result is everything the analysis says about one hit.
type Result struct {
	File            string            `json:"file"`
	Format          string            `json:"format"`
	Channel         string            `json:"channel"`       // response channel analysed
	ForceChannel    string            `json:"force_channel"` // force channel used, if any
	SampleRate      float64           `json:"sample_rate_hz"`
	DurationS       float64           `json:"duration_s"`
	NoiseRMS        float64           `json:"noise_rms"`
	TriggerS        float64           `json:"trigger_s"`    // time of the impact from the record start
	OnsetS          float64           `json:"onset_s"`      // start of the free decay the estimators used
	WindowTauS      float64           `json:"window_tau_s"` // exponential window corrected for
	PeakForce       float64           `json:"peak_force"`   // peak of the force pulse above its baseline, force units; 0 without a force channel
	Verdict         Verdict           `json:"verdict"`
	Reasons         []Reason          `json:"reasons"`
	Modes           []Mode            `json:"modes"`
	Meta            map[string]string `json:"meta"`
	AnalysisVersion string            `json:"analysis_version"`
}

// AddReason appends a reason.
func (r *Result) AddReason(code string, sev Severity, mode *int, format string, args ...any) {
	r.Reasons = append(r.Reasons, Reason{Code: code, Severity: sev, Mode: mode, Message: fmt.Sprintf(format, args...)})
}

// Decide sets Verdict from the reasons and marks dropped modes: any
// rejecting reason rejects the hit; a dropped mode or a flag flags it;
// otherwise it is accepted. A hit whose every mode was dropped is rejected.
func (r *Result) Decide() {
	r.Verdict = Accepted
	for _, rs := range r.Reasons {
		switch rs.Severity {
		case SeverityReject:
			r.Verdict = Rejected
		case SeverityDrop:
			if rs.Mode != nil && *rs.Mode >= 0 && *rs.Mode < len(r.Modes) {
				r.Modes[*rs.Mode].Dropped = true
			}
			if r.Verdict == Accepted {
				r.Verdict = Flagged
			}
		case SeverityFlag:
			if r.Verdict == Accepted {
				r.Verdict = Flagged
			}
		}
	}
	if r.Verdict != Rejected && len(r.Modes) > 0 {
		kept := 0
		for _, m := range r.Modes {
			if !m.Dropped {
				kept++
			}
		}
		if kept == 0 {
			r.Verdict = Rejected
		}
	}
}

// SortModes orders modes by ascending frequency and remaps the mode
// indices of the reasons.
func (r *Result) SortModes() {
	idx := make([]int, len(r.Modes))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return r.Modes[idx[a]].FrequencyHz < r.Modes[idx[b]].FrequencyHz })
	newPos := make([]int, len(idx))
	modes := make([]Mode, len(idx))
	for to, from := range idx {
		modes[to] = r.Modes[from]
		newPos[from] = to
	}
	r.Modes = modes
	for i := range r.Reasons {
		if m := r.Reasons[i].Mode; m != nil && *m >= 0 && *m < len(newPos) {
			r.Reasons[i].Mode = ModeRef(newPos[*m])
		}
	}
}
