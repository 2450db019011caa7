package main

// Fault tests of the daemon, run as real processes: 'ringlog watch' on a
// temporary export folder, observed through 'ringlog status --json' and
// 'ringlog history --json' (the database is in WAL mode, so these read
// while the daemon writes). No test asserts a duration; every wait is a
// poll with a generous deadline.

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"io/fs"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"sort"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"github.com/ringlog/ringlog/watch"
)

func sha256Of(b []byte) string {
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:])
}

// checkOncePerFile checks that the history holds exactly the given files,
// each once, with the SHA-256 of its bytes.
func checkOncePerFile(t *testing.T, hits []historyLine, want map[string][]byte) {
	t.Helper()
	seen := map[string]int{}
	for _, h := range hits {
		seen[h.File]++
		data, ok := want[h.File]
		if !ok {
			t.Errorf("history has a hit for %s, which is not one of the files", h.File)
			continue
		}
		if h.SHA256 != sha256Of(data) {
			t.Errorf("%s: recorded sha256 %s, the file's bytes hash to %s", h.File, h.SHA256, sha256Of(data))
		}
	}
	for p, n := range seen {
		if n != 1 {
			t.Errorf("%s recorded %d times", p, n)
		}
	}
	for p := range want {
		if seen[p] == 0 {
			t.Errorf("%s lost: not in the history", p)
		}
	}
}

// TestDaemonSlowWrite: a file written in chunks over several seconds is
// analysed once, after it is complete, and never attempted before.
func TestDaemonSlowWrite(t *testing.T) {
	t.Parallel()
	s := newSetup(t, daemonConfig{Settle: "2s"})
	d := startDaemon(t, s.cfgPath)
	d.waitReady(s.dbPath)

	data := hitCSV(t, 7, 4096, 1) // about 100 kB
	path := filepath.Join(s.export, "slow.csv")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	// Meanwhile an observer polls the status: nothing may be taken, not
	// even marked pending, while the file grows. An observation counts only
	// if it returned before the file was closed.
	var (
		mu       sync.Mutex
		closed   bool
		early    []string
		observed int
	)
	stopObs := make(chan struct{})
	obsDone := make(chan struct{})
	go func() {
		defer close(obsDone)
		for {
			select {
			case <-stopObs:
				return
			default:
			}
			st, err := statusOf(s.dbPath)
			mu.Lock()
			if !closed {
				observed++
				if err != nil {
					early = append(early, err.Error())
				} else if st.recorded() != 0 || st.Pending != 0 || st.Hits != 0 {
					early = append(early, fmt.Sprintf("%+v", st))
				}
			}
			mu.Unlock()
			time.Sleep(50 * time.Millisecond)
		}
	}()
	const chunks = 16 // cut at arbitrary bytes: most chunks end inside a line
	for i := range chunks {
		lo, hi := i*len(data)/chunks, (i+1)*len(data)/chunks
		if _, err := f.Write(data[lo:hi]); err != nil {
			t.Fatal(err)
		}
		time.Sleep(250 * time.Millisecond) // well under the 2 s settle time
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	mu.Lock()
	closed = true
	mu.Unlock()
	close(stopObs)
	<-obsDone
	if len(early) > 0 {
		t.Fatalf("the daemon took the file while it was being written (%d of %d observations); first: %s",
			len(early), observed, early[0])
	}
	t.Logf("%d status observations while the file was written", observed)
	if observed == 0 {
		t.Errorf("no status observation while the file was written")
	}

	st := waitRecorded(t, s.dbPath, 1)
	if st.Files["analysed"] != 1 || st.Files["failed"] != 0 || st.LastError != nil {
		t.Errorf("status after the slow write: %+v (last error %+v); want one analysed file and no failed attempt", st, st.LastError)
	}
	hits := history(t, s.dbPath)
	checkOncePerFile(t, hits, map[string][]byte{path: data})

	// The recorded verdict is that of the complete file.
	out, errOut, code := ringlog(t, "analyze", "--json", path)
	if code != 0 {
		t.Fatalf("analyze %s: exit %d: %s", path, code, errOut)
	}
	var whole historyLine
	if err := json.Unmarshal([]byte(out), &whole); err != nil {
		t.Fatal(err)
	}
	if len(hits) == 1 && (hits[0].Verdict != whole.Verdict || len(hits[0].Modes) != len(whole.Modes)) {
		t.Errorf("recorded verdict %s with %d modes; the complete file gives %s with %d modes",
			hits[0].Verdict, len(hits[0].Modes), whole.Verdict, len(whole.Modes))
	}

	// The JSON log must show no failed or repeated attempt at the file.
	if code := d.stop(); code != 0 {
		t.Errorf("daemon exit status %d after SIGTERM, want 0", code)
	}
	logText, err := os.ReadFile(s.logPath)
	if err != nil {
		t.Fatal(err)
	}
	for _, line := range strings.Split(string(logText), "\n") {
		var e map[string]any
		if json.Unmarshal([]byte(line), &e) != nil || e["file"] != path {
			continue
		}
		if lvl := e["level"]; lvl == "warn" || lvl == "error" {
			t.Errorf("log shows a problem with the slowly written file: %s", line)
		}
	}
}

// TestDaemonKilledMidBurst: SIGKILL in the middle of a burst, twice, then a
// restart: every file recorded exactly once, none lost, database intact.
func TestDaemonKilledMidBurst(t *testing.T) {
	if runtime.GOOS == "windows" {
		t.Skip("SIGKILL is a Unix signal")
	}
	t.Parallel()
	s := newSetup(t, daemonConfig{})
	const n = 80
	want := map[string][]byte{}
	var paths []string
	for i := range n {
		p := filepath.Join(s.export, fmt.Sprintf("burst-%03d.csv", i))
		// 0.5 s at 4096 Hz: each file takes some milliseconds to analyse,
		// so the burst lasts long enough to be interrupted.
		want[p] = hitCSV(t, uint64(1000+i), 4096, 0.5)
		paths = append(paths, p)
	}

	d := startDaemon(t, s.cfgPath)
	d.waitReady(s.dbPath)
	// Copy the files in quickly, while the daemon runs.
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		for _, p := range paths {
			if err := os.WriteFile(p, want[p], 0o644); err != nil {
				t.Error(err)
				return
			}
			time.Sleep(2 * time.Millisecond)
		}
	}()

	killAfter := func(d *daemon, k int) statusJSON {
		t.Helper()
		deadline := time.Now().Add(waitLong)
		for countLines(d.stderr.String(), "hit recorded") < k {
			if time.Now().After(deadline) || !d.running() {
				t.Fatalf("daemon recorded fewer than %d hits (running %v):\n%s", k, d.running(), tail(d.stderr.String(), 4000))
			}
			time.Sleep(2 * time.Millisecond)
		}
		if err := d.cmd.Process.Signal(syscall.SIGKILL); err != nil {
			t.Fatal(err)
		}
		if code := d.wait(); code == 0 {
			t.Fatalf("daemon exited 0 after SIGKILL")
		}
		st := mustStatus(t, s.dbPath)
		t.Logf("killed with %d of %d files recorded, %d pending", st.recorded(), n, st.Pending)
		if st.DaemonRunning {
			t.Errorf("lock still held after the daemon was killed: %+v", st)
		}
		integrityOK(t, s.dbPath)
		return st
	}
	first := killAfter(d, 3)
	wg.Wait()

	d = startDaemon(t, s.cfgPath)
	killAfter(d, 5)
	if first.recorded() >= n {
		t.Logf("note: the whole burst was recorded before the first kill; only the second kill hit it mid-way")
	}

	d = startDaemon(t, s.cfgPath)
	st := waitRecorded(t, s.dbPath, n)
	if code := d.stop(); code != 0 {
		t.Errorf("daemon exit status %d after SIGTERM, want 0", code)
	}
	if st.Files["analysed"] != n || st.Files["duplicate"] != 0 || st.Files["failed"] != 0 || st.Hits != n {
		t.Errorf("status %+v; want %d analysed files and %d hits", st, n, n)
	}
	checkOncePerFile(t, history(t, s.dbPath), want)
	integrityOK(t, s.dbPath)
}

// TestDaemonBurst500: 500 files dropped at once are all recorded once.
func TestDaemonBurst500(t *testing.T) {
	t.Parallel()
	s := newSetup(t, daemonConfig{})
	d := startDaemon(t, s.cfgPath)
	d.waitReady(s.dbPath)
	const n = 500
	want := map[string][]byte{}
	for i := range n {
		p := filepath.Join(s.export, fmt.Sprintf("hit-%03d.csv", i))
		want[p] = smallHitCSV(t, uint64(5000+i))
		writeFile(t, p, want[p])
	}
	start := time.Now()
	st := waitRecorded(t, s.dbPath, n)
	t.Logf("%d files recorded %.1f s after the last was written", n, time.Since(start).Seconds())
	if st.Files["analysed"] != n || st.Hits != n {
		t.Errorf("status %+v; want %d analysed files and hits", st, n)
	}
	checkOncePerFile(t, history(t, s.dbPath), want)
	if code := d.stop(); code != 0 {
		t.Errorf("daemon exit status %d after SIGTERM, want 0", code)
	}
	integrityOK(t, s.dbPath)
}

// TestDaemonRenamedIn: files written elsewhere and renamed into the folder,
// and a file written under a temporary name in the folder and renamed when
// complete, are recorded under their final names.
func TestDaemonRenamedIn(t *testing.T) {
	t.Parallel()
	s := newSetup(t, daemonConfig{})
	staging := mkdir(t, filepath.Join(s.dir, "staging"))
	d := startDaemon(t, s.cfgPath)
	d.waitReady(s.dbPath)

	want := map[string][]byte{}
	for i := range 5 {
		src := filepath.Join(staging, fmt.Sprintf("moved-%d.csv", i))
		dst := filepath.Join(s.export, fmt.Sprintf("moved-%d.csv", i))
		want[dst] = smallHitCSV(t, uint64(300+i))
		writeFile(t, src, want[dst])
		if err := os.Rename(src, dst); err != nil {
			t.Fatal(err)
		}
	}
	part := filepath.Join(s.export, "late.csv.part") // a temporary name the watcher ignores
	final := filepath.Join(s.export, "late.csv")
	want[final] = smallHitCSV(t, 399)
	writeFile(t, part, want[final])
	time.Sleep(time.Second) // longer than the settle time: .part must be ignored, not just early
	if err := os.Rename(part, final); err != nil {
		t.Fatal(err)
	}

	st := waitRecorded(t, s.dbPath, len(want))
	if st.Files["analysed"] != len(want) {
		t.Errorf("status %+v; want %d analysed", st, len(want))
	}
	checkOncePerFile(t, history(t, s.dbPath), want)
	if got := fileStates(t, s.dbPath, part); len(got) != 0 {
		t.Errorf("the temporary name %s was taken: %+v", part, got)
	}
	if code := d.stop(); code != 0 {
		t.Errorf("daemon exit status %d, want 0", code)
	}
}

// TestDaemonDeletedBeforeRead: a file deleted before it settled is never
// recorded, and the daemon goes on.
func TestDaemonDeletedBeforeRead(t *testing.T) {
	t.Parallel()
	s := newSetup(t, daemonConfig{Settle: "2s"})
	d := startDaemon(t, s.cfgPath)
	d.waitReady(s.dbPath)

	gone := filepath.Join(s.export, "gone.csv")
	writeFile(t, gone, smallHitCSV(t, 11))
	time.Sleep(100 * time.Millisecond) // long enough to be noticed, far shorter than the settle time
	if err := os.Remove(gone); err != nil {
		t.Fatal(err)
	}
	good := filepath.Join(s.export, "after.csv")
	writeFile(t, good, smallHitCSV(t, 12))

	st := waitRecorded(t, s.dbPath, 1)
	if len(st.Files) != 1 || st.Files["analysed"] != 1 || st.LastError != nil {
		t.Errorf("status %+v (last error %+v); want only the remaining file, analysed", st, st.LastError)
	}
	if got := fileStates(t, s.dbPath, gone); len(got) != 0 {
		t.Errorf("deleted file recorded: %+v", got[gone])
	}
	checkOncePerFile(t, history(t, s.dbPath), map[string][]byte{good: smallHitCSV(t, 12)})
	if !d.running() {
		t.Fatal("daemon stopped")
	}
	if code := d.stop(); code != 0 {
		t.Errorf("daemon exit status %d, want 0", code)
	}
}

// TestDaemonDuplicates: the same bytes under other names (a copy, a file
// moved in) are recorded as duplicates of the one hit.
func TestDaemonDuplicates(t *testing.T) {
	t.Parallel()
	s := newSetup(t, daemonConfig{Prototype: "arm", Revision: "B"})
	d := startDaemon(t, s.cfgPath)
	d.waitReady(s.dbPath)

	data := smallHitCSV(t, 21)
	orig := filepath.Join(s.export, "hit-0001.csv")
	writeFile(t, orig, data)
	waitRecorded(t, s.dbPath, 1)

	writeFile(t, filepath.Join(s.export, "copy of hit-0001.csv"), data)
	src := filepath.Join(mkdir(t, filepath.Join(s.dir, "elsewhere")), "again.csv")
	writeFile(t, src, data)
	if err := os.Rename(src, filepath.Join(s.export, "again.csv")); err != nil {
		t.Fatal(err)
	}

	st := waitRecorded(t, s.dbPath, 3)
	if st.Files["analysed"] != 1 || st.Files["duplicate"] != 2 || st.Hits != 1 {
		t.Errorf("status %+v; want 1 analysed file, 2 duplicates, 1 hit", st)
	}

	// New bytes under four names at once: the workers analyse them side
	// by side, the single writer stores one hit and three duplicates.
	data2 := smallHitCSV(t, 22)
	for i := range 4 {
		writeFile(t, filepath.Join(s.export, fmt.Sprintf("same-%d.csv", i)), data2)
	}
	st = waitRecorded(t, s.dbPath, 7)
	if st.Files["analysed"] != 2 || st.Files["duplicate"] != 5 || st.Hits != 2 {
		t.Errorf("status %+v; want 2 analysed files, 5 duplicates, 2 hits", st)
	}
	hits := history(t, s.dbPath)
	first := ""
	for _, h := range hits {
		if strings.Contains(h.File, "same-") {
			first = h.File
		}
	}
	checkOncePerFile(t, hits, map[string][]byte{orig: data, first: data2})
	if len(hits) == 1 && (hits[0].Prototype != "arm" || hits[0].Revision != "B") {
		t.Errorf("hit metadata %q/%q, want the folder's arm/B", hits[0].Prototype, hits[0].Revision)
	}
	if code := d.stop(); code != 0 {
		t.Errorf("daemon exit status %d, want 0", code)
	}
}

// corruptFiles are files the readers refuse, each with the part of the
// reader's message that must be recorded (beside the file name).
func corruptFiles(t *testing.T) map[string]struct {
	data []byte
	msg  string
} {
	good := string(smallHitCSV(t, 31))
	lines := strings.SplitAfter(good, "\n")
	hdr := 0 // index of the header line (after the "# key: value" lines)
	for strings.HasPrefix(lines[hdr], "#") {
		hdr++
	}
	join := func(ls []string) []byte { return []byte(strings.Join(ls, "")) }
	replaceCell := func(row int, v string) []byte {
		ls := append([]string(nil), lines...)
		cells := strings.Split(strings.TrimSuffix(ls[row], "\n"), ",")
		cells[len(cells)-1] = v
		ls[row] = strings.Join(cells, ",") + "\n"
		return join(ls)
	}
	rng := rand.New(rand.NewPCG(7, 8)) // fixed seed: the same bytes every run
	random := make([]byte, 4096)
	for i := range random {
		random[i] = byte(rng.UintN(256))
	}
	// A RIFF/WAVE header whose fmt chunk is cut short, then noise.
	wav := append([]byte("RIFF\x24\x10\x00\x00WAVEfmt \x10\x00\x00\x00\x01\x00"), random[:7]...)
	// A universal-file delimiter and dataset number 58, then noise.
	uff := append([]byte("    -1\n    58\n"), random[:300]...)

	// A data row of the form "t,force,accel" cut inside its second cell.
	cut := lines[hdr+50]
	cut = cut[:strings.Index(cut, ",")+3]
	// Time column with one row left out: an uneven step. The writer
	// gives the time only through "# sample_rate:", so write a time column.
	var timed bytes.Buffer
	fmt.Fprintf(&timed, "time [s],accel [m/s^2]\n")
	for i := range 400 {
		if i == 200 {
			continue
		}
		fmt.Fprintf(&timed, "%.6f,%.4f\n", float64(i)/2048, 20*float64(i%17-8))
	}
	return map[string]struct {
		data []byte
		msg  string
	}{
		"empty.csv":       {nil, "empty"},
		"header-only.csv": {join(lines[:hdr+1]), "no data rows"},
		"truncated.csv":   {append(join(lines[:hdr+50]), cut...), "truncated"},
		"nan.csv":         {replaceCell(hdr+40, "NaN"), "NaN"},
		"text.csv":        {replaceCell(hdr+40, "n/a"), "non-numeric"},
		"uneven.csv":      {timed.Bytes(), "uneven time step"},
		"random.csv":      {random, ""},
		"garbage.wav":     {wav, ""},
		"garbage.uff":     {uff, ""},
	}
}

// TestDaemonCorruptFiles: each file the readers refuse is recorded as
// failed with the reader's error, and the daemon still records a good file
// dropped after them.
func TestDaemonCorruptFiles(t *testing.T) {
	t.Parallel()
	s := newSetup(t, daemonConfig{})
	d := startDaemon(t, s.cfgPath)
	d.waitReady(s.dbPath)

	bad := corruptFiles(t)
	var paths []string
	for name, f := range bad {
		p := filepath.Join(s.export, name)
		writeFile(t, p, f.data)
		paths = append(paths, p)
	}
	sort.Strings(paths)
	st := waitRecorded(t, s.dbPath, len(bad))
	if st.Files["failed"] != len(bad) || st.Hits != 0 {
		t.Errorf("status %+v; want %d failed files, no hit", st, len(bad))
	}
	if st.LastError == nil || !st.LastError.Final || !strings.Contains(st.LastError.Error, filepath.Base(st.LastError.File)) {
		t.Errorf("status last_error %+v; want a final error naming its file", st.LastError)
	}

	good := filepath.Join(s.export, "good.csv")
	writeFile(t, good, smallHitCSV(t, 32))
	st = waitRecorded(t, s.dbPath, len(bad)+1)
	if st.Files["analysed"] != 1 || st.Hits != 1 {
		t.Errorf("status %+v; want the good file analysed after the corrupt ones", st)
	}
	// A failed file that is rewritten is tried again.
	fixed := filepath.Join(s.export, "nan.csv")
	writeFile(t, fixed, smallHitCSV(t, 33))
	waitFor(t, "the rewritten file analysed", func() (bool, string) {
		st, err := statusOf(s.dbPath)
		return err == nil && st.Files["analysed"] == 2 && st.Files["failed"] == len(bad)-1, fmt.Sprintf("%+v %v", st, err)
	})
	if !d.running() {
		t.Fatal("daemon stopped")
	}
	if code := d.stop(); code != 0 {
		t.Errorf("daemon exit status %d, want 0", code)
	}
	if row := fileStates(t, s.dbPath, fixed)[fixed]; row.State != "analysed" || row.LastError != "" || row.Attempts != 0 {
		t.Errorf("rewritten file: %+v; want analysed with no error left", row)
	}
	delete(bad, "nan.csv")
	paths = slices.DeleteFunc(paths, func(p string) bool { return p == fixed })

	states := fileStates(t, s.dbPath, paths...)
	for _, p := range paths {
		row, ok := states[p]
		if !ok {
			t.Errorf("%s: not recorded", p)
			continue
		}
		if row.State != "failed" || row.Attempts != 1 {
			t.Errorf("%s: state %s after %d attempt(s), want failed after 1", p, row.State, row.Attempts)
		}
		// The recorded reason is the reader's own error for the file, as
		// 'ringlog analyze' reports it.
		out, _, code := ringlog(t, "analyze", "--json", p)
		var res struct{ File, Error string }
		if err := json.Unmarshal([]byte(out), &res); err != nil || code != 1 {
			t.Errorf("analyze %s: exit %d, output %q", p, code, out)
		}
		if row.LastError != res.Error {
			t.Errorf("%s: recorded error %q; the reader says %q", p, row.LastError, res.Error)
		}
		if want := bad[filepath.Base(p)].msg; !strings.Contains(row.LastError, p) || !strings.Contains(row.LastError, want) {
			t.Errorf("%s: recorded error %q should name the file and say %q", p, row.LastError, want)
		}
	}
}

// TestDaemonUnwritableDatabase: a database under a path whose parent is a
// regular file stops the daemon at once with a message naming the path.
func TestDaemonUnwritableDatabase(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	plain := filepath.Join(dir, "not-a-folder")
	writeFile(t, plain, []byte("a file, not a folder\n"))
	dbPath := filepath.Join(plain, "history.db")
	cfg := writeConfig(t, dir, daemonConfig{Database: dbPath, Folder: mkdir(t, filepath.Join(dir, "export"))})

	d := startDaemon(t, cfg)
	code := d.wait()
	if code != exitFailure {
		t.Errorf("exit status %d, want %d", code, exitFailure)
	}
	msg := d.stderr.String()
	if !strings.Contains(msg, dbPath) {
		t.Errorf("stderr does not name the database path %s:\n%s", dbPath, msg)
	}
	if strings.Contains(msg, "panic") || strings.Contains(msg, "goroutine ") {
		t.Errorf("stderr shows a panic:\n%s", msg)
	}

}

// TestDaemonTwoOnOneDatabase: a second daemon on the same database exits
// non-zero naming the first one's pid; the first keeps running.
func TestDaemonTwoOnOneDatabase(t *testing.T) {
	t.Parallel()
	s := newSetup(t, daemonConfig{})
	first := startDaemon(t, s.cfgPath)
	first.waitReady(s.dbPath)

	second := startDaemon(t, s.cfgPath)
	if code := second.wait(); code != exitFailure {
		t.Errorf("second daemon exit status %d, want %d", code, exitFailure)
	}
	msg := second.stderr.String()
	pid := strconv.Itoa(first.pid())
	if !strings.Contains(msg, pid) || !strings.Contains(msg, s.dbPath) {
		t.Errorf("second daemon's message should name the database %s and the holder's pid %s:\n%s", s.dbPath, pid, msg)
	}

	// The first still holds the lock and still records.
	if st := mustStatus(t, s.dbPath); !first.running() || !st.DaemonRunning || st.DaemonPID != first.pid() {
		t.Fatalf("first daemon (running %v) lost the lock: %+v", first.running(), st)
	}
	p := filepath.Join(s.export, "after-second.csv")
	writeFile(t, p, smallHitCSV(t, 41))
	waitRecorded(t, s.dbPath, 1)
	if code := first.stop(); code != 0 {
		t.Errorf("first daemon exit status %d, want 0", code)
	}
}

// TestDaemonSignalStop: SIGTERM, SIGINT or SIGHUP during a burst ends the daemon
// with status 0 after it finished the files in hand: nothing stays pending,
// and a restart records the rest, each file once.
func TestDaemonSignalStop(t *testing.T) {
	if runtime.GOOS == "windows" {
		t.Skip("no SIGTERM/SIGINT to another process on Windows")
	}
	t.Parallel()
	// SIGHUP used to kill the daemon without draining.
	for _, sig := range []syscall.Signal{syscall.SIGTERM, syscall.SIGINT, syscall.SIGHUP} {
		t.Run(sig.String(), func(t *testing.T) {
			s := newSetup(t, daemonConfig{Workers: 1})
			const n = 30
			want := map[string][]byte{}
			for i := range n {
				p := filepath.Join(s.export, fmt.Sprintf("hit-%02d.csv", i))
				want[p] = hitCSV(t, uint64(700+i)+uint64(sig)*100, 4096, 1)
				writeFile(t, p, want[p])
			}
			d := startDaemon(t, s.cfgPath)
			deadline := time.Now().Add(waitLong)
			for countLines(d.stderr.String(), "hit recorded") < 2 {
				if time.Now().After(deadline) || !d.running() {
					t.Fatalf("no hit recorded:\n%s", d.stderr.String())
				}
				time.Sleep(2 * time.Millisecond)
			}
			if err := d.cmd.Process.Signal(sig); err != nil {
				t.Fatal(err)
			}
			if code := d.wait(); code != 0 {
				t.Fatalf("exit status %d after %v, want 0:\n%s", code, sig, tail(d.stderr.String(), 3000))
			}
			st := mustStatus(t, s.dbPath)
			t.Logf("stopped with %d of %d files recorded", st.recorded(), n)
			if st.Pending != 0 || st.DaemonRunning || st.Files["failed"] != 0 {
				t.Errorf("after the stop: %+v; want nothing pending or failed, lock released", st)
			}
			integrityOK(t, s.dbPath)

			d = startDaemon(t, s.cfgPath)
			waitRecorded(t, s.dbPath, n)
			if code := d.stop(); code != 0 {
				t.Errorf("exit status %d, want 0", code)
			}
			checkOncePerFile(t, history(t, s.dbPath), want)
		})
	}
}

// TestDaemonUnopenableFileRecordedFailed runs the daemon in-process with
// the watcher's open test replaced, so that one file stays locked through
// every retry: it is recorded as failed with the reason, and the daemon
// goes on. (The real-process permission test is in daemon_unix_test.go; its
// retries take minutes to run out, too long for a test.)
func TestDaemonUnopenableFileRecordedFailed(t *testing.T) {
	t.Parallel()
	s := newSetup(t, daemonConfig{})
	cfg, err := loadConfig(s.cfgPath)
	if err != nil {
		t.Fatal(err)
	}
	var stderr syncBuffer
	m := &Main{Config: cfg, Stderr: &stderr}
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	if err := m.Open(ctx); err != nil {
		t.Fatal(err)
	}
	defer m.Close()
	locked := filepath.Join(s.export, "locked.csv")
	m.watcher = newTestWatcher(t, m, locked, 2)

	writeFile(t, locked, smallHitCSV(t, 51))
	good := filepath.Join(s.export, "good.csv")
	writeFile(t, good, smallHitCSV(t, 52))
	runErr := make(chan error, 1)
	go func() { runErr <- m.Run(ctx) }()

	st := waitRecorded(t, s.dbPath, 2)
	cancel()
	if err := <-runErr; err != nil {
		t.Errorf("Run: %v", err)
	}
	if st.Files["failed"] != 1 || st.Files["analysed"] != 1 {
		t.Errorf("status %+v; want one failed, one analysed", st)
	}
	row := fileStates(t, s.dbPath, locked)[locked]
	if row.State != "failed" || !strings.Contains(row.LastError, locked) || !strings.Contains(row.LastError, "permission denied") {
		t.Errorf("locked file: state %s, error %q; want failed, naming the file and the reason", row.State, row.LastError)
	}
}

// newTestWatcher replaces the daemon's watcher by one whose open test
// fails with a permission error for the file locked, retrying it retries
// times 20 ms apart.
func newTestWatcher(t *testing.T, m *Main, locked string, retries int) *watch.Watcher {
	t.Helper()
	cfg := m.Config
	wc := watch.Config{Settle: cfg.Settle.Duration, ScanInterval: cfg.ScanInterval.Duration, Logger: m.Log,
		OpenRetries: retries, OpenBackoff: 20 * time.Millisecond,
		Open: func(path string) (io.Closer, error) {
			if path == locked {
				return nil, &fs.PathError{Op: "open", Path: path, Err: fs.ErrPermission}
			}
			return os.Open(path)
		}}
	for _, f := range cfg.Folders {
		wc.Folders = append(wc.Folders, watch.Folder{Path: f.Path})
	}
	w, err := watch.New(wc, seenFunc(func(path string, size int64, mtime time.Time) bool {
		ok, err := m.store.Known(context.Background(), path, size, mtime)
		return err == nil && ok
	}))
	if err != nil {
		t.Fatal(err)
	}
	return w
}
