package db

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"syscall"

	_ "modernc.org/sqlite" // registers the "sqlite" driver
)

// busyTimeoutMS is how long a connection waits for a lock another
// connection or process holds before it gives up with SQLITE_BUSY.
const busyTimeoutMS = 10000

// readPoolSize bounds the read connections.
const readPoolSize = 4

// ErrNotFound is returned when a hit, result or mode named by id does not exist.
var ErrNotFound = errors.New("not found")

// DB is an open ringlog history. It is safe for concurrent use: writes go
// through one connection, one immediate transaction at a time; queries use a
// small pool of read-only connections.
type DB struct {
	path    string  // the file, or the PostgreSQL URL (it never holds a password)
	w       *sql.DB // the one writer connection (PostgreSQL: the pool)
	r       *sql.DB // read pool (PostgreSQL: the same pool)
	dialect dialect // SQLite (the zero value) or PostgreSQL
	pg      *pgState
	spool   bool // results and final failures also go to the outbox (spool.go)
}

// Open opens the history at path, creating the file when it does not exist
// (its folder must exist), and applies the schema migrations it lacks. The
// file must be on a local disk: Open fails when SQLite cannot put it in WAL
// mode, as happens on many network shares.
//
// A target that is a postgres:// or postgresql:// URL opens the lab's
// central history on a PostgreSQL server instead (see OpenWith).
func Open(ctx context.Context, path string) (*DB, error) {
	return OpenWith(ctx, path, Options{})
}

// Options are the settings of OpenWith beyond the target.
type Options struct {
	// PasswordFile, for PostgreSQL, is a file whose first line is the
	// password; it must not be readable by group or others. Without it the
	// password comes from the standard PostgreSQL environment (PGPASSWORD,
	// PGPASSFILE or ~/.pgpass).
	PasswordFile string
	// AppName is the application_name the server shows for the
	// connections; default "ringlog".
	AppName string

	// Spool opens a local SQLite history as a bay's spool: every result
	// and final failure it records is also queued in its outbox for
	// forwarding to the central history (package db/forward).
	Spool bool

	readOnly bool // OpenReadOnly
}

// OpenWith opens the history at target: an SQLite file (as Open), or a
// PostgreSQL server given as a postgres:// URL, whose query part passes
// TLS and other settings through (sslmode, sslrootcert, sslcert, sslkey,
// connect_timeout, search_path, ...). The URL must not carry a password.
// The schema and its migrations are the same on both.
func OpenWith(ctx context.Context, target string, o Options) (*DB, error) {
	if IsPostgres(target) {
		if o.Spool {
			return nil, fmt.Errorf("database %s: a spool is a local SQLite file, not a PostgreSQL server", target)
		}
		return openPostgres(ctx, target, o, migrationFS)
	}
	d, err := openWith(ctx, target, migrationFS)
	if err != nil || !o.Spool {
		return d, err
	}
	if err := d.openSpool(ctx); err != nil {
		d.Close()
		return nil, err
	}
	return d, nil
}

func openWith(ctx context.Context, path string, migrations fs.FS) (*DB, error) {
	if path == "" {
		return nil, errors.New("database: no path given")
	}
	abs, err := filepath.Abs(path)
	if err != nil {
		return nil, fmt.Errorf("database %s: %w", path, err)
	}
	if err := checkCreatable(abs); err != nil {
		return nil, err
	}

	w, err := sql.Open("sqlite", dsn(abs, false))
	if err != nil {
		return nil, fmt.Errorf("database %s: %w", abs, err)
	}
	w.SetMaxOpenConns(1)
	w.SetMaxIdleConns(1)
	w.SetConnMaxLifetime(0)
	w.SetConnMaxIdleTime(0)
	d := &DB{path: abs, w: w}
	fail := func(err error) (*DB, error) {
		d.w.Close()
		if d.r != nil {
			d.r.Close()
		}
		return nil, err
	}
	if err := w.PingContext(ctx); err != nil {
		return fail(fmt.Errorf("database %s: cannot open: %w", abs, describe(err)))
	}
	var mode string
	if err := w.QueryRowContext(ctx, "PRAGMA journal_mode").Scan(&mode); err != nil {
		return fail(fmt.Errorf("database %s: %w", abs, describe(err)))
	}
	if !strings.EqualFold(mode, "wal") {
		return fail(fmt.Errorf("database %s: SQLite could not switch it to WAL mode (journal mode is %q); "+
			"the database must be on a local disk, not a network share", abs, mode))
	}
	if err := migrate(ctx, w, migrations, sqliteDialect); err != nil {
		return fail(fmt.Errorf("database %s: %w", abs, err))
	}

	r, err := sql.Open("sqlite", dsn(abs, true))
	if err != nil {
		return fail(fmt.Errorf("database %s: %w", abs, err))
	}
	r.SetMaxOpenConns(readPoolSize)
	r.SetMaxIdleConns(readPoolSize)
	d.r = r
	if err := r.PingContext(ctx); err != nil {
		return fail(fmt.Errorf("database %s: cannot open for reading: %w", abs, err))
	}
	return d, nil
}

// ErrReadOnly is returned by a write on a history opened with OpenReadOnly.
var ErrReadOnly = errors.New("the history was opened read-only")

// OpenReadOnly opens an existing history for queries only: it never
// creates the file, never migrates it and never writes to it, so it works
// on a read-only copy and beside a running daemon. A missing file, a file
// that is not a ringlog history (an empty file included) and a history
// whose schema differs from this build's are errors that say what to do.
//
// A PostgreSQL URL opens the lab's history with read-only sessions.
func OpenReadOnly(ctx context.Context, path string) (*DB, error) {
	if IsPostgres(path) {
		return openPostgres(ctx, path, Options{readOnly: true}, migrationFS)
	}
	if path == "" {
		return nil, errors.New("database: no path given")
	}
	abs, err := filepath.Abs(path)
	if err != nil {
		return nil, fmt.Errorf("database %s: %w", path, err)
	}
	fi, err := os.Stat(abs)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return nil, fmt.Errorf("database %s does not exist (run 'ringlog ingest' or 'ringlog watch' first): %w", abs, fs.ErrNotExist)
	case err != nil:
		return nil, fmt.Errorf("database %s: cannot open: %w", abs, unwrapPath(err))
	case fi.IsDir():
		return nil, fmt.Errorf("database %s: cannot open: it is a folder, not a file", abs)
	case !fi.Mode().IsRegular():
		return nil, fmt.Errorf("database %s: cannot open: it is not a regular file (%s)", abs, fi.Mode().Type())
	case fi.Size() == 0:
		return nil, fmt.Errorf("database %s: empty file, not a ringlog history (run 'ringlog ingest' or 'ringlog watch' to make one)", abs)
	}
	open := func(immutable bool) (*sql.DB, int, error) {
		r, err := sql.Open("sqlite", dsnReadOnly(abs, immutable))
		if err != nil {
			return nil, 0, err
		}
		r.SetMaxOpenConns(readPoolSize)
		r.SetMaxIdleConns(readPoolSize)
		var v int
		if err := r.QueryRowContext(ctx, "PRAGMA user_version").Scan(&v); err != nil {
			r.Close()
			return nil, 0, err
		}
		return r, v, nil
	}
	r, have, err := open(false)
	if err != nil && !errors.Is(ctx.Err(), context.Canceled) && strings.Contains(err.Error(), "unable to open") {
		// A WAL history on read-only media without its -shm file: SQLite
		// can read it only as immutable (nobody can be writing it there).
		r, have, err = open(true)
	}
	if err != nil {
		return nil, fmt.Errorf("database %s: cannot open for reading: %w", abs, describe(err))
	}
	latest := SchemaVersion()
	switch {
	case have == 0:
		r.Close()
		return nil, fmt.Errorf("database %s: not a ringlog history (no schema); run 'ringlog ingest' or 'ringlog watch' to make one", abs)
	case have > latest:
		r.Close()
		return nil, fmt.Errorf("database %s: schema version %d is newer than this ringlog knows (%d): use a newer ringlog", abs, have, latest)
	case have < latest:
		r.Close()
		return nil, fmt.Errorf("database %s: schema version %d is older than this ringlog's (%d); a read-only command does not upgrade it: "+
			"run 'ringlog watch' or 'ringlog ingest' on it once (a writable copy of it if this one is read-only)", abs, have, latest)
	}
	return &DB{path: abs, r: r}, nil
}

// dsnReadOnly is the data source name of a read-only connection: no
// create, no journal-mode change, queries only.
func dsnReadOnly(abs string, immutable bool) string {
	s := dsn(abs, true) + "&mode=ro"
	if immutable {
		s += "&immutable=1"
	}
	return s
}

// dsn builds the modernc.org/sqlite data source name for the writer or the
// readers. The path is given as a file: URI so that any character in it
// survives.
func dsn(abs string, readOnly bool) string {
	var b strings.Builder
	b.WriteString("file:")
	p := filepath.ToSlash(abs)
	if runtime.GOOS == "windows" && !strings.HasPrefix(p, "/") {
		// file:///C:/dir/db.sqlite
		b.WriteString("///")
	} else if strings.HasPrefix(p, "//") {
		// UNC path //server/share/...: an empty authority keeps it whole
		b.WriteString("//")
	}
	b.WriteString(uriEscape(p))
	b.WriteString(fmt.Sprintf("?_pragma=busy_timeout(%d)&_pragma=foreign_keys(1)", busyTimeoutMS))
	if readOnly {
		b.WriteString("&_pragma=query_only(1)")
	} else {
		b.WriteString("&_pragma=journal_mode(WAL)&_pragma=synchronous(FULL)&_txlock=immediate")
	}
	return b.String()
}

// uriEscape percent-encodes the bytes an SQLite URI path cannot carry as is.
func uriEscape(p string) string {
	const hex = "0123456789ABCDEF"
	var b strings.Builder
	for i := 0; i < len(p); i++ {
		c := p[i]
		switch {
		case c == '%' || c == '?' || c == '#' || c == '&' || c == '=' || c <= ' ' || c >= 0x7f:
			b.WriteByte('%')
			b.WriteByte(hex[c>>4])
			b.WriteByte(hex[c&15])
		default:
			b.WriteByte(c)
		}
	}
	return b.String()
}

// checkCreatable makes sure the database file exists or can be created, and
// turns the usual failures into messages that name the path and the problem.
func checkCreatable(abs string) error {
	dir := filepath.Dir(abs)
	st, err := os.Stat(dir)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return fmt.Errorf("database %s: cannot create: folder %s does not exist: %w", abs, dir, fs.ErrNotExist)
	case err != nil && errors.Is(err, syscall.ENOTDIR):
		return fmt.Errorf("database %s: cannot create: a part of %s is a file, not a folder: %w", abs, dir, syscall.ENOTDIR)
	case err != nil:
		return fmt.Errorf("database %s: cannot create: %w", abs, unwrapPath(err))
	case !st.IsDir():
		return fmt.Errorf("database %s: cannot create: %s is a file, not a folder: %w", abs, dir, syscall.ENOTDIR)
	}
	verb := "cannot open"
	if fi, err := os.Stat(abs); errors.Is(err, fs.ErrNotExist) {
		verb = "cannot create"
	} else if err == nil && fi.IsDir() {
		return fmt.Errorf("database %s: cannot open: it is a folder, not a file", abs)
	}
	f, err := os.OpenFile(abs, os.O_RDWR|os.O_CREATE, 0o644)
	if err != nil {
		return fmt.Errorf("database %s: %s: %w", abs, verb, unwrapPath(err))
	}
	if err := f.Close(); err != nil {
		return fmt.Errorf("database %s: %s: %w", abs, verb, unwrapPath(err))
	}
	return nil
}

// unwrapPath drops the *fs.PathError wrapper, whose text repeats the path.
func unwrapPath(err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

// describe adds a hint to SQLite errors whose text alone does not help.
func describe(err error) error {
	msg := err.Error()
	switch {
	case strings.Contains(msg, "file is not a database"), strings.Contains(msg, "SQLITE_NOTADB"):
		return fmt.Errorf("not an SQLite database (or it is encrypted or damaged): %w", err)
	case strings.Contains(msg, "disk I/O error"), strings.Contains(msg, "SQLITE_IOERR"):
		return fmt.Errorf("%w (is the database on a network share? it must be on a local disk)", err)
	}
	return err
}

// Path returns the absolute path of the database file, or the URL of the
// PostgreSQL history.
func (db *DB) Path() string { return db.path }

// Postgres reports whether the history is on a PostgreSQL server.
func (db *DB) Postgres() bool { return db.dialect == postgresDialect }

// Close closes the read pool and the writer. SQLite checkpoints the WAL
// into the database file when the last connection closes.
func (db *DB) Close() error {
	if db.dialect == postgresDialect {
		return db.closePostgres()
	}
	var errs []error
	if db.r != nil {
		errs = append(errs, db.r.Close())
	}
	if db.w != nil {
		// Let SQLite refresh its query-planner statistics; harmless when
		// there is nothing to do.
		_, _ = db.w.Exec("PRAGMA optimize")
		errs = append(errs, db.w.Close())
	}
	if err := errors.Join(errs...); err != nil {
		return fmt.Errorf("database %s: close: %w", db.path, err)
	}
	return nil
}

// IntegrityCheck runs PRAGMA integrity_check and returns its output, "ok"
// for a sound database, otherwise one problem per line.
// PostgreSQL checks its own pages; there the answer is "ok" once the
// server answers.
func (db *DB) IntegrityCheck(ctx context.Context) (string, error) {
	if db.dialect == postgresDialect {
		if err := db.r.PingContext(ctx); err != nil {
			return "", fmt.Errorf("database %s: integrity check: %w", db.path, err)
		}
		return "ok", nil
	}
	rows, err := db.r.QueryContext(ctx, "PRAGMA integrity_check")
	if err != nil {
		return "", fmt.Errorf("database %s: integrity check: %w", db.path, err)
	}
	defer rows.Close()
	var lines []string
	for rows.Next() {
		var s string
		if err := rows.Scan(&s); err != nil {
			return "", fmt.Errorf("database %s: integrity check: %w", db.path, err)
		}
		lines = append(lines, s)
	}
	if err := rows.Err(); err != nil {
		return "", fmt.Errorf("database %s: integrity check: %w", db.path, err)
	}
	return strings.Join(lines, "\n"), nil
}

// write runs fn in one immediate transaction on the writer connection.
func (db *DB) write(ctx context.Context, what string, fn func(tx *sql.Tx) error) error {
	if db.w == nil {
		return fmt.Errorf("database %s: %s: %w", db.path, what, ErrReadOnly)
	}
	tx, err := db.w.BeginTx(ctx, nil)
	if err != nil {
		return fmt.Errorf("database %s: %s: begin: %w", db.path, what, describe(err))
	}
	if err := fn(tx); err != nil {
		_ = tx.Rollback()
		return fmt.Errorf("database %s: %s: %w", db.path, what, err)
	}
	if err := tx.Commit(); err != nil {
		return fmt.Errorf("database %s: %s: commit: %w", db.path, what, describe(err))
	}
	return nil
}

// read runs fn in one read transaction (one consistent snapshot) on the
// read pool.
func (db *DB) read(ctx context.Context, what string, fn func(tx *sql.Tx) error) error {
	opt := &sql.TxOptions{ReadOnly: true}
	if db.dialect == postgresDialect {
		opt.Isolation = sql.LevelRepeatableRead // one snapshot for all the statements, as in SQLite
	}
	tx, err := db.r.BeginTx(ctx, opt)
	if err != nil {
		return fmt.Errorf("database %s: %s: %w", db.path, what, describe(err))
	}
	defer tx.Rollback()
	if err := fn(tx); err != nil {
		return fmt.Errorf("database %s: %s: %w", db.path, what, err)
	}
	return nil
}
