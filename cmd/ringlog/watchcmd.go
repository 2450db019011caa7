package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"net"
	"os"
	"sync"
	"time"

	"github.com/kardianos/service"
	"github.com/rs/zerolog"

	"github.com/ringlog/ringlog/db"
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

	// Recorded, when set, is called after each file is stored.
	Recorded func(o outcome, rec db.Outcome, err error)

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
	log, closeLog, err := newLogger(m.Stderr, cfg.LogFile, cfg.LogLevel)
	if err != nil {
		return err
	}
	m.Log, m.closeLog = log, closeLog
	store, err := db.Open(ctx, cfg.Database)
	if err != nil {
		return err
	}
	m.store = store
	release, err := store.LockWriter()
	if err != nil {
		return err
	}
	m.release = release
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
	eng.recorded = func(o outcome, rec db.Outcome, err error) {
		if err != nil {
			// Not stored (database full, disk error): let the next scan
			// hand the file out again rather than lose it.
			m.watcher.Forget(o.path)
		}
		if m.live != nil {
			m.live.Notify()
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
	reports := make(chan struct{}) // the daily report writer (dailyreport.go)
	go func() { defer close(reports); scheduleDaily(wctx, cfg, m.store, m.Log) }()
	err := eng.run(ctx, jobs)
	<-watchDone
	stopWatch()
	<-reports
	liveDone()
	m.Log.Info().Msg("ringlog daemon stopped; work in hand finished")
	if werr != nil && !errors.Is(werr, context.Canceled) {
		return werr
	}
	return err
}

// Close releases the lock and closes the database and the log.
func (m *Main) Close() error {
	var errs []error
	if m.liveLn != nil {
		m.liveLn.Close()
		m.liveLn = nil
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
