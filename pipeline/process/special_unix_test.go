//go:build unix

package process_test

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/ringlog/ringlog/pipeline/process"
)

// TestFileRefusesSpecialFiles: process.File on a named pipe or a link to
// /dev/zero in place of a hit file (os.ReadFile waits for a writer for
// ever, or never reaches the end) is an error that names the file, at once.
func TestFileRefusesSpecialFiles(t *testing.T) {
	dir := t.TempDir()
	fifo := filepath.Join(dir, "hit.csv")
	if err := syscall.Mkfifo(fifo, 0o644); err != nil {
		t.Skipf("mkfifo: %v", err)
	}
	zero := filepath.Join(dir, "zero.csv")
	if err := os.Symlink("/dev/zero", zero); err != nil {
		t.Fatal(err)
	}
	for _, p := range []string{fifo, zero} {
		done := make(chan error, 1)
		go func() { _, err := process.File(context.Background(), p, process.Defaults()); done <- err }()
		select {
		case err := <-done:
			if err == nil || !strings.Contains(err.Error(), p) {
				t.Errorf("%s: error %v, want one naming the file", p, err)
			}
		case <-time.After(10 * time.Second):
			t.Fatalf("%s: process.File still reading after 10 s", p)
		}
	}
}
