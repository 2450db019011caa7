//go:build race

package main

// Under 'go test -race' the ringlog binary that the process tests run is
// built with the race detector too, so the daemon's own goroutines are
// checked.
func init() { raceBuild = true }
