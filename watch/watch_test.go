package watch_test

import (
	"bytes"
	"context"
	"crypto/sha256"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/ringlog/ringlog/watch"
)

// Settle periods kept short so the whole package runs in seconds; the
// rules under test do not depend on the length.
const (
	settle   = 250 * time.Millisecond
	longWait = 10 * time.Second // generous bound for "eventually", on a loaded 2-core machine
	never    = time.Hour        // a scan interval that does not come during a test
)

// got is one Ready with the time it was received.
type got struct {
	watch.Ready
	at time.Time
}

// sink collects what a Watcher hands out.
type sink struct {
	mu    sync.Mutex
	items []got
}

func (s *sink) add(r watch.Ready) {
	s.mu.Lock()
	s.items = append(s.items, got{r, time.Now()})
	s.mu.Unlock()
}

func (s *sink) all() []got {
	s.mu.Lock()
	defer s.mu.Unlock()
	return slices.Clone(s.items)
}

// count returns how often path was handed out.
func (s *sink) count(path string) int {
	n := 0
	for _, g := range s.all() {
		if g.Path == path {
			n++
		}
	}
	return n
}

// run starts w with a consumer that sleeps delay per item (back-pressure
// when delay > 0) and stops it at the end of the test, checking that Run
// returned nil.
func run(t *testing.T, w *watch.Watcher, delay time.Duration) (*sink, func()) {
	t.Helper()
	out := make(chan watch.Ready) // unbuffered: every send waits for the consumer
	s := &sink{}
	ctx, cancel := context.WithCancel(context.Background())
	runErr := make(chan error, 1)
	go func() { runErr <- w.Run(ctx, out) }()
	consumed := make(chan struct{})
	go func() {
		defer close(consumed)
		for {
			select {
			case r := <-out:
				s.add(r)
				if delay > 0 {
					time.Sleep(delay)
				}
			case <-ctx.Done():
				return
			}
		}
	}()
	var once sync.Once
	stop := func() {
		once.Do(func() {
			cancel()
			select {
			case err := <-runErr:
				if err != nil {
					t.Errorf("Run returned %v after cancel, want nil", err)
				}
			case <-time.After(longWait):
				t.Errorf("Run did not return after cancel")
			}
			<-consumed
		})
	}
	t.Cleanup(stop)
	// Wait for the first scan, so files made from here on are made while
	// the watcher runs.
	waitFor(t, "first scan", func() bool { return w.Stats().Scans >= 1 })
	return s, stop
}

// waitFor polls cond until it holds, failing the test after longWait.
func waitFor(t *testing.T, what string, cond func() bool) {
	t.Helper()
	deadline := time.Now().Add(longWait)
	for !cond() {
		if time.Now().After(deadline) {
			t.Fatalf("timed out waiting for %s", what)
		}
		time.Sleep(5 * time.Millisecond)
	}
}

func newWatcher(t *testing.T, cfg watch.Config, seen watch.Seen) *watch.Watcher {
	t.Helper()
	if cfg.Settle == 0 {
		cfg.Settle = settle
	}
	w, err := watch.New(cfg, seen)
	if err != nil {
		t.Fatal(err)
	}
	return w
}

func writeFile(t *testing.T, path string, size int) {
	t.Helper()
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, bytes.Repeat([]byte("x"), size), 0o644); err != nil {
		t.Fatal(err)
	}
}

// mapSeen is a Seen backed by a map, as a store of processed files would be.
type mapSeen struct {
	mu sync.Mutex
	m  map[string]string
}

func key(size int64, mtime time.Time) string { return fmt.Sprint(size, mtime.UnixNano()) }

func (s *mapSeen) Known(path string, size int64, mtime time.Time) bool {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.m[path] == key(size, mtime)
}

func (s *mapSeen) record(path string, size int64, mtime time.Time) {
	s.mu.Lock()
	defer s.mu.Unlock()
	if s.m == nil {
		s.m = map[string]string{}
	}
	s.m[path] = key(size, mtime)
}

func TestSlowWriterHandedOutOnceAfterLastWrite(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	// Frequent scans, to show that scans during the write do not hand the
	// file out early either.
	w := newWatcher(t, watch.Config{Folders: []watch.Folder{{Path: dir}}, ScanInterval: 100 * time.Millisecond}, nil)
	s, _ := run(t, w, 0)

	path := filepath.Join(dir, "slow.csv")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	chunk := []byte(strings.Repeat("0.125;-0.5\n", 10)) // 110 bytes
	const chunks = 25                                   // one every 100 ms: 2.5 s, each gap well below the settle period
	var lastWriteStart time.Time
	var maxGap time.Duration // the longest pause between two writes
	for i := range chunks {
		time.Sleep(100 * time.Millisecond)
		if !lastWriteStart.IsZero() {
			maxGap = max(maxGap, time.Since(lastWriteStart))
		}
		lastWriteStart = time.Now()
		if _, err := f.Write(chunk); err != nil {
			t.Fatal(err)
		}
		if n := s.count(path); n != 0 {
			if maxGap >= settle {
				// A loaded machine paused the writer longer than the
				// settle period: handing the file out was right.
				t.Skipf("the writer paused %v (settle %v); the write rhythm could not be held", maxGap, settle)
			}
			t.Fatalf("handed out after chunk %d of %d, while still being written (longest pause %v)", i, chunks, maxGap)
		}
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	waitFor(t, "the slow file", func() bool { return s.count(path) > 0 })
	// Give it the chance to be handed out twice: several settle periods and scans.
	time.Sleep(4 * settle)

	items := s.all()
	if len(items) != 1 {
		t.Fatalf("handed out %d times, want exactly once: %+v", len(items), items)
	}
	g := items[0]
	if want := int64(chunks * len(chunk)); g.Size != want || g.Err != nil {
		t.Errorf("got size %d err %v, want the final size %d and no error", g.Size, g.Err, want)
	}
	if earliest := lastWriteStart.Add(settle); g.at.Before(earliest) {
		t.Errorf("handed out %v before the last write + settle", earliest.Sub(g.at))
	}
	if st := w.Stats(); st.HandedOut != 1 || st.Tracked != 0 {
		t.Errorf("stats %+v: want 1 handed out, 0 tracked", st)
	}
}

func TestBurstWithSlowConsumer(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	// Scans every 100 ms run many times while the consumer lags behind:
	// none may hand a file out twice.
	w := newWatcher(t, watch.Config{Folders: []watch.Folder{{Path: dir}}, ScanInterval: 100 * time.Millisecond}, nil)
	s, stop := run(t, w, 3*time.Millisecond) // 500 x 3 ms: the consumer is the bottleneck for 1.5 s

	const n = 500
	want := make([]string, n)
	for i := range n {
		want[i] = filepath.Join(dir, fmt.Sprintf("hit-%03d.csv", i))
		writeFile(t, want[i], 100+i)
	}
	waitFor(t, "500 files", func() bool { return len(s.all()) >= n })
	time.Sleep(3 * settle) // any duplicate would come now
	stop()

	seen := map[string]int{}
	for _, g := range s.all() {
		seen[g.Path]++
		if g.Err != nil {
			t.Errorf("%s: unexpected error %v", g.Path, g.Err)
		}
		var i int
		fmt.Sscanf(filepath.Base(g.Path), "hit-%03d.csv", &i)
		if g.Size != int64(100+i) {
			t.Errorf("%s: size %d, want %d", g.Path, g.Size, 100+i)
		}
	}
	for _, p := range want {
		if seen[p] != 1 {
			t.Errorf("%s handed out %d times, want 1", filepath.Base(p), seen[p])
		}
	}
	if len(seen) != n {
		t.Errorf("handed out %d distinct files, want %d", len(seen), n)
	}
	st := w.Stats()
	if st.HandedOut != n || st.Scans < 3 {
		t.Errorf("stats %+v: want %d handed out over several scans", st, n)
	}
}

func TestRenamedIntoFolder(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	elsewhere := t.TempDir() // same file system, outside the watched folder
	// No periodic scan after the first: only the Create event can find it.
	w := newWatcher(t, watch.Config{Folders: []watch.Folder{{Path: dir}}, ScanInterval: never}, nil)
	s, _ := run(t, w, 0)

	src := filepath.Join(elsewhere, "moved.wav")
	writeFile(t, src, 4096)
	old := time.Now().Add(-time.Hour).Truncate(time.Second) // an mtime long past must not skip the settle rule
	if err := os.Chtimes(src, old, old); err != nil {
		t.Fatal(err)
	}
	dst := filepath.Join(dir, "moved.wav")
	if err := os.Rename(src, dst); err != nil {
		t.Fatal(err)
	}
	renamedAt := time.Now()
	waitFor(t, "the renamed file", func() bool { return s.count(dst) == 1 })
	g := s.all()[0]
	if g.Size != 4096 || !g.MTime.Equal(old) || g.Err != nil {
		t.Errorf("got %+v, want size 4096, mtime %v, no error", g.Ready, old)
	}
	if g.at.Before(renamedAt.Add(settle)) {
		t.Errorf("handed out %v after the rename, before the settle period %v", g.at.Sub(renamedAt), settle)
	}
}

func TestDeletedBeforeSettledIsNeverHandedOut(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	w := newWatcher(t, watch.Config{Folders: []watch.Folder{{Path: dir}}, Settle: 400 * time.Millisecond, ScanInterval: 150 * time.Millisecond}, nil)
	s, _ := run(t, w, 0)

	doomed := filepath.Join(dir, "doomed.csv")
	writeFile(t, doomed, 10)
	waitFor(t, "the file to be tracked", func() bool { return w.Stats().Tracked == 1 })
	if err := os.Remove(doomed); err != nil {
		t.Fatal(err)
	}
	keeper := filepath.Join(dir, "keeper.csv")
	writeFile(t, keeper, 10)
	waitFor(t, "the kept file", func() bool { return s.count(keeper) == 1 })
	time.Sleep(400 * time.Millisecond)
	if n := s.count(doomed); n != 0 {
		t.Errorf("deleted file handed out %d times", n)
	}
	if st := w.Stats(); st.Forgotten != 1 || st.HandedOut != 1 {
		t.Errorf("stats %+v: want 1 forgotten, 1 handed out", st)
	}
}

// errLocked stands for the sharing violation a Windows recorder causes
// while it holds its file (we run as root, so permissions cannot make an
// open fail here).
var errLocked = errors.New("the process cannot access the file because it is being used by another process (simulated)")

// lockingOpener fails the first fails[path] opens of path, then opens it.
type lockingOpener struct {
	mu    sync.Mutex
	fails map[string]int
	calls map[string]int
}

func (o *lockingOpener) open(path string) (io.Closer, error) {
	o.mu.Lock()
	o.calls[path]++
	n := o.calls[path]
	o.mu.Unlock()
	if n <= o.fails[path] {
		return nil, &fs.PathError{Op: "open", Path: path, Err: errLocked}
	}
	return os.Open(path)
}

func (o *lockingOpener) callsOf(path string) int {
	o.mu.Lock()
	defer o.mu.Unlock()
	return o.calls[path]
}

func TestOpenRetriedWhileLocked(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	busy := filepath.Join(dir, "busy.csv")
	stuck := filepath.Join(dir, "stuck.csv")
	writeFile(t, busy, 10)
	writeFile(t, stuck, 20)
	o := &lockingOpener{fails: map[string]int{busy: 3, stuck: 1 << 30}, calls: map[string]int{}}
	w := newWatcher(t, watch.Config{
		Folders:      []watch.Folder{{Path: dir}},
		ScanInterval: 100 * time.Millisecond,
		OpenRetries:  4,
		OpenBackoff:  20 * time.Millisecond,
		Open:         o.open,
	}, nil)
	s, _ := run(t, w, 0)

	waitFor(t, "both files", func() bool { return s.count(busy) == 1 && s.count(stuck) == 1 })
	time.Sleep(3 * settle) // scans go on: neither may come again
	for _, g := range s.all() {
		switch g.Path {
		case busy:
			if g.Err != nil {
				t.Errorf("busy.csv: %v, want it opened after 3 failures", g.Err)
			}
			if n := o.callsOf(busy); n != 4 {
				t.Errorf("busy.csv opened %d times, want 3 failures + 1 success", n)
			}
		case stuck:
			if !errors.Is(g.Err, errLocked) || !strings.Contains(g.Err.Error(), stuck) {
				t.Errorf("stuck.csv: err %v, want the open error naming the file", g.Err)
			}
			if n := o.callsOf(stuck); n != 5 {
				t.Errorf("stuck.csv opened %d times, want 1 + 4 retries", n)
			}
			if g.Size != 20 {
				t.Errorf("stuck.csv size %d, want 20", g.Size)
			}
		}
	}
	if n := len(s.all()); n != 2 {
		t.Errorf("%d hand-outs, want 2", n)
	}
	if st := w.Stats(); st.Failed != 1 || st.HandedOut != 2 {
		t.Errorf("stats %+v: want 2 handed out, 1 of them failed", st)
	}
}

func TestPollingOnly(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	w := newWatcher(t, watch.Config{Folders: []watch.Folder{{Path: dir, Poll: true, Recursive: true}}, ScanInterval: 200 * time.Millisecond}, nil)
	s, _ := run(t, w, 0)

	a := filepath.Join(dir, "a.csv")
	b := filepath.Join(dir, "bay2", "b.uff")
	writeFile(t, a, 10)
	writeFile(t, b, 20)
	waitFor(t, "both files", func() bool { return s.count(a) == 1 && s.count(b) == 1 })
	if st := w.Stats(); st.WatchedDirs != 0 {
		t.Errorf("%d directories under notification watch in polling mode, want 0", st.WatchedDirs)
	}
}

func TestRescanFindsFilesWithoutEvents(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	// Polling mode with no periodic scan: only Rescan can find the file.
	w := newWatcher(t, watch.Config{Folders: []watch.Folder{{Path: dir, Poll: true}}, ScanInterval: never}, nil)
	s, _ := run(t, w, 0)

	p := filepath.Join(dir, "late.csv")
	writeFile(t, p, 10)
	time.Sleep(3 * settle)
	if n := len(s.all()); n != 0 {
		t.Fatalf("%d files handed out without a scan or events", n)
	}
	w.Rescan()
	waitFor(t, "the file after Rescan", func() bool { return s.count(p) == 1 })
}

func TestSeenAcrossRestart(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	stat := func(p string) fs.FileInfo {
		fi, err := os.Stat(p)
		if err != nil {
			t.Fatal(err)
		}
		return fi
	}
	a, b, k := filepath.Join(dir, "a.csv"), filepath.Join(dir, "b.csv"), filepath.Join(dir, "known.csv")
	for _, p := range []string{a, b, k} {
		writeFile(t, p, 10)
	}
	seen := &mapSeen{}
	fk := stat(k)
	seen.record(k, fk.Size(), fk.ModTime()) // processed by an earlier run

	cfg := watch.Config{Folders: []watch.Folder{{Path: dir}}, ScanInterval: 100 * time.Millisecond}
	w1 := newWatcher(t, cfg, seen)
	s1, stop1 := run(t, w1, 0)
	waitFor(t, "a and b", func() bool { return s1.count(a) == 1 && s1.count(b) == 1 })
	time.Sleep(2 * settle)
	stop1()
	if n := s1.count(k); n != 0 {
		t.Errorf("file known to Seen handed out %d times", n)
	}
	for _, g := range s1.all() {
		seen.record(g.Path, g.Size, g.MTime) // what the caller's store does
	}

	// Between runs: a grows, c arrives, b stays as it was.
	f, err := os.OpenFile(a, os.O_APPEND|os.O_WRONLY, 0)
	if err != nil {
		t.Fatal(err)
	}
	f.WriteString("more")
	f.Close()
	c := filepath.Join(dir, "c.csv")
	writeFile(t, c, 10)

	w2 := newWatcher(t, cfg, seen)
	s2, stop2 := run(t, w2, 0)
	waitFor(t, "a and c", func() bool { return s2.count(a) == 1 && s2.count(c) == 1 })
	time.Sleep(2 * settle)
	stop2()
	if n, m := s2.count(b), s2.count(k); n != 0 || m != 0 {
		t.Errorf("after restart, known files handed out again: b %d times, known %d times", n, m)
	}
	if g := s2.all(); len(g) != 2 {
		t.Errorf("after restart %d hand-outs, want 2 (a changed, c new)", len(g))
	}
}

func TestChangedAfterHandOutComesAgain(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	w := newWatcher(t, watch.Config{Folders: []watch.Folder{{Path: dir}}, ScanInterval: never}, nil)
	s, _ := run(t, w, 0)
	p := filepath.Join(dir, "again.csv")
	writeFile(t, p, 10)
	waitFor(t, "first hand-out", func() bool { return s.count(p) == 1 })
	writeFile(t, p, 30)
	waitFor(t, "second hand-out", func() bool { return s.count(p) == 2 })
	if g := s.all(); g[0].Size != 10 || g[1].Size != 30 {
		t.Errorf("sizes %d, %d; want 10 then 30", g[0].Size, g[1].Size)
	}
}

// entry is what must not change in the folder: name, size, mtime, mode,
// content.
type entry struct {
	size  int64
	mtime time.Time
	mode  fs.FileMode
	sum   [32]byte
}

func snapshot(t *testing.T, root string) map[string]entry {
	t.Helper()
	m := map[string]entry{}
	err := filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		fi, err := d.Info()
		if err != nil {
			return err
		}
		e := entry{size: fi.Size(), mtime: fi.ModTime(), mode: fi.Mode()}
		if fi.Mode().IsRegular() {
			b, err := os.ReadFile(p)
			if err != nil {
				return err
			}
			e.sum = sha256.Sum256(b)
		} else {
			e.size = 0 // a directory's size is file-system bookkeeping
		}
		rel, _ := filepath.Rel(root, p)
		m[rel] = e
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return m
}

func TestFolderLeftUnchanged(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	for _, name := range []string{"a.csv", "b.wav", "sub/c.unv", "ignored.tmp", ".hidden.csv", "locked.csv"} {
		writeFile(t, filepath.Join(dir, name), 64)
	}
	locked := filepath.Join(dir, "locked.csv")
	o := &lockingOpener{fails: map[string]int{locked: 1 << 30}, calls: map[string]int{}}
	before := snapshot(t, dir)
	w := newWatcher(t, watch.Config{
		Folders:      []watch.Folder{{Path: dir, Recursive: true}},
		ScanInterval: 100 * time.Millisecond,
		OpenRetries:  2,
		OpenBackoff:  10 * time.Millisecond,
		Open:         o.open,
	}, nil)
	s, stop := run(t, w, 0)
	waitFor(t, "4 files", func() bool { return len(s.all()) == 4 })
	time.Sleep(2 * settle)
	stop()
	after := snapshot(t, dir)
	if len(before) != len(after) {
		t.Errorf("folder had %d entries, now %d", len(before), len(after))
	}
	for name, b := range before {
		if a, ok := after[name]; !ok {
			t.Errorf("%s is gone", name)
		} else if a.size != b.size || !a.mtime.Equal(b.mtime) || a.mode != b.mode || a.sum != b.sum {
			t.Errorf("%s changed: %+v -> %+v", name, b, a)
		}
	}
	for name := range after {
		if _, ok := before[name]; !ok {
			t.Errorf("%s appeared in the folder", name)
		}
	}
}

func TestNamesAndPatterns(t *testing.T) {
	t.Parallel()
	plain := t.TempDir()
	runs := t.TempDir()
	for _, name := range []string{
		"a.csv", "B.CSV", "c.Wav", "d.uff", "e.unv", "f.tsv", "g.txt", // default includes, any case
		"h.dat", "~$a.csv", "x.tmp", "y.csv.part", ".~lock.a.csv#", ".hidden.csv", "z.csv~", "w.csv.TMP",
		"sub/i.csv", // not recursive
	} {
		writeFile(t, filepath.Join(plain, name), 8)
	}
	for _, name := range []string{"RUN_1.CSV", "other.csv", "deep/run_2.csv", ".git/run_3.csv", "deep/.cache/run_5.csv"} {
		writeFile(t, filepath.Join(runs, name), 8)
	}
	w := newWatcher(t, watch.Config{Folders: []watch.Folder{
		{Path: plain},
		{Path: runs, Recursive: true, Include: []string{"run_*.csv"}},
	}, ScanInterval: never}, nil)
	s, _ := run(t, w, 0)
	// A subfolder made after the start, found through its Create event
	// (no periodic scan comes).
	writeFile(t, filepath.Join(runs, "late", "later", "run_4.csv"), 8)

	want := map[string]int{
		filepath.Join(plain, "a.csv"): 0, filepath.Join(plain, "B.CSV"): 0, filepath.Join(plain, "c.Wav"): 0,
		filepath.Join(plain, "d.uff"): 0, filepath.Join(plain, "e.unv"): 0, filepath.Join(plain, "f.tsv"): 0,
		filepath.Join(plain, "g.txt"):    0,
		filepath.Join(runs, "RUN_1.CSV"): 1, filepath.Join(runs, "deep", "run_2.csv"): 1,
		filepath.Join(runs, "late", "later", "run_4.csv"): 1,
	}
	waitFor(t, "the included files", func() bool { return len(s.all()) >= len(want) })
	time.Sleep(2 * settle)
	got := map[string]int{}
	for _, g := range s.all() {
		got[g.Path] = g.Folder
	}
	for p, folder := range want {
		if f, ok := got[p]; !ok {
			t.Errorf("%s not handed out", p)
		} else if f != folder {
			t.Errorf("%s: folder %d, want %d", p, f, folder)
		}
	}
	for p := range got {
		if _, ok := want[p]; !ok {
			t.Errorf("%s handed out, want it ignored", p)
		}
	}
}

func TestNewErrors(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	file := filepath.Join(dir, "file.csv")
	writeFile(t, file, 1)
	for _, tc := range []struct {
		name string
		cfg  watch.Config
		want string // must appear in the error
		is   error
	}{
		{"not a directory", watch.Config{Folders: []watch.Folder{{Path: file}}}, file + `" is not a directory`, nil},
		{"no folders", watch.Config{}, "no folder", nil},
		{"bad pattern", watch.Config{Folders: []watch.Folder{{Path: dir, Include: []string{"[a-"}}}}, `"[a-"`, filepath.ErrBadPattern},
		{"path pattern", watch.Config{Folders: []watch.Folder{{Path: dir, Include: []string{"sub/*.csv"}}}}, "file name", nil},
		{"twice", watch.Config{Folders: []watch.Folder{{Path: dir}, {Path: dir + string(filepath.Separator)}}}, "twice", nil},
		{"negative", watch.Config{Folders: []watch.Folder{{Path: dir}}, Settle: -time.Second}, "negative", nil},
	} {
		_, err := watch.New(tc.cfg, nil)
		if err == nil {
			t.Errorf("%s: no error", tc.name)
			continue
		}
		if !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: error %q does not contain %q", tc.name, err, tc.want)
		}
		if tc.is != nil && !errors.Is(err, tc.is) {
			t.Errorf("%s: error %q does not wrap %v", tc.name, err, tc.is)
		}
	}
}

func TestRunArguments(t *testing.T) {
	t.Parallel()
	w := newWatcher(t, watch.Config{Folders: []watch.Folder{{Path: t.TempDir()}}}, nil)
	if err := w.Run(context.Background(), nil); err == nil {
		t.Error("Run with a nil channel: no error")
	}
	ctx, cancel := context.WithCancel(context.Background())
	out := make(chan watch.Ready)
	done := make(chan error)
	go func() { done <- w.Run(ctx, out) }()
	waitFor(t, "first scan", func() bool { return w.Stats().Scans >= 1 })
	if err := w.Run(ctx, out); err == nil {
		t.Error("second concurrent Run: no error")
	}
	cancel()
	if err := <-done; err != nil {
		t.Errorf("Run after cancel: %v, want nil", err)
	}
}

// TestMissingFolderRetried: a folder missing at start (a recorder share
// offline at boot) used to stop New; it is now reported unhealthy and
// watched from the scan that finds it.
func TestMissingFolderRetried(t *testing.T) {
	t.Parallel()
	dir := filepath.Join(t.TempDir(), "share")
	w := newWatcher(t, watch.Config{Folders: []watch.Folder{{Path: dir}}, ScanInterval: 50 * time.Millisecond}, nil)
	if h := w.Health(); len(h) != 1 || h[0].OK || !strings.Contains(h[0].Problem, "share") {
		t.Fatalf("health of a missing folder: %+v", h)
	}
	s, _ := run(t, w, 0)
	if err := os.Mkdir(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(dir, "hit.csv")
	writeFile(t, p, 100)
	waitFor(t, "the file in the folder that appeared", func() bool { return s.count(p) == 1 })
	if h := w.Health(); !h[0].OK || h[0].Problem != "" {
		t.Errorf("health once the folder is there: %+v", h)
	}
	if err := os.RemoveAll(dir); err != nil {
		t.Fatal(err)
	}
	waitFor(t, "the folder reported gone", func() bool { return !w.Health()[0].OK })
}
