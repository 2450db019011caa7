//go:build !unix

package read

import "os"

// openNoWait opens path for reading. Opening never waits for a writer
// here.
func openNoWait(path string) (*os.File, error) {
	return os.Open(path)
}
