package watch

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"github.com/rs/zerolog"
)

// Defaults applied by New where a Config field is zero.
const (
	DefaultSettle       = 2 * time.Second
	DefaultScanInterval = 30 * time.Second
	DefaultOpenRetries  = 8
	DefaultOpenBackoff  = 500 * time.Millisecond

	// maxOpenBackoff caps the exponential wait between two open attempts.
	maxOpenBackoff = 30 * time.Second
	// maxPoll caps the stat period of a settling file.
	maxPoll = 250 * time.Millisecond
)

// DefaultInclude is the include list of a Folder that gives none. Patterns
// are matched against the base name, without regard to case.
var DefaultInclude = []string{"*.csv", "*.txt", "*.tsv", "*.wav", "*.uff", "*.unv"}

// Folder is one export folder of a recorder.
type Folder struct {
	// Path of the folder. It must exist and be a directory when New is
	// called. Ready.Path is built from its absolute, cleaned form.
	Path string
	// Recursive also watches the subfolders (hidden ones excepted).
	Recursive bool
	// Include lists glob patterns (path/filepath.Match syntax) matched
	// against the base name of a file, case-insensitively. Empty means
	// DefaultInclude.
	Include []string
	// Poll finds files by periodic scans only, without fsnotify. Use it for
	// network shares (SMB, NFS), which deliver no change notifications.
	Poll bool
}

// Config configures a Watcher. Zero values take the defaults.
type Config struct {
	Folders []Folder
	// Settle is how long a file's size and modification time must stay
	// unchanged before it is considered complete (default 2 s).
	Settle time.Duration
	// ScanInterval is the period of the full scan of every folder
	// (default 30 s). The scan is the ground truth; in polling mode it is
	// also the only way new files are found.
	ScanInterval time.Duration
	// OpenRetries is how many times opening a settled file is retried
	// after the first failure (a writer holding the file locked) before
	// the file is handed out with the error. 0 means DefaultOpenRetries;
	// a negative value means no retry.
	OpenRetries int
	// OpenBackoff is the wait before the first retry; it doubles with each
	// further retry, up to 30 s (default 500 ms).
	OpenBackoff time.Duration
	// Open opens a file for reading to test that the writer let go of it;
	// the watcher closes it at once and never reads or writes through it.
	// nil means os.Open. Tests use it to simulate locked files.
	Open func(path string) (io.Closer, error)
	// Logger receives debug and warning messages; the zero value is
	// disabled.
	Logger zerolog.Logger
}

// Ready is a file that is complete and new, or that could not be opened.
type Ready struct {
	Path   string    // absolute path of the file
	Folder int       // index into Config.Folders
	Size   int64     // size when it was found settled
	MTime  time.Time // modification time when it was found settled
	// Err is non-nil when the file settled but could not be opened after
	// the retries; the caller should record it as failed with this reason.
	Err error
}

// Seen tells the watcher which files are already done, so a rescan does not
// hand them out again. Known is called at most once per file and
// (size, mtime) state during a run (the answer "known" is remembered), from
// the goroutine that calls Run.
type Seen interface {
	Known(path string, size int64, mtime time.Time) bool
}

// Stats counts what a Watcher did. Tracked and Waiting are the state at the
// time of the call; the others count since New.
type Stats struct {
	Tracked     int    // files found but not yet handed out (settling, retrying the open, or Waiting)
	Waiting     int    // of Tracked, files complete and waiting for the consumer to take them
	Remembered  int    // files handed out or known to Seen, remembered so they are not handed out again
	WatchedDirs int    // directories under fsnotify watch (0 in polling mode)
	HandedOut   uint64 // Ready values delivered, with or without Err
	Failed      uint64 // of HandedOut, those with Err set
	Forgotten   uint64 // tracked files that vanished before they were handed out
	Scans       uint64 // full scans done
	Overflows   uint64 // fsnotify event-queue overflows (each followed by a scan)
	WatchErrors uint64 // other fsnotify errors (each followed by a scan)
}

// folder is a Folder after validation.
type folder struct {
	path      string   // absolute, clean
	recursive bool     //
	poll      bool     //
	include   []string // lower-case patterns
}

// doneEntry remembers a file handed out or known to Seen, in the state
// (size, mtime) it had then.
type doneEntry struct {
	folder int
	size   int64
	mtime  time.Time
}

// Watcher finds complete, new files in a set of folders. Create it with New
// and start it with Run.
type Watcher struct {
	folders   []folder
	settle    time.Duration
	poll      time.Duration // stat period of a file while it settles
	scanEvery time.Duration
	retries   int
	backoff   time.Duration
	open      func(string) (io.Closer, error)
	log       zerolog.Logger
	seen      Seen
	rescanCh  chan struct{}
	running   atomic.Bool
	statsMu   sync.Mutex
	stats     Stats
	doneMu    sync.Mutex           // guards done (Forget runs on other goroutines)
	done      map[string]doneEntry // handed out or known, by path
	health    []FolderHealth       // per folder, guarded by statsMu
	runState                       // owned by the goroutine in Run
}

// FolderHealth is whether a watched folder could be read at its last scan.
type FolderHealth struct {
	Path    string    // absolute path of the folder
	OK      bool      // the last scan read it
	Problem string    // why it could not be read, when not OK
	Since   time.Time // when it became what it is
}

// Health returns the state of each configured folder, in the order of
// Config.Folders. Safe for concurrent use.
func (w *Watcher) Health() []FolderHealth {
	w.statsMu.Lock()
	defer w.statsMu.Unlock()
	return append([]FolderHealth(nil), w.health...)
}

// setHealth records the outcome of reading folder i's root and logs a
// change (only a change, so an offline share does not fill the log).
func (w *Watcher) setHealth(i int, err error) {
	w.statsMu.Lock()
	h := &w.health[i]
	was := h.OK
	h.OK = err == nil
	h.Problem = ""
	if err != nil {
		h.Problem = err.Error()
	}
	if was != h.OK {
		h.Since = time.Now()
	}
	w.statsMu.Unlock()
	switch {
	case was && err != nil:
		w.log.Warn().Err(err).Str("folder", h.Path).Msg("watched folder cannot be read; looking again at every scan")
	case !was && err == nil:
		w.log.Info().Str("folder", h.Path).Msg("watched folder can be read again")
	}
}

// New validates cfg and returns a Watcher. A folder that does not exist or
// cannot be read yet (a share offline at boot) is a warning, and is looked
// for again at every scan (see Health); a folder path that is a file is an
// error naming it. seen may be nil (nothing
// is known).
func New(cfg Config, seen Seen) (*Watcher, error) {
	if len(cfg.Folders) == 0 {
		return nil, errors.New("watch: no folder configured")
	}
	if cfg.Settle < 0 || cfg.ScanInterval < 0 || cfg.OpenBackoff < 0 {
		return nil, fmt.Errorf("watch: negative duration in config (settle %v, scan interval %v, open backoff %v)",
			cfg.Settle, cfg.ScanInterval, cfg.OpenBackoff)
	}
	w := &Watcher{
		settle:    orDefault(cfg.Settle, DefaultSettle),
		scanEvery: orDefault(cfg.ScanInterval, DefaultScanInterval),
		backoff:   orDefault(cfg.OpenBackoff, DefaultOpenBackoff),
		retries:   cfg.OpenRetries,
		open:      cfg.Open,
		log:       cfg.Logger,
		seen:      seen,
		rescanCh:  make(chan struct{}, 1),
		done:      make(map[string]doneEntry),
	}
	switch {
	case w.retries == 0:
		w.retries = DefaultOpenRetries
	case w.retries < 0:
		w.retries = 0
	}
	if w.open == nil {
		w.open = func(p string) (io.Closer, error) { return os.Open(p) }
	}
	// Stat period while a file settles: a change is seen within it, so a
	// file is handed out at most this long after Settle has passed.
	w.poll = min(max(w.settle/4, time.Millisecond), maxPoll)
	for i, f := range cfg.Folders {
		if f.Path == "" {
			return nil, fmt.Errorf("watch: folder %d: empty path", i)
		}
		abs, err := filepath.Abs(f.Path)
		if err != nil {
			return nil, fmt.Errorf("watch: folder %q: %w", f.Path, err)
		}
		fi, err := os.Stat(abs)
		if err == nil && !fi.IsDir() {
			return nil, fmt.Errorf("watch: folder %q is not a directory", f.Path)
		}
		if err != nil {
			// A recorder share offline at boot: look again at every scan.
			cfg.Logger.Warn().Err(err).Str("folder", abs).
				Msg("watched folder cannot be read now; it is looked for again at every scan")
		}
		for j, g := range w.folders {
			if samePath(g.path, abs) {
				return nil, fmt.Errorf("watch: folder %q is configured twice (entries %d and %d)", f.Path, j, i)
			}
		}
		inc := f.Include
		if len(inc) == 0 {
			inc = DefaultInclude
		}
		lower := make([]string, 0, len(inc))
		for _, p := range inc {
			if strings.ContainsAny(p, `/\`) {
				return nil, fmt.Errorf("watch: folder %q: include pattern %q must match a file name, not a path", f.Path, p)
			}
			lp := strings.ToLower(p)
			if _, err := filepath.Match(lp, ""); err != nil {
				return nil, fmt.Errorf("watch: folder %q: include pattern %q: %w", f.Path, p, err)
			}
			lower = append(lower, lp)
		}
		w.folders = append(w.folders, folder{path: abs, recursive: f.Recursive, poll: f.Poll, include: lower})
		h := FolderHealth{Path: abs, OK: err == nil, Since: time.Now()}
		if err != nil {
			h.Problem = err.Error()
		}
		w.health = append(w.health, h)
	}
	return w, nil
}

func orDefault(d, def time.Duration) time.Duration {
	if d == 0 {
		return def
	}
	return d
}

// Rescan asks for a full scan as soon as possible. It does not block; scans
// asked for while one is pending are merged.
func (w *Watcher) Rescan() {
	select {
	case w.rescanCh <- struct{}{}:
	default:
	}
}

// Forget drops the watcher's memory that path was handed out (or known to
// Seen), so the next scan considers it again and asks Seen. A caller that
// could not record a handed-out file may use it to have the file handed
// out again. It is never needed to bound memory: that memory is dropped by
// itself when the file leaves the folder or changes. Safe for concurrent use.
func (w *Watcher) Forget(path string) {
	w.doneMu.Lock()
	delete(w.done, filepath.Clean(path))
	w.doneMu.Unlock()
}

// Stats returns a snapshot of the counters. Safe for concurrent use.
func (w *Watcher) Stats() Stats {
	w.statsMu.Lock()
	defer w.statsMu.Unlock()
	return w.stats
}

// count applies f to the stats under the lock.
func (w *Watcher) count(f func(s *Stats)) {
	w.statsMu.Lock()
	f(&w.stats)
	w.statsMu.Unlock()
}

// owner returns the index of the first configured folder that claims path:
// path lies in it (or below it when recursive, through no hidden folder),
// its base name is not hidden or temporary, and it matches the folder's
// include patterns.
func (w *Watcher) owner(path string) (int, bool) {
	name := filepath.Base(path)
	if skipName(name) {
		return 0, false
	}
	for i, f := range w.folders {
		rel, ok := within(f.path, path)
		if !ok {
			continue
		}
		dir := filepath.Dir(rel)
		if dir != "." {
			if !f.recursive || hiddenDirs(dir) {
				continue
			}
		}
		if matchAny(f.include, name) {
			return i, true
		}
	}
	return 0, false
}

// dirOwner returns the index of the first recursive, watched (not polled)
// folder that contains directory dir through no hidden folder.
func (w *Watcher) dirOwner(dir string) (int, bool) {
	for i, f := range w.folders {
		if !f.recursive || f.poll {
			continue
		}
		rel, ok := within(f.path, dir)
		if ok && !hiddenDirs(rel) {
			return i, true
		}
	}
	return 0, false
}

// within reports whether path lies strictly below root, and the relative
// path.
func within(root, path string) (string, bool) {
	rel, err := filepath.Rel(root, path)
	if err != nil || rel == "." || rel == ".." || strings.HasPrefix(rel, ".."+string(filepath.Separator)) || filepath.IsAbs(rel) {
		return "", false
	}
	return rel, true
}

// hiddenDirs reports whether any element of the relative path rel is a
// hidden or temporary name.
func hiddenDirs(rel string) bool {
	for _, part := range strings.Split(rel, string(filepath.Separator)) {
		if part != "." && skipName(part) {
			return true
		}
	}
	return false
}

// samePath compares two clean absolute paths the way the file system
// would (case-insensitively on Windows).
func samePath(a, b string) bool {
	rel, err := filepath.Rel(a, b)
	return err == nil && rel == "."
}

// errNoOutput is returned by Run when out is nil.
var errNoOutput = errors.New("watch: Run needs an output channel")
