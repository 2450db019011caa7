// Package check holds ringlog's quality rules: the checks that decide
// whether a hit, or one mode of it, can be trusted.
//
// A rule looks at an Input (the recording, the response channel analysed,
// the force channel if any, and what the estimators found in the
// response, a modal.Decay) and returns pipeline.Reasons: a stable reason
// code, a plain-language message with the numbers that triggered it, and
// a severity. A rejecting reason spoils the whole hit; a dropping reason
// removes the one mode it names (Reason.Mode indexes Decay.Modes, which
// become Result.Modes in the same order); a flag keeps everything but
// tells the engineer.
//
// Run applies the default rule set (Rules) with a set of Thresholds;
// DefaultThresholds gives the defaults, each documented with its unit,
// meaning and source, and the configuration file may override any of
// them by its snake_case key. Describe lists every reason code for the
// README and the `ringlog rules` command.
//
// The rules are pure functions of their input: a failed check is a result
// that flows on, never an error, and no input (nil force channel, no
// modes, empty channels) makes them panic.
package check
