package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"net"
	"os"
	"path/filepath"
	"runtime/debug"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"github.com/kardianos/service"
	"github.com/rs/zerolog"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/db/forward"
	"github.com/ringlog/ringlog/report/live"
	"github.com/ringlog/ringlog/watch"
)

func init() {
	register(command{name: "watch", summary: "run the daemon in the foreground: watch export folders, analyse and record every new hit", run: runWatch})
}

func runWatch(ctx context.Context, e *env, args []string) error {
	fs := newFlags("watch", "--config FILE", e.stderr)
	cfgPath := fs.String("config", "", "TOML configuration file (required)")
	rest, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return usagef("unexpected argument %q", rest[0])
	}
	if *cfgPath == "" {
		return usagef("--config FILE is required")
	}
	cfg, err := loadConfig(*cfgPath)
	if err != nil {
		return err
	}
	m := &Main{Config: cfg, Stderr: e.stderr}
	if err := m.Open(ctx); err != nil {
		if ctx.Err() != nil {
			// a stop asked for while starting (waiting for the database or
			// its lock) is a stop, not a failure
			fmt.Fprintf(e.stderr, "ringlog watch: stopped while starting (%v); nothing was recorded\n", err)
			return nil
		}
		return err
	}
	defer m.Close()
	if !service.Interactive() {
		return runAsService(m)
	}
	return m.Run(ctx)
}

// Main is the daemon: open it, run it until the context ends, close it.
// Tests start it in-process.
type Main struct {
	Config *Config
	Stderr io.Writer

	Log      zerolog.Logger
	store    *db.DB
	release  func() error
	closeLog func() error
	watcher  *watch.Watcher
	started  chan struct{}
	once     sync.Once
	dbFile   os.FileInfo // the database file opened, to notice it deleted or replaced

	dbMu   sync.Mutex
	dbLost error // set once the database file is found deleted or replaced

	// Recorded, when set, is called after each file is stored.
	Recorded func(o outcome, rec db.Outcome, err error)

	fwd *forward.Forwarder // forwards the spool to a PostgreSQL history (lab.go); nil for SQLite

	live    *live.Server // the [live] page (live.go); nil without one
	liveLn  net.Listener
	liveURL string
}

// Open sets up logging, opens the database, takes the single-writer lock
// and checks the folders. It fails with a clear message when another
// daemon holds the database.
func (m *Main) Open(ctx context.Context) (err error) {
	defer func() {
		if err != nil {
			m.Close()
		}
	}()
	cfg := m.Config
	if cfg.Database == "" {
		return fmt.Errorf("config %s: database is not set", cfg.path)
	}
	if len(cfg.Folders) == 0 {
		return fmt.Errorf("config %s: no [[folder]] to watch", cfg.path)
	}
	if err := dbOutsideFolders(cfg); err != nil {
		return err
	}
	log, closeLog, err := newLogger(m.Stderr, cfg.LogFile, cfg.LogLevel)
	if err != nil {
		return err
	}
	m.Log, m.closeLog = log, closeLog
	store, release, fwd, err := openDaemonStore(ctx, cfg, log)
	if err != nil {
		return err
	}
	m.store, m.release, m.fwd = store, release, fwd
	if m.dbFile, err = os.Stat(store.Path()); err != nil {
		return fmt.Errorf("database %s: %w", store.Path(), err)
	}
	if err := m.openLive(); err != nil {
		return err
	}
	if err := m.dropVanished(ctx); err != nil {
		return err
	}
	wc := watch.Config{Settle: cfg.Settle.Duration, ScanInterval: cfg.ScanInterval.Duration, Logger: log,
		OpenRetries: cfg.OpenRetries, OpenBackoff: cfg.OpenBackoff.Duration}
	for _, f := range cfg.Folders {
		wc.Folders = append(wc.Folders, watch.Folder{Path: f.Path, Recursive: f.Recursive, Include: f.Include, Poll: f.Poll})
	}
	w, err := watch.New(wc, seenFunc(func(path string, size int64, mtime time.Time) bool {
		ok, err := store.Known(context.Background(), path, size, mtime)
		return err == nil && ok
	}))
	if err != nil {
		return err
	}
	m.watcher = w
	m.started = make(chan struct{})
	return nil
}

// dropVanished clears pending rows of files deleted while no daemon ran
// (the queue must not show them for ever). Files still there are found
// again by the first scan.
func (m *Main) dropVanished(ctx context.Context) error {
	pending, err := m.store.PendingFiles(ctx)
	if err != nil {
		return err
	}
	for _, p := range pending {
		if _, err := os.Stat(p.Path); errors.Is(err, fs.ErrNotExist) {
			if err := m.store.Vanished(ctx, p.Path); err != nil {
				return err
			}
		}
	}
	return nil
}

// seenFunc adapts a function to watch.Seen.
type seenFunc func(path string, size int64, mtime time.Time) bool

func (f seenFunc) Known(path string, size int64, mtime time.Time) bool { return f(path, size, mtime) }

// Started is closed once the daemon watches its folders.
func (m *Main) Started() <-chan struct{} { return m.started }

// Run watches until ctx ends, then finishes the files in hand and
// returns nil.
func (m *Main) Run(ctx context.Context) error {
	cfg := m.Config
	eng := newEngine(cfg, m.store, m.Log)
	eng.guard = m.checkDatabase
	var lastWork atomic.Int64 // unix nanoseconds of the last file stored
	eng.recorded = func(o outcome, rec db.Outcome, err error) {
		lastWork.Store(time.Now().UnixNano())
		if err != nil {
			// Not stored (database full, disk error): let the next scan
			// hand the file out again rather than lose it.
			m.watcher.Forget(o.path)
		}
		if m.live != nil {
			m.live.Notify()
		}
		if m.fwd != nil {
			m.fwd.Kick()
		}
		if m.Recorded != nil {
			m.Recorded(o, rec, err)
		}
	}
	ready := make(chan watch.Ready, eng.workers)
	jobs := make(chan job, eng.workers)
	wctx, stopWatch := context.WithCancel(ctx)
	defer stopWatch()
	var werr error
	watchDone := make(chan struct{})
	go func() {
		defer close(watchDone)
		werr = m.watcher.Run(wctx, ready)
		close(ready)
	}()
	go func() {
		defer close(jobs)
		for r := range ready {
			j := job{path: r.Path, folder: &cfg.Folders[r.Folder], openErr: r.Err}
			if err := m.store.MarkPending(context.WithoutCancel(ctx), db.FileInfo{Path: r.Path, Size: r.Size, MTime: r.MTime}); err != nil {
				m.Log.Warn().Err(err).Str("file", r.Path).Msg("could not mark file pending")
			}
			jobs <- j
		}
	}()
	m.Log.Info().Str("database", cfg.Database).Int("folders", len(cfg.Folders)).Int("workers", eng.workers).
		Dur("settle", cfg.Settle.Duration).Msg("ringlog daemon started")
	m.once.Do(func() { close(m.started) })
	liveDone := m.serveLive(wctx)
	fwdDone := m.runForwarder(ctx)
	reports := make(chan struct{}) // the daily report writer (dailyreport.go)
	go func() { defer close(reports); scheduleDaily(wctx, cfg, m.store, m.Log) }()
	idleDone := make(chan struct{})
	go func() {
		defer close(idleDone)
		releaseWhenIdle(wctx, lastWork.Load, idleRelease, func() {
			debug.FreeOSMemory()
			m.Log.Debug().Msg("idle: memory returned to the operating system")
		})
	}()
	guardDone := make(chan struct{})
	go func() { defer close(guardDone); m.guardDatabase(wctx, stopWatch) }()
	_ = eng.run(ctx, jobs)
	<-watchDone
	stopWatch()
	<-reports
	liveDone()
	fwdDone()
	<-guardDone
	<-idleDone
	if lost := m.databaseLost(); lost != nil {
		m.Log.Error().Err(lost).Msg("ringlog daemon stopped: its database is gone")
		return lost
	}
	m.Log.Info().Msg("ringlog daemon stopped; work in hand finished")
	if werr != nil && !errors.Is(werr, context.Canceled) {
		return werr
	}
	// The exit status says how things stand at the exit: a storage error
	// that has since cleared (later files were stored) is no failure.
	return eng.lastErr
}

// idleRelease is how long the daemon waits after the last file of a burst
// before it gives the memory the burst used back to the operating system
// (the Go runtime alone returns it only slowly, over minutes).
const idleRelease = 20 * time.Second

// releaseWhenIdle calls release once after each burst of work: when
// lastWork (unix nanoseconds, 0 before any work) is at least idle ago and
// release has not run since that work. It returns when ctx ends.
func releaseWhenIdle(ctx context.Context, lastWork func() int64, idle time.Duration, release func()) {
	t := time.NewTicker(max(idle/4, time.Millisecond))
	defer t.Stop()
	var released int64
	for {
		select {
		case <-ctx.Done():
			return
		case now := <-t.C:
			w := lastWork()
			if w != 0 && w != released && now.UnixNano()-w >= int64(idle) {
				release()
				released = w
			}
		}
	}
}

// databaseCheckEvery is how often the daemon looks whether its database
// file is still the one it opened.
const databaseCheckEvery = time.Second

// guardDatabase checks the database file every databaseCheckEvery until
// ctx ends; when it is gone or replaced it stops the daemon via stop.
func (m *Main) guardDatabase(ctx context.Context, stop func()) {
	t := time.NewTicker(databaseCheckEvery)
	defer t.Stop()
	for {
		select {
		case <-ctx.Done():
			return
		case <-t.C:
			if err := m.checkDatabase(); err != nil {
				m.Log.Error().Err(err).Msg("stopping")
				stop()
				return
			}
		}
	}
}

// checkDatabase returns an error once the database file at the configured
// path is no longer the file the daemon opened (deleted, or replaced by
// another file): what would be written from then on would be lost. The
// error stays set.
func (m *Main) checkDatabase() error {
	if err := m.databaseLost(); err != nil {
		return err
	}
	path := m.store.Path()
	fi, err := os.Stat(path)
	var lost error
	switch {
	case errors.Is(err, fs.ErrNotExist):
		lost = fmt.Errorf("database %s was deleted while the daemon ran; nothing more is written into the deleted file "+
			"(a restart, by hand or by the service manager, opens a new one)", path)
	case err != nil:
		return nil // cannot tell now (a passing I/O error); the next look decides
	case !os.SameFile(fi, m.dbFile):
		lost = fmt.Errorf("database %s was replaced by another file while the daemon ran; nothing more is written "+
			"(a restart, by hand or by the service manager, opens the file now there)", path)
	default:
		return nil
	}
	m.dbMu.Lock()
	if m.dbLost == nil {
		m.dbLost = lost
	}
	lost = m.dbLost
	m.dbMu.Unlock()
	return lost
}

func (m *Main) databaseLost() error {
	m.dbMu.Lock()
	defer m.dbMu.Unlock()
	return m.dbLost
}

// dbOutsideFolders refuses a database (or its -wal and -shm files) inside
// a watched folder: the daemon would read its own files for ever.
func dbOutsideFolders(cfg *Config) error {
	local := cfg.Database
	if db.IsPostgres(local) {
		local = cfg.Spool // a lab bay's local file is its spool (lab.go)
	}
	dbAbs, err := filepath.Abs(local)
	if err != nil {
		return fmt.Errorf("config %s: database %s: %w", cfg.path, local, err)
	}
	dbDir := resolved(filepath.Dir(dbAbs))
	for _, f := range cfg.Folders {
		fAbs, err := filepath.Abs(f.Path)
		if err != nil {
			continue
		}
		fAbs = resolved(fAbs)
		rel, err := filepath.Rel(fAbs, dbDir)
		if err != nil || rel == ".." || strings.HasPrefix(rel, ".."+string(filepath.Separator)) || filepath.IsAbs(rel) {
			continue
		}
		if rel == "." || f.Recursive {
			return fmt.Errorf("config %s: the database %s is inside the watched folder %s; "+
				"put it outside every watched folder (the daemon would read its own files)", cfg.path, dbAbs, f.Path)
		}
	}
	return nil
}

// resolved is p with symbolic links resolved where possible (a folder
// reached through a link is the same folder).
func resolved(p string) string {
	if r, err := filepath.EvalSymlinks(p); err == nil {
		return r
	}
	return p
}

// Close releases the lock and closes the database and the log.
func (m *Main) Close() error {
	var errs []error
	if m.liveLn != nil {
		m.liveLn.Close()
		m.liveLn = nil
	}
	if m.fwd != nil {
		errs = append(errs, m.fwd.Close())
		m.fwd = nil
	}
	if m.release != nil {
		errs = append(errs, m.release())
		m.release = nil
	}
	if m.store != nil {
		errs = append(errs, m.store.Close())
		m.store = nil
	}
	if m.closeLog != nil {
		errs = append(errs, m.closeLog())
		m.closeLog = nil
	}
	return errors.Join(errs...)
}
