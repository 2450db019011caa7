package main

import (
	"os"
	"runtime/debug"
)

// queryHeapLimit is the soft limit of the Go heap of the history queries
// whose working set at 100,000 hits stays below it (compare, trend,
// rayleigh, export: about 210 MB live): the garbage collector then runs
// against this limit instead of letting the heap grow to 1.5 times the
// live set, which keeps their peak resident memory under 300 MB (measured
// with db/benchhistory, README "Large histories"). stats and the reports
// hold more than this at once and do not set it: a limit below the live
// set only makes the collector run without end.
const queryHeapLimit = 200 << 20

// limitQueryHeap sets queryHeapLimit, unless GOMEMLIMIT sets a limit of
// the user's.
func limitQueryHeap() {
	if os.Getenv("GOMEMLIMIT") == "" {
		debug.SetMemoryLimit(queryHeapLimit)
	}
}
