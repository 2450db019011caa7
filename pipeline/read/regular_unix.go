//go:build unix

package read

import (
	"os"
	"syscall"
)

// openNoWait opens path for reading without waiting: a named pipe put in
// place of a file after it was looked at opens at once instead of waiting
// for a writer (the caller then refuses it). Regular files ignore the flag.
func openNoWait(path string) (*os.File, error) {
	return os.OpenFile(path, os.O_RDONLY|syscall.O_NONBLOCK, 0)
}
