package check

import "github.com/ringlog/ringlog/pipeline"

// Reason codes. They are stable: the history stores them and reports
// group by them. A rule may give more than one code (a hit-level and a
// milder variant, or two causes of the same fault).
const (
	CodeClipped        = "clipped"            // reject: response or force clipped
	CodeDoubleStrike   = "double_strike"      // reject: the hammer struck twice
	CodePreRinging     = "pre_ringing"        // reject: already vibrating when the record started
	CodeNoLeadIn       = "no_lead_in"         // flag: no quiet lead-in to check the start
	CodeNoDecay        = "no_decay"           // reject: nothing decays like a structural mode
	CodeUnderExcited   = "under_excited"      // drop: force spectrum too low at the mode
	CodeShortDecay     = "short_decay"        // drop: too few cycles or too little decay energy
	CodeMixedModes     = "mixed_modes"        // flag: one mode meant, others carry energy
	CodeBeatingModes   = "beating_modes"      // flag: two modes close enough to beat
	CodeFrictionDecay  = "friction_decay"     // flag: envelope falls linearly
	CodeDampingDrift   = "damping_drift"      // flag: damping changes along the decay
	CodeEstimatesApart = "estimates_disagree" // flag: estimators give different damping
	CodeTransient      = "transient_in_decay" // flag: a burst in the residual of the fitted decay
	CodeModeLimit      = "mode_limit"         // flag: more modes above the noise than reported
	// CodeFutureHitTime is given where hits are recorded, not by a rule of
	// this package: the hit time lies ahead of the computer's clock.
	CodeFutureHitTime = "hit_time_in_future" // flag: hit time in the future
)

// ValueEffect says what a reason code means for the values it names: does
// a statistic count them?
type ValueEffect string

// Value effects.
const (
	// Doubts: the value is questionable; the history's statistics leave
	// out the modes the reason names (every mode of the hit when it names
	// none) unless asked to count flagged modes too.
	Doubts ValueEffect = "doubts"
	// Informs: side information; the values count.
	Informs ValueEffect = "informs"
)

// effects classifies every reason code. Rejecting and dropping codes doubt
// trivially: their hit or mode is out whatever the effect says. Of the
// flags:
//   - mixed_modes, beating_modes: the fitted decay holds another mode's
//     energy, which biases the damping ratio (beating modulates the
//     envelope; mixed modes pull the single-mode fit).
//   - friction_decay, damping_drift: the decay is not viscous, so one
//     viscous damping ratio does not describe it; its value depends on the
//     part of the decay fitted.
//   - estimates_disagree: independent estimators give different damping;
//     which is right is not known.
//   - transient_in_decay: a burst (a knock, a second touch) spoils part of
//     the decay the fit used.
//   - no_lead_in: informs. The record has no quiet lead-in, so a structure
//     already ringing cannot be detected; nothing says the value is wrong,
//     and a recorder set up without pre-trigger would otherwise leave every
//     one of its hits out of every statistic.
//   - mode_limit: informs. More modes stand above the noise than are
//     reported; the reported modes' values are not touched.
//   - amplitude_damping: informs. The damping ratio changes with the
//     amplitude along the decay: a property of the structure (stats shows
//     damping against the excitation level), not a fault of the value.
//   - hit_time_in_future: informs. The clock is wrong, not the numbers.
var effects = map[string]ValueEffect{
	CodeClipped:          Doubts,
	CodeDoubleStrike:     Doubts,
	CodePreRinging:       Doubts,
	CodeNoDecay:          Doubts,
	CodeUnderExcited:     Doubts,
	CodeShortDecay:       Doubts,
	CodeMixedModes:       Doubts,
	CodeBeatingModes:     Doubts,
	CodeFrictionDecay:    Doubts,
	CodeDampingDrift:     Doubts,
	CodeEstimatesApart:   Doubts,
	CodeTransient:        Doubts,
	CodeNoLeadIn:         Informs,
	CodeModeLimit:        Informs,
	CodeAmplitudeDamping: Informs,
	CodeFutureHitTime:    Informs,
}

// Effect returns what reason code does to the values it names. A code this
// build does not know (stored by another version) doubts: a statistic
// counts only what is known to be sound.
func Effect(code string) ValueEffect {
	if e, ok := effects[code]; ok {
		return e
	}
	return Doubts
}

// Rule is one quality check.
type Rule interface {
	// Code is the rule's main reason code.
	Code() string
	// Check returns the rule's findings for one hit, nil when it is clean.
	// It must not panic on any Input, including a nil Decay or Force and
	// empty channels.
	Check(in Input, th Thresholds) []pipeline.Reason
}

// RuleInfo describes one reason code for listings (the README and
// `ringlog rules`).
type RuleInfo struct {
	Code       string            `json:"code"`
	Severity   pipeline.Severity `json:"severity"`
	Effect     ValueEffect       `json:"effect"`     // doubts or informs the values named
	Summary    string            `json:"summary"`    // one line, plain language
	Thresholds []string          `json:"thresholds"` // configuration keys of Thresholds it uses
}

// Describer is implemented by the rules of this package: the reason codes
// a rule can give.
type Describer interface {
	Info() []RuleInfo
}

// Rules returns the default rule set in its fixed order: hit-level rules
// first (whole-hit faults), then the per-mode rules.
func Rules() []Rule {
	return []Rule{
		Clipping{},
		DoubleStrike{},
		PreTrigger{},
		NoDecay{},
		Excitation{},
		ShortDecay{},
		SeveralModes{},
		NonViscous{},
		AmplitudeDependence{},
		Disagreement{},
		Transient{},
		ModeLimit{},
	}
}

// Run applies every rule of Rules to the hit and returns all findings in
// rule order. A nil result means a clean hit.
//
// A mode dropped by a rule (severity drop) is left out of the later rules
// and keeps no flag of its own: a mode that is not usable is not a mode
// whose flags mean anything, and it never makes half of a pair.
func Run(in Input, th Thresholds) []pipeline.Reason {
	in.dropped = map[int]bool{}
	in.pulse = &pulseCache{}
	var out []pipeline.Reason
	for _, r := range Rules() {
		rs := r.Check(in, th)
		out = append(out, rs...)
		for _, x := range rs {
			if x.Severity == pipeline.SeverityDrop && x.Mode != nil {
				in.dropped[*x.Mode] = true
			}
		}
	}
	kept := out[:0]
	for _, x := range out {
		if x.Severity == pipeline.SeverityFlag && x.Mode != nil && in.dropped[*x.Mode] {
			continue
		}
		kept = append(kept, x)
	}
	return kept
}

// Describe lists every reason code the default rules can give, in rule
// order, each with its Effect, then the codes given where hits are
// recorded (hit_time_in_future).
func Describe() []RuleInfo {
	var out []RuleInfo
	for _, r := range Rules() {
		if d, ok := r.(Describer); ok {
			out = append(out, d.Info()...)
		}
	}
	out = append(out, RuleInfo{Code: CodeFutureHitTime, Severity: pipeline.SeverityFlag,
		Summary:    "the hit time lies more than a few minutes ahead of the computer's clock (recorder clock or hit_time metadata wrong)",
		Thresholds: []string{}})
	for i := range out {
		out[i].Effect = Effect(out[i].Code)
	}
	return out
}
