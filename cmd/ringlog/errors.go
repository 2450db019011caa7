package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
)

// Exit statuses. Scripts rely on them; they are documented in README.md.
const (
	exitOK      = 0 // everything ran (whatever the verdicts)
	exitFailure = 1 // a file could not be read, a database could not be opened, ...
	exitUsage   = 2 // bad flags or arguments
)

// usageError is a problem with the command line.
type usageError struct{ msg string }

func (u *usageError) Error() string { return u.msg }

func usagef(format string, args ...any) error {
	return &usageError{msg: fmt.Sprintf(format, args...)}
}

// errReported means the command already told the user what went wrong
// (for example per file on stderr) and only the exit status remains.
var errReported = errors.New("reported")

// report prints err (if any) and maps it to an exit status. This is the
// only place that decides exit codes.
func report(stderr io.Writer, cmd string, err error) int {
	if err == nil {
		return exitOK
	}
	if errors.Is(err, flag.ErrHelp) {
		return exitOK
	}
	var u *usageError
	if errors.As(err, &u) {
		fmt.Fprintf(stderr, "ringlog %s: %s\nRun 'ringlog %s -h' for usage.\n", cmd, u.msg, cmd)
		return exitUsage
	}
	if errors.Is(err, errReported) {
		return exitFailure
	}
	fmt.Fprintf(stderr, "ringlog %s: %v\n", cmd, err)
	return exitFailure
}
