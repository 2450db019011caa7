package main

// Tests of defects found by trying ringlog as a new user and as an
// attacker would: each failed before its fix.

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestQueryCommandsNeverCreateADatabase: read-only commands open the
// history read-only; on an empty file they fail and leave it empty, on a
// missing path they create nothing.
func TestQueryCommandsNeverCreateADatabase(t *testing.T) {
	dir := t.TempDir()
	empty := filepath.Join(dir, "empty.db")
	writeFile(t, empty, nil)
	missing := filepath.Join(dir, "missing.db")
	for _, args := range [][]string{
		{"status", "--db"}, {"history", "--db"}, {"stats", "--prototype", "P", "--db"}, {"report", "daily", "--out", filepath.Join(dir, "d.html"), "--db"},
	} {
		for _, p := range []string{empty, missing} {
			a := append(append([]string(nil), args...), p)
			_, stderr, code := ringlog(t, a...)
			if code != exitFailure {
				t.Errorf("ringlog %s: exit %d, want %d\n%s", strings.Join(a, " "), code, exitFailure, stderr)
			}
		}
		if fi, err := os.Stat(empty); err != nil || fi.Size() != 0 {
			t.Fatalf("ringlog %s wrote into an empty file: %v", strings.Join(args, " "), err)
		}
		if fileExists(missing) {
			t.Fatalf("ringlog %s created %s", strings.Join(args, " "), missing)
		}
	}
}
