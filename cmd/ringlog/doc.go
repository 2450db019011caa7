// Command ringlog checks impact-hammer test files, estimates the natural
// frequency and damping ratio of every mode with an uncertainty, and keeps
// a history of them in SQLite.
//
// One file per subcommand (analyze.go, watch: watchcmd.go, ingest.go,
// history.go, status.go, reanalyze.go, stats.go, compare.go, trend.go,
// rayleigh.go, export.go, report.go, service.go, demo.go, accuracy.go,
// rules.go); errors map to exit codes in errors.go only; the TOML
// configuration is config.go; engine.go is the worker pool and the single
// database writer shared by the daemon, ingest and the demo; Main in
// watchcmd.go is the daemon with Open, Run and Close, which tests start
// in-process.
package main
