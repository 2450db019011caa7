package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// appendedHit returns a hit file and a longer version of it that starts
// with the same bytes: what a recorder that appends to its export gives.
func appendedHit(t *testing.T, seed uint64) (first, longer []byte) {
	t.Helper()
	first, longer = hitCSV(t, seed, 2048, 0.25), hitCSV(t, seed, 2048, 0.4)
	if !bytes.HasPrefix(longer, first) {
		t.Fatal("the longer recording does not start with the shorter one's bytes")
	}
	return first, longer
}

// TestDaemonAppendedFileSupersedes: a file appended to after it was
// recorded (after a pause longer than the settle time) gives one current
// hit for its path; the earlier one is kept, marked superseded, left out
// of history and stats, and logged with both SHA-256s.
func TestDaemonAppendedFileSupersedes(t *testing.T) {
	t.Parallel()
	s := newSetup(t, daemonConfig{Prototype: "arm", Revision: "B"})
	d := startDaemon(t, s.cfgPath)
	d.waitReady(s.dbPath)

	first, longer := appendedHit(t, 51)
	path := filepath.Join(s.export, "hit-0001.csv")
	writeFile(t, path, first)
	other := filepath.Join(s.export, "hit-0002.csv")
	writeFile(t, other, smallHitCSV(t, 52))
	waitRecorded(t, s.dbPath, 2)
	time.Sleep(time.Second) // longer than the settle time (300 ms)
	f, err := os.OpenFile(path, os.O_APPEND|os.O_WRONLY, 0)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := f.Write(longer[len(first):]); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	newSHA, oldSHA := sha256Of(longer), sha256Of(first)
	waitFor(t, "the appended file recorded", func() (bool, string) {
		hs := history(t, s.dbPath)
		for _, h := range hs {
			if h.SHA256 == newSHA {
				return true, ""
			}
		}
		return false, "history has no hit of the appended file"
	})
	hits := history(t, s.dbPath)
	checkOncePerFile(t, hits, map[string][]byte{path: longer, other: smallHitCSV(t, 52)})
	st := mustStatus(t, s.dbPath)
	if st.Hits != 2 || st.Files["analysed"] != 2 {
		t.Errorf("status %+v; want 2 hits, 2 analysed files", st)
	}
	if out, _, _ := ringlog(t, "status", "--db", s.dbPath, "--json"); !strings.Contains(out, `"superseded":1,`) {
		t.Errorf("status --json does not count the superseded hit: %s", out)
	}
	// With --superseded the earlier hit is listed, marked.
	out, errOut, code := ringlog(t, "history", "--db", s.dbPath, "--superseded", "--json")
	if code != 0 {
		t.Fatalf("history --superseded: exit %d: %s", code, errOut)
	}
	var marked int
	for _, l := range strings.Split(strings.TrimSpace(out), "\n") {
		if strings.Contains(l, `"sha256":"`+oldSHA+`"`) && strings.Contains(l, `"superseded":{"by_sha256":"`+newSHA+`"`) {
			marked++
		}
	}
	if n := len(parseHistory(t, out)); n != 3 || marked != 1 {
		t.Errorf("history --superseded: %d hits, %d marked superseded by the new content; want 3 and 1:\n%s", n, marked, out)
	}
	// stats counts the path once.
	out, errOut, code = ringlog(t, "stats", "--db", s.dbPath, "--prototype", "arm", "--json")
	if code != 0 || !strings.Contains(out, `"hits_seen":2,`) {
		t.Errorf("stats: exit %d, %s%s; want 2 hits", code, out, errOut)
	}
	if code := d.stop(); code != 0 {
		t.Errorf("daemon exit status %d, want 0", code)
	}
	log, err := os.ReadFile(s.logPath)
	if err != nil {
		t.Fatal(err)
	}
	var logged bool
	for _, l := range strings.Split(string(log), "\n") {
		if strings.Contains(l, "superseded") && strings.Contains(l, newSHA) && strings.Contains(l, oldSHA) && strings.Contains(l, "hit-0001.csv") {
			logged = true
		}
	}
	if !logged {
		t.Errorf("the log has no line naming the file and both SHA-256s:\n%s", tail(string(log), 3000))
	}
}

// TestIngestChangedFileSupersedes: the same through ingest: a file
// rewritten since it was ingested supersedes its earlier hit.
func TestIngestChangedFileSupersedes(t *testing.T) {
	dir := t.TempDir()
	dbPath := filepath.Join(dir, "h.db")
	path := filepath.Join(dir, "P1_0001.csv")
	first, longer := appendedHit(t, 61)
	writeFile(t, path, first)
	if _, errOut, code := cli(t, "ingest", "--db", dbPath, "--prototype", "P1", path); code != 0 {
		t.Fatalf("ingest: exit %d: %s", code, errOut)
	}
	later := time.Now().Add(time.Minute)
	writeFile(t, path, longer)
	if err := os.Chtimes(path, later, later); err != nil {
		t.Fatal(err)
	}
	out, errOut, code := cli(t, "ingest", "--db", dbPath, "--prototype", "P1", path)
	if code != 0 {
		t.Fatalf("ingest again: exit %d: %s", code, errOut)
	}
	if !strings.Contains(out, "supersedes hit") || !strings.Contains(out, sha256Of(first)[:12]) ||
		!strings.Contains(out, "1 earlier hit(s) superseded") {
		t.Errorf("ingest output does not name the superseded hit:\n%s", out)
	}
	hits := history(t, dbPath)
	if len(hits) != 1 || hits[0].SHA256 != sha256Of(longer) {
		t.Errorf("history: %+v; want the one hit of the new content", hits)
	}
	all := history(t, dbPath, "--superseded")
	if len(all) != 2 {
		t.Errorf("history --superseded: %d hits, want 2", len(all))
	}
	// The same version again: already recorded, nothing superseded.
	out, _, _ = cli(t, "ingest", "--db", dbPath, path)
	if !strings.Contains(out, "already recorded") || strings.Contains(out, "supersedes") {
		t.Errorf("ingest of the same version:\n%s", out)
	}
	// The day's report names the superseded hit and a file given up.
	bad := filepath.Join(dir, "P1_0002.csv")
	writeFile(t, bad, []byte("force,accel\n1,2\n3,oops\n"))
	cli(t, "ingest", "--db", dbPath, bad)
	pagePath := filepath.Join(dir, "daily.html")
	out, errOut, code = cli(t, "report", "daily", "--db", dbPath, "--out", pagePath)
	if code != 0 || !strings.Contains(out, "1 earlier hit superseded by a changed file, 1 file given up") {
		t.Fatalf("report daily: exit %d: %s%s", code, out, errOut)
	}
	b, err := os.ReadFile(pagePath)
	if err != nil {
		t.Fatal(err)
	}
	page := string(b)
	if !strings.Contains(page, `<section id="superseded">`) || !strings.Contains(page, sha256Of(first)[:12]) ||
		!strings.Contains(page, `<section id="failed">`) || !strings.Contains(page, "P1_0002.csv") || !strings.Contains(page, "oops") {
		t.Error("the daily report lacks the superseded hit or the failed file with its error")
	}
}
