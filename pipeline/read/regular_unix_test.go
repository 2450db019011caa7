//go:build unix

package read

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"syscall"
	"testing"
	"time"
)

// TestReadRegularSpecialFiles: a named pipe put where a recorded file was
// (os.ReadFile waits for a writer for ever) and a link to /dev/zero
// (os.ReadFile never ends) are refused at once.
func TestReadRegularSpecialFiles(t *testing.T) {
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
		go func() { _, err := ReadRegular(context.Background(), p, 0); done <- err }()
		select {
		case err := <-done:
			if !errors.Is(err, ErrNotRegular) {
				t.Errorf("%s: err = %v, want ErrNotRegular", p, err)
			}
		case <-time.After(20 * time.Second):
			t.Fatalf("%s: ReadRegular did not return", p)
		}
	}
	if err := openNoWaitFIFO(fifo); err != nil {
		t.Error(err)
	}
}

// openNoWaitFIFO checks that openNoWait does not block on a named pipe
// without a writer (the guard for a pipe swapped in after the Stat).
func openNoWaitFIFO(p string) error {
	done := make(chan error, 1)
	go func() {
		f, err := openNoWait(p)
		if err == nil {
			f.Close()
		}
		done <- err
	}()
	select {
	case err := <-done:
		return err
	case <-time.After(20 * time.Second):
		return errors.New("openNoWait blocked on a named pipe")
	}
}
