//go:build linux || darwin || freebsd || netbsd || openbsd

package main

import (
	"math"
	"os"
	"runtime"
	"syscall"
)

// peakRSS is the child's peak resident set size in bytes (ru_maxrss:
// kilobytes on Linux and the BSDs, bytes on macOS).
func peakRSS(ps *os.ProcessState) float64 {
	ru, ok := ps.SysUsage().(*syscall.Rusage)
	if !ok {
		return math.NaN()
	}
	if runtime.GOOS == "darwin" {
		return float64(ru.Maxrss)
	}
	return float64(ru.Maxrss) * 1024
}
