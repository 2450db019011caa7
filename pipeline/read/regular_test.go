package read

import (
	"bytes"
	"context"
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"testing"
)

func TestReadRegular(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	p := filepath.Join(dir, "a.csv")
	want := bytes.Repeat([]byte("0.5,1\n"), 2<<20) // 12 MB: several chunks
	if err := os.WriteFile(p, want, 0o644); err != nil {
		t.Fatal(err)
	}
	got, err := ReadRegular(ctx, p, 0)
	if err != nil || !bytes.Equal(got, want) {
		t.Fatalf("regular file: %d bytes, err %v; want %d bytes", len(got), err, len(want))
	}
	if _, err := ReadRegular(ctx, p, int64(len(want)-1)); !errors.Is(err, ErrTooLarge) {
		t.Errorf("over the limit: err = %v, want ErrTooLarge", err)
	}
	if _, err := ReadRegular(ctx, filepath.Join(dir, "none"), 0); !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("missing: err = %v, want ErrNotExist", err)
	}
	if _, err := ReadRegular(ctx, dir, 0); !errors.Is(err, ErrNotRegular) {
		t.Errorf("folder: err = %v, want ErrNotRegular", err)
	}
	cctx, cancel := context.WithCancel(ctx)
	cancel()
	if _, err := ReadRegular(cctx, p, 0); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled: err = %v, want context.Canceled", err)
	}
}
