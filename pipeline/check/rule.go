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
)

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
// order.
func Describe() []RuleInfo {
	var out []RuleInfo
	for _, r := range Rules() {
		if d, ok := r.(Describer); ok {
			out = append(out, d.Info()...)
		}
	}
	return out
}
