//go:build linux

package main

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
)

// rejectedCSV is a hit whose response is noise only (no decay): the
// analysis rejects it, so the daily report wants to draw its decay.
func rejectedCSV(seed int) []byte {
	var b bytes.Buffer
	b.WriteString("# sample_rate: 2048\nforce,accel\n")
	x := uint32(seed*7919 + 1)
	for i := range 1024 {
		x = x*1664525 + 1013904223 // a linear congruential generator (Numerical Recipes constants)
		f := 0.0
		if i == 40 {
			f = 100
		}
		fmt.Fprintf(&b, "%g,%g\n", f, float64(x>>8)/float64(1<<24)-0.5)
	}
	return b.Bytes()
}

// TestReportRereadsOnlyRegularFiles: a recorded file later replaced by a
// named pipe made 'report daily' hang (also past SIGTERM); replaced by a
// link to /dev/zero it ran out of memory. Both are now refused as "not a
// regular file" and the report is written. The process runs with its
// address space capped (ulimit -v), so a regression fails instead of
// taking the machine's memory.
func TestReportRereadsOnlyRegularFiles(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	dbPath := filepath.Join(dir, "h.db")
	a, b := filepath.Join(dir, "a.csv"), filepath.Join(dir, "b.csv")
	writeFile(t, a, rejectedCSV(1))
	writeFile(t, b, rejectedCSV(2))
	if _, stderr, code := ringlog(t, "ingest", "--db", dbPath, "--prototype", "P", a, b); code != 0 {
		t.Fatalf("ingest: exit %d\n%s", code, stderr)
	}
	os.Remove(a)
	if err := syscall.Mkfifo(a, 0o644); err != nil {
		t.Skipf("mkfifo: %v", err)
	}
	os.Remove(b)
	if err := os.Symlink("/dev/zero", b); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "daily.html")
	ctx, cancel := context.WithTimeout(context.Background(), waitLong)
	defer cancel()
	cmd := exec.CommandContext(ctx, "sh", "-c", `ulimit -v 4000000 && exec "$0" report daily --db "$1" --out "$2"`, ringlogBin, dbPath, out)
	var o, e bytes.Buffer
	cmd.Stdout, cmd.Stderr = &o, &e
	err := cmd.Run()
	if ctx.Err() != nil {
		t.Fatalf("report daily did not finish within %v", waitLong)
	}
	if err != nil {
		t.Errorf("report daily: %v\n%s%s", err, o.String(), e.String())
	}
	page, rerr := os.ReadFile(out)
	if rerr != nil {
		t.Fatalf("no report written (%v):\n%s%s", rerr, o.String(), e.String())
	}
	if n := strings.Count(string(page), "not a regular file"); n < 2 {
		t.Errorf("the page says \"not a regular file\" %d times, want one per replaced file\n%s", n, e.String())
	}
}
