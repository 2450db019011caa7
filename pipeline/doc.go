// Package pipeline holds ringlog's vocabulary: a Recording read from a
// hit file, the Modes found in it, the Reasons the quality rules give, and
// the Result with its Verdict.
//
// The work itself lives in sub-packages that import these types:
//
//	pipeline/read     recorder files (CSV, WAV, universal file dataset 58) -> Recording
//	pipeline/modal    frequency and damping estimators, Cramer-Rao bound, relations
//	pipeline/check    quality rules -> Reasons
//	pipeline/synth    simple, independent generator of synthetic hits (tests, demo)
//	pipeline/process  the stage sequence read -> estimate -> check -> verdict
//
// Everything here is pure computation: no database, no file watching, no
// global state, so the one-shot command and the daemon run the same code.
package pipeline
