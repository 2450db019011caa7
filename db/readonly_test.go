package db

import (
	"bytes"
	"context"
	"database/sql"
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/ringlog/ringlog/pipeline"
)

// TestOpenReadOnlyNeverCreates: a query on a path that is not there, or
// on an empty file, must not leave a database behind.
func TestOpenReadOnlyNeverCreates(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	missing := filepath.Join(dir, "none.db")
	if _, err := OpenReadOnly(ctx, missing); err == nil || !errors.Is(err, fs.ErrNotExist) {
		t.Fatalf("missing file: err = %v, want not-exist", err)
	}
	if _, err := os.Stat(missing); !errors.Is(err, fs.ErrNotExist) {
		t.Fatalf("OpenReadOnly created %s", missing)
	}
	empty := filepath.Join(dir, "empty.db")
	if err := os.WriteFile(empty, nil, 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := OpenReadOnly(ctx, empty); err == nil || !strings.Contains(err.Error(), "not a ringlog history") {
		t.Fatalf("empty file: err = %v", err)
	}
	if fi, err := os.Stat(empty); err != nil || fi.Size() != 0 {
		t.Fatalf("empty file was written: %v %v", fi, err)
	}
	if _, err := OpenReadOnly(ctx, dir); err == nil || !strings.Contains(err.Error(), "folder") {
		t.Fatalf("folder: err = %v", err)
	}
}

// TestOpenReadOnlyQueriesWithoutWriting: an existing history answers
// queries, refuses writes, and its file is byte for byte unchanged.
func TestOpenReadOnlyQueriesWithoutWriting(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "h.db")
	w, err := Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	fi := fileInfo("/data/a.csv", "a", time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC))
	if _, err := w.RecordResult(ctx, fi, HitMeta{Prototype: "P", HitTime: fi.MTime}, sampleResult(fi.Path), nil); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	before, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	r, err := OpenReadOnly(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	st, err := r.Status(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if st.Hits != 1 || st.Verdicts[pipeline.Accepted]+st.Verdicts[pipeline.Flagged]+st.Verdicts[pipeline.Rejected] != 1 {
		t.Errorf("status on read-only history: %+v", st)
	}
	if err := r.RecordFailure(ctx, fileInfo("/data/b.csv", "b", fi.MTime), errors.New("x"), true); !errors.Is(err, ErrReadOnly) {
		t.Errorf("write on read-only history: err = %v, want ErrReadOnly", err)
	}
	if err := r.Close(); err != nil {
		t.Fatal(err)
	}
	after, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(before, after) {
		t.Error("OpenReadOnly changed the database file")
	}
}

// TestOpenReadOnlyDoesNotMigrate: a history of another schema version is
// refused with a message, and left at its version.
func TestOpenReadOnlyDoesNotMigrate(t *testing.T) {
	ctx := context.Background()
	for _, v := range []int{0, SchemaVersion() + 5} {
		path := filepath.Join(t.TempDir(), "h.db")
		w, err := Open(ctx, path)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := w.w.ExecContext(ctx, "PRAGMA user_version = "+strconv.Itoa(v)); err != nil {
			t.Fatal(err)
		}
		w.Close()
		if r, err := OpenReadOnly(ctx, path); err == nil {
			r.Close()
			t.Fatalf("user_version %d: opened", v)
		} else if !strings.Contains(err.Error(), "schema") {
			t.Errorf("user_version %d: err = %v, want a word on the schema", v, err)
		}
		raw, err := sql.Open("sqlite", path)
		if err != nil {
			t.Fatal(err)
		}
		var got int
		if err := raw.QueryRow("PRAGMA user_version").Scan(&got); err != nil {
			t.Fatal(err)
		}
		raw.Close()
		if got != v {
			t.Errorf("user_version %d became %d", v, got)
		}
	}
}
