// Package process runs the stage sequence of one hit: read the file,
// choose the channels, estimate the modes, apply the quality rules, decide
// the verdict. The one-shot command and the daemon both call File, so a hit
// gets the same numbers whichever way it arrives.
package process
