package read

import (
	"errors"
	"fmt"
	"strconv"
	"strings"
	"unicode/utf8"
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
	return &Error{File: file, Line: line, Offset: -1, Problem: problem(format, args), Err: err}
}

// offErr returns an *Error located by byte offset.
func offErr(file string, off int64, err error, format string, args ...any) *Error {
	return &Error{File: file, Offset: off, Problem: problem(format, args), Err: err}
}

// fileErr returns an *Error about the whole file.
func fileErr(file string, err error, format string, args ...any) *Error {
	return &Error{File: file, Offset: -1, Problem: problem(format, args), Err: err}
}

// Lengths at which text from a file is clipped. A message quotes a cell,
// a name or a value so that the user can find it, and is stored, logged
// and shown in status: a 200 MB cell must not go with it.
const (
	MaxQuoted   = 80   // bytes of one quoted piece of the file in a message
	MaxProblem  = 1000 // bytes of a whole problem text
	MaxMetaKey  = 128  // bytes of a metadata key
	MaxMetaText = 1024 // bytes of a metadata value
	MaxName     = 200  // bytes of a channel name or unit
)

// problem formats a message, clipping every text argument to MaxQuoted
// bytes and the result to MaxProblem.
func problem(format string, args []any) string {
	for i, a := range args {
		switch v := a.(type) {
		case string:
			args[i] = Clip(v, MaxQuoted)
		case []byte:
			args[i] = clipBytes(v, MaxQuoted)
		case []string:
			c := make([]string, 0, min(len(v), 20))
			for _, s := range v[:min(len(v), 20)] {
				c = append(c, Clip(s, MaxQuoted))
			}
			args[i] = c
		}
	}
	return Clip(fmt.Sprintf(format, args...), MaxProblem)
}

// Clip returns s cut to at most n bytes on a UTF-8 boundary, with
// "... (N bytes)" appended when it was longer. The whole of s is never
// copied.
func Clip(s string, n int) string {
	if len(s) <= n {
		return s
	}
	cut := n
	for cut > 0 && !utf8.RuneStart(s[cut]) {
		cut--
	}
	return strings.ToValidUTF8(s[:cut], "?") + "... (" + strconv.Itoa(len(s)) + " bytes)"
}

// clipBytes is Clip for bytes, converting only the part it keeps (bytes
// that are not UTF-8 read as Latin-1, as elsewhere in the readers).
func clipBytes(b []byte, n int) string {
	if len(b) <= n {
		return toUTF8(b)
	}
	cut := n
	for cut > 0 && !utf8.RuneStart(b[cut]) {
		cut--
	}
	return toUTF8(b[:cut]) + "... (" + strconv.Itoa(len(b)) + " bytes)"
}
