//go:build windows

package db

import (
	"errors"
	"os"

	"golang.org/x/sys/windows"
)

// Windows byte-range locks are mandatory: a locked range cannot be read by
// others. The lock therefore covers one byte at 4 GiB, far beyond the pid
// and time written at the start of the file, which stay readable.
const lockOffsetHigh = 1

// tryLock takes an exclusive LockFileEx lock without waiting. Windows drops
// it when the handle is closed or the process ends.
func tryLock(f *os.File) error {
	ol := &windows.Overlapped{OffsetHigh: lockOffsetHigh}
	err := windows.LockFileEx(windows.Handle(f.Fd()),
		windows.LOCKFILE_EXCLUSIVE_LOCK|windows.LOCKFILE_FAIL_IMMEDIATELY, 0, 1, 0, ol)
	switch {
	case err == nil:
		return nil
	case errors.Is(err, windows.ERROR_LOCK_VIOLATION), errors.Is(err, windows.ERROR_IO_PENDING):
		return errWouldBlock
	default:
		return err
	}
}

func unlock(f *os.File) error {
	ol := &windows.Overlapped{OffsetHigh: lockOffsetHigh}
	return windows.UnlockFileEx(windows.Handle(f.Fd()), 0, 1, 0, ol)
}
