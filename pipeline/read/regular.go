package read

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
)

// DefaultMaxFileSize is the size limit of ReadRegular when none is given
// (also the default of the daemon's max_file_size).
const DefaultMaxFileSize int64 = 1 << 30

// ErrNotRegular is wrapped by the error ReadRegular returns for a path that
// is not a regular file (a named pipe, a device, a socket, a folder).
var ErrNotRegular = errors.New("not a regular file")

// ErrTooLarge is wrapped by the error ReadRegular returns for a file over
// its size limit.
var ErrTooLarge = errors.New("file too large")

// readChunk is how much ReadRegular reads between looks at its context.
const readChunk = 4 << 20

// ReadRegular reads the whole of a regular file of at most limit bytes
// (DefaultMaxFileSize when limit <= 0). Unlike os.ReadFile it never opens
// a named pipe (which would wait for a writer for ever) or a device (a
// link to /dev/zero never ends), refuses a file over the limit before
// reading it and again should it grow while being read, and stops when
// ctx ends. Errors name the path; a missing file still satisfies
// errors.Is(err, fs.ErrNotExist).
func ReadRegular(ctx context.Context, path string, limit int64) ([]byte, error) {
	if limit <= 0 {
		limit = DefaultMaxFileSize
	}
	fi, err := os.Stat(path)
	if err != nil {
		return nil, err
	}
	if err := regularWithin(path, fi, limit); err != nil {
		return nil, err
	}
	f, err := openNoWait(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	// The path may have been replaced between the two looks.
	if fi, err = f.Stat(); err != nil {
		return nil, err
	}
	if err := regularWithin(path, fi, limit); err != nil {
		return nil, err
	}
	buf := make([]byte, 0, fi.Size()+1)
	for {
		if err := ctx.Err(); err != nil {
			return nil, fmt.Errorf("%s: reading stopped: %w", path, err)
		}
		if int64(len(buf)) > limit {
			return nil, fmt.Errorf("%s: %w: it grew past the limit of %d MB while being read", path, ErrTooLarge, limit>>20)
		}
		if len(buf) == cap(buf) {
			buf = append(buf, 0)[:len(buf)]
		}
		n := min(cap(buf)-len(buf), readChunk)
		m, err := f.Read(buf[len(buf) : len(buf)+n])
		buf = buf[:len(buf)+m]
		if err == io.EOF {
			if int64(len(buf)) > limit {
				return nil, fmt.Errorf("%s: %w: it grew past the limit of %d MB while being read", path, ErrTooLarge, limit>>20)
			}
			return buf, nil
		}
		if err != nil {
			return nil, err
		}
	}
}

func regularWithin(path string, fi os.FileInfo, limit int64) error {
	if !fi.Mode().IsRegular() {
		what := "a special file"
		switch t := fi.Mode().Type(); {
		case t&os.ModeNamedPipe != 0:
			what = "a named pipe (FIFO)"
		case t&os.ModeDevice != 0:
			what = "a device"
		case t&os.ModeSocket != 0:
			what = "a socket"
		case fi.IsDir():
			what = "a folder"
		}
		return fmt.Errorf("%s: %w: it is %s; only regular files are read", path, ErrNotRegular, what)
	}
	if fi.Size() > limit {
		return fmt.Errorf("%s: %w: %d MB, the limit is %d MB", path, ErrTooLarge, fi.Size()>>20, limit>>20)
	}
	return nil
}
