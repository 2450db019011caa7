package read

import (
	"errors"
	"fmt"
	"strconv"
	"strings"
)

// ErrUnknownFormat is wrapped by the *Error returned for input that is none
// of the formats this package reads (binary noise given to the CSV reader,
// a file without a RIFF/WAVE header given to the WAV reader, and so on).
// Test for it with errors.Is.
var ErrUnknownFormat = errors.New("unknown format")

// Error is the error every reader returns for bad input. It names the file
// and, where they apply, the 1-based line and the byte offset of the
// problem.
type Error struct {
	File    string // name given to the reader (the path for File)
	Line    int    // 1-based line number; 0 when it does not apply
	Offset  int64  // byte offset from the start of the file; -1 when it does not apply
	Problem string // what is wrong, in plain words
	Err     error  // underlying error (I/O error, ErrUnknownFormat), may be nil
}

// Error formats the error as "file: line 17: problem" or
// "file: byte 1234: problem", followed by the underlying error if any.
func (e *Error) Error() string {
	var b strings.Builder
	if e.File != "" {
		b.WriteString(e.File)
	} else {
		b.WriteString("<input>")
	}
	if e.Line > 0 {
		b.WriteString(": line ")
		b.WriteString(strconv.Itoa(e.Line))
	}
	if e.Offset >= 0 {
		b.WriteString(": byte ")
		b.WriteString(strconv.FormatInt(e.Offset, 10))
	}
	if e.Problem != "" {
		b.WriteString(": ")
		b.WriteString(e.Problem)
	}
	// The sentinel only classifies; the problem text already says it.
	if e.Err != nil && !errors.Is(e.Err, ErrUnknownFormat) {
		b.WriteString(": ")
		b.WriteString(e.Err.Error())
	}
	return b.String()
}

// Unwrap returns the underlying error.
func (e *Error) Unwrap() error { return e.Err }

// lineErr returns an *Error located by line.
func lineErr(file string, line int, err error, format string, args ...any) *Error {
	return &Error{File: file, Line: line, Offset: -1, Problem: fmt.Sprintf(format, args...), Err: err}
}

// offErr returns an *Error located by byte offset.
func offErr(file string, off int64, err error, format string, args ...any) *Error {
	return &Error{File: file, Offset: off, Problem: fmt.Sprintf(format, args...), Err: err}
}

// fileErr returns an *Error about the whole file.
func fileErr(file string, err error, format string, args ...any) *Error {
	return &Error{File: file, Offset: -1, Problem: fmt.Sprintf(format, args...), Err: err}
}
