//go:build !(linux || darwin || freebsd || netbsd || openbsd)

package main

import (
	"math"
	"os"
)

// peakRSS is not measured on this system.
func peakRSS(*os.ProcessState) float64 { return math.NaN() }
