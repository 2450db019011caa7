package read

import (
	"bufio"
	"io"
)

// lineReader reads lines from a buffered reader without copying them,
// and keeps the line number and byte offsets for error messages. Lines
// longer than the buffer are gathered in a separate slice, so any line
// length works with memory linear in the line.
type lineReader struct {
	br   *bufio.Reader
	line int   // 1-based number of the line last returned
	off  int64 // byte offset of the start of the line last returned
	next int64 // byte offset just past the line last returned
	long []byte
}

func newLineReader(r io.Reader) *lineReader {
	return &lineReader{br: bufio.NewReaderSize(r, bufSize)}
}

// read returns the next line without its line ending and whether it
// ended with '\n'. The slice is valid until the next call. At the end of
// the input it returns io.EOF.
func (lr *lineReader) read() ([]byte, bool, error) {
	b, err := lr.br.ReadSlice('\n')
	if err == bufio.ErrBufferFull {
		lr.long = append(lr.long[:0], b...)
		for err == bufio.ErrBufferFull {
			b, err = lr.br.ReadSlice('\n')
			lr.long = append(lr.long, b...)
		}
		b = lr.long
	}
	if err != nil && err != io.EOF {
		return nil, false, err
	}
	if len(b) == 0 {
		return nil, false, io.EOF
	}
	lr.line++
	lr.off = lr.next
	lr.next += int64(len(b))
	nl := b[len(b)-1] == '\n'
	if nl {
		b = b[:len(b)-1]
	}
	if n := len(b); n > 0 && b[n-1] == '\r' {
		b = b[:n-1]
	}
	return b, nl, nil
}

// readFull reads exactly len(p) raw bytes (binary data between text
// lines) and advances the offsets. It returns the number of bytes read.
func (lr *lineReader) readFull(p []byte) (int, error) {
	n, err := io.ReadFull(lr.br, p)
	lr.next += int64(n)
	return n, err
}

// trimSpace trims ASCII spaces and tabs at both ends.
func trimSpace(b []byte) []byte {
	for len(b) > 0 && (b[0] == ' ' || b[0] == '\t') {
		b = b[1:]
	}
	for len(b) > 0 && (b[len(b)-1] == ' ' || b[len(b)-1] == '\t') {
		b = b[:len(b)-1]
	}
	return b
}

// firstControl returns the index of the first control byte in b that a
// text file does not hold, or -1.
func firstControl(b []byte) int {
	for i, c := range b {
		if isControl(c) {
			return i
		}
	}
	return -1
}
