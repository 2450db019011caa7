package db

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"strconv"
	"strings"
	"sync"
	"time"
)

// ErrLocked is returned (wrapped in a *LockedError) when another process
// holds the writer lock of the database.
var ErrLocked = errors.New("database locked")

// errWouldBlock is what the platform try-lock returns when the lock is held.
var errWouldBlock = errors.New("lock is held")

// LockedError tells who holds the writer lock.
type LockedError struct {
	Path     string    // the database
	LockFile string    // the side file holding the lock
	PID      int       // the holder's process id; 0 when it could not be read
	Since    time.Time // when the holder took the lock; zero when unknown
	// Bay and Host are set for the bay lock of a PostgreSQL history.
	Bay, Host string
}

func (e *LockedError) Error() string {
	who := "another process (pid unknown)"
	if e.PID > 0 {
		who = "process " + strconv.Itoa(e.PID)
	}
	if e.Host != "" {
		who += " on " + e.Host
	}
	if e.Bay != "" {
		since := ""
		if !e.Since.IsZero() {
			since = " since " + e.Since.Format("2006-01-02 15:04:05 MST")
		}
		return fmt.Sprintf("%v: bay %q of %s is recorded by %s%s; stop that ringlog daemon first, "+
			"or give this one another bay name", ErrLocked, e.Bay, e.Path, who, since)
	}
	since := ""
	if !e.Since.IsZero() {
		since = " since " + e.Since.Format("2006-01-02 15:04:05 MST")
	}
	return fmt.Sprintf("%v: %s is in use by %s%s (lock file %s); stop that ringlog daemon first, "+
		"or give this one another database", ErrLocked, e.Path, who, since, e.LockFile)
}

// Unwrap makes errors.Is(err, ErrLocked) true.
func (e *LockedError) Unwrap() error { return ErrLocked }

// LockFile returns the side file that LockWriter locks for the database at path.
func LockFile(path string) string { return path + ".lock" }

// LockWriter takes the single-daemon lock of the database: an operating
// system lock (flock on Unix, LockFileEx on Windows) on the side file
// PATH.lock, which records the holder's pid and the time it took the lock.
// The operating system drops the lock when the process ends in any way,
// SIGKILL included, so a crash never leaves a stale lock. A second caller,
// in this process or another, gets a *LockedError wrapping ErrLocked.
// release drops the lock; calling it more than once is harmless.
func (db *DB) LockWriter() (release func() error, err error) {
	if db.dialect == postgresDialect {
		return nil, fmt.Errorf("database %s: a PostgreSQL history is locked per bay (LockBay), not per file", db.path)
	}
	return lockWriter(db.path)
}

func lockWriter(path string) (func() error, error) {
	lf := LockFile(path)
	f, err := os.OpenFile(lf, os.O_RDWR|os.O_CREATE, 0o644)
	if err != nil {
		return nil, fmt.Errorf("database %s: lock file %s: %w", path, lf, unwrapPath(err))
	}
	if err := tryLock(f); err != nil {
		defer f.Close()
		if errors.Is(err, errWouldBlock) {
			pid, since := readHolder(f)
			return nil, &LockedError{Path: path, LockFile: lf, PID: pid, Since: since}
		}
		return nil, fmt.Errorf("database %s: locking %s: %w", path, lf, err)
	}
	info := fmt.Sprintf("pid %d\nsince %s\n", os.Getpid(), time.Now().Format(time.RFC3339Nano))
	if err := writeHolder(f, info); err != nil {
		_ = unlock(f)
		f.Close()
		return nil, fmt.Errorf("database %s: writing lock file %s: %w", path, lf, err)
	}
	release := sync.OnceValue(func() error {
		// Clear the holder before unlocking, so nobody reads a stale pid.
		terr := f.Truncate(0)
		uerr := unlock(f)
		cerr := f.Close()
		if err := errors.Join(terr, uerr, cerr); err != nil {
			return fmt.Errorf("database %s: releasing lock %s: %w", path, lf, err)
		}
		return nil
	})
	return release, nil
}

func writeHolder(f *os.File, info string) error {
	if err := f.Truncate(0); err != nil {
		return err
	}
	if _, err := f.WriteAt([]byte(info), 0); err != nil {
		return err
	}
	return f.Sync()
}

// readHolder parses the "pid N" and "since TIME" lines of a lock file.
func readHolder(f *os.File) (pid int, since time.Time) {
	sc := bufio.NewScanner(io.NewSectionReader(f, 0, 4096))
	for sc.Scan() {
		k, v, _ := strings.Cut(strings.TrimSpace(sc.Text()), " ")
		switch k {
		case "pid":
			pid, _ = strconv.Atoi(v)
		case "since":
			since, _ = time.Parse(time.RFC3339Nano, v)
		}
	}
	return pid, since
}

// HolderInfo tells whether a daemon holds the writer lock of the database
// at path, and if so its pid and since when, for a status command. It
// tries the lock and releases it at once; it creates no file.
func HolderInfo(path string) (held bool, pid int, since time.Time, err error) {
	lf := LockFile(path)
	f, err := os.Open(lf)
	if errors.Is(err, fs.ErrNotExist) {
		return false, 0, time.Time{}, nil
	}
	if err != nil {
		return false, 0, time.Time{}, fmt.Errorf("database %s: lock file %s: %w", path, lf, unwrapPath(err))
	}
	defer f.Close()
	switch err := tryLock(f); {
	case err == nil:
		if err := unlock(f); err != nil {
			return false, 0, time.Time{}, fmt.Errorf("database %s: unlocking %s: %w", path, lf, err)
		}
		return false, 0, time.Time{}, nil
	case errors.Is(err, errWouldBlock):
		pid, since := readHolder(f)
		return true, pid, since, nil
	default:
		return false, 0, time.Time{}, fmt.Errorf("database %s: probing lock %s: %w", path, lf, err)
	}
}
