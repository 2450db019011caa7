package db

import (
	"bufio"
	"context"
	"database/sql"
	"errors"
	"fmt"
	"hash/fnv"
	"io/fs"
	"net/url"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"sync"
	"time"

	"github.com/jackc/pgx/v5"
)

// pgPoolSize bounds the connections one process opens to the server.
const pgPoolSize = 8

// pgConnectTimeout is used when the URL gives no connect_timeout: a
// server that is away must not hang a bay.
const pgConnectTimeout = 10 * time.Second

// pgState is what a PostgreSQL DB keeps besides its pool.
type pgState struct {
	cfg *pgx.ConnConfig // for the dedicated lock connections
	mu  sync.Mutex
	bay map[*BayLock]bool
}

// openPostgres connects to the server at target, checks that the password
// does not travel in the URL, and applies the migrations the history lacks.
func openPostgres(ctx context.Context, target string, o Options, migrations fs.FS) (*DB, error) {
	target, pwFile := takePasswordFileParam(target)
	if o.PasswordFile == "" {
		o.PasswordFile = pwFile
	}
	shown, err := checkURL(target)
	if err != nil {
		return nil, err
	}
	cfg, err := pgx.ParseConfig(target)
	if err != nil {
		return nil, fmt.Errorf("database %s: %w", shown, err)
	}
	if o.PasswordFile != "" {
		pw, err := ReadPasswordFile(o.PasswordFile)
		if err != nil {
			return nil, fmt.Errorf("database %s: %w", shown, err)
		}
		cfg.Password = pw
	} else if err := checkPassfile(cfg); err != nil {
		return nil, fmt.Errorf("database %s: %w", shown, err)
	}
	if cfg.ConnectTimeout == 0 {
		cfg.ConnectTimeout = pgConnectTimeout
	}
	app := o.AppName
	if app == "" {
		app = "ringlog"
	}
	if cfg.RuntimeParams == nil {
		cfg.RuntimeParams = map[string]string{}
	}
	if _, ok := cfg.RuntimeParams["application_name"]; !ok {
		cfg.RuntimeParams["application_name"] = app
	}
	if o.readOnly {
		cfg.RuntimeParams["default_transaction_read_only"] = "on"
	}
	pool := sql.OpenDB(newPGConnector(cfg))
	pool.SetMaxOpenConns(pgPoolSize)
	pool.SetMaxIdleConns(pgPoolSize / 2)
	pool.SetConnMaxIdleTime(5 * time.Minute)
	d := &DB{path: shown, w: pool, r: pool, dialect: postgresDialect, pg: &pgState{cfg: cfg, bay: map[*BayLock]bool{}}}
	if err := pool.PingContext(ctx); err != nil {
		pool.Close()
		return nil, fmt.Errorf("database %s: cannot connect: %w", shown, err)
	}
	if o.readOnly {
		// Queries only: no migration, and the schema must be this build's.
		d.w = nil
		var have int
		err := d.read(ctx, "schema version", func(tx *sql.Tx) error {
			var err error
			have, err = postgresDialect.schemaVersion(ctx, tx)
			return err
		})
		latest := SchemaVersion()
		switch {
		case err != nil:
			pool.Close()
			return nil, err
		case have == 0:
			pool.Close()
			return nil, fmt.Errorf("database %s: not a ringlog history (no schema); run 'ringlog ingest' or 'ringlog watch' to make one", shown)
		case have != latest:
			pool.Close()
			return nil, fmt.Errorf("database %s: schema version %d, this ringlog's is %d; a read-only command does not migrate it: "+
				"use the ringlog of the same version, or run 'ringlog watch' or 'ringlog ingest' on it once", shown, have, latest)
		}
		return d, nil
	}
	if err := migrate(ctx, pool, migrations, postgresDialect); err != nil {
		pool.Close()
		return nil, fmt.Errorf("database %s: %w", shown, err)
	}
	return d, nil
}

// takePasswordFileParam takes ringlog's own URL parameter password_file
// out of the URL (the server would refuse it as an unknown setting), so
// that a password file can travel with the URL through every command.
func takePasswordFileParam(target string) (string, string) {
	u, err := url.Parse(strings.TrimSpace(target))
	if err != nil {
		return target, ""
	}
	q := u.Query()
	pf := q.Get("password_file")
	if pf == "" {
		return target, ""
	}
	q.Del("password_file")
	u.RawQuery = q.Encode()
	return u.String(), pf
}

// checkURL refuses a URL that carries a password (a config file or a
// command line is read by too many) and returns the URL to show in
// messages.
func checkURL(target string) (string, error) {
	u, err := url.Parse(strings.TrimSpace(target))
	if err != nil {
		return "", fmt.Errorf("database URL: %v", redactErr(err, target))
	}
	if _, has := u.User.Password(); has {
		u.User = url.User(u.User.Username())
		return "", fmt.Errorf("database %s: the URL carries a password; leave it out and give it in PGPASSWORD, "+
			"a password file (PGPASSFILE, ~/.pgpass, or the config key password_file) instead", u.Redacted())
	}
	q := u.Query()
	if q.Has("password") {
		q.Del("password")
		u.RawQuery = q.Encode()
		return "", fmt.Errorf("database %s: the URL carries a password; leave it out and give it in PGPASSWORD, "+
			"a password file (PGPASSFILE, ~/.pgpass, or the config key password_file) instead", u.String())
	}
	return u.String(), nil
}

// redactErr keeps a URL parse error from repeating a password.
func redactErr(err error, target string) string {
	msg := err.Error()
	if i := strings.Index(target, "@"); i > 0 {
		msg = strings.ReplaceAll(msg, target[:i], "postgres://...")
	}
	return msg
}

// ReadPasswordFile reads a password from the first line of path. The file
// must be a regular file that neither group nor others can read (on Unix;
// Windows has no such mode bits, there the folder's access control list
// must protect it).
func ReadPasswordFile(path string) (string, error) {
	if err := checkSecretFile(path); err != nil {
		return "", err
	}
	f, err := os.Open(path)
	if err != nil {
		return "", fmt.Errorf("password file %s: %w", path, unwrapPath(err))
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	if !sc.Scan() {
		if err := sc.Err(); err != nil {
			return "", fmt.Errorf("password file %s: %w", path, err)
		}
		return "", fmt.Errorf("password file %s: empty", path)
	}
	pw := strings.TrimRight(sc.Text(), "\r")
	if pw == "" {
		return "", fmt.Errorf("password file %s: the first line is empty", path)
	}
	return pw, nil
}

// checkSecretFile refuses a password file that others may read.
func checkSecretFile(path string) error {
	st, err := os.Stat(path)
	if err != nil {
		return fmt.Errorf("password file %s: %w", path, unwrapPath(err))
	}
	if !st.Mode().IsRegular() {
		return fmt.Errorf("password file %s: not a regular file", path)
	}
	if runtime.GOOS != "windows" && st.Mode().Perm()&0o077 != 0 {
		return fmt.Errorf("password file %s: group or others may read it (mode %04o); run: chmod 600 %s",
			path, st.Mode().Perm(), path)
	}
	return nil
}

// checkPassfile refuses the PostgreSQL password file (PGPASSFILE or
// ~/.pgpass) when the password came from it and others may read it, as
// libpq does; pgx itself does not look at its permissions.
func checkPassfile(cfg *pgx.ConnConfig) error {
	if cfg.Password == "" || os.Getenv("PGPASSWORD") != "" {
		return nil
	}
	pf := os.Getenv("PGPASSFILE")
	if pf == "" {
		home, err := os.UserHomeDir()
		if err != nil {
			return nil
		}
		if runtime.GOOS == "windows" {
			pf = filepath.Join(os.Getenv("APPDATA"), "postgresql", "pgpass.conf")
		} else {
			pf = filepath.Join(home, ".pgpass")
		}
	}
	if _, err := os.Stat(pf); errors.Is(err, fs.ErrNotExist) {
		return nil
	}
	return checkSecretFile(pf)
}

func (db *DB) closePostgres() error {
	db.pg.mu.Lock()
	locks := make([]*BayLock, 0, len(db.pg.bay))
	for l := range db.pg.bay {
		locks = append(locks, l)
	}
	db.pg.mu.Unlock()
	var errs []error
	for _, l := range locks {
		errs = append(errs, l.Release())
	}
	errs = append(errs, db.r.Close()) // the one pool
	if err := errors.Join(errs...); err != nil {
		return fmt.Errorf("database %s: close: %w", db.path, err)
	}
	return nil
}

// bayLockClass is the first key of every bay lock (PostgreSQL advisory
// locks take two 32-bit keys); the second is a hash of the bay's name.
const bayLockClass = 0x726c // "rl"

func bayKey(schemaAndBay string) int64 {
	h := fnv.New32a()
	h.Write([]byte(schemaAndBay))
	return int64(h.Sum32() & 0x7fffffff)
}

// BayLock is the one-daemon lock of a bay on a PostgreSQL history: a
// session advisory lock held by a connection of its own. The server drops
// it when that connection ends (daemon killed, network lost), so a crash
// never leaves a stale lock; Check tells whether it is still held and
// takes it again after the connection was lost.
type BayLock struct {
	db   *DB
	bay  string
	mu   sync.Mutex
	conn *pgx.Conn
	done bool
}

// LockBay takes the one-daemon lock of bay on a PostgreSQL history.
// Another holder, in this process or another, gives a *LockedError that
// wraps ErrLocked and names the holder's process and host when the server
// shows them. On an SQLite history use LockWriter.
func (db *DB) LockBay(ctx context.Context, bay string) (*BayLock, error) {
	if db.dialect != postgresDialect {
		return nil, fmt.Errorf("database %s: a bay lock is for a PostgreSQL history; SQLite is locked per file (LockWriter)", db.path)
	}
	if bay == "" {
		return nil, fmt.Errorf("database %s: bay lock: no bay name", db.path)
	}
	l := &BayLock{db: db, bay: bay}
	if err := l.take(ctx); err != nil {
		return nil, err
	}
	db.pg.mu.Lock()
	db.pg.bay[l] = true
	db.pg.mu.Unlock()
	return l, nil
}

// holderName is the application_name of the lock connection: who holds
// the bay, for the LockedError of the next one.
func holderName(bay string) string {
	host, _ := os.Hostname()
	s := fmt.Sprintf("ringlog pid=%d host=%s bay=%s", os.Getpid(), host, bay)
	if len(s) > 63 {
		s = s[:63]
	}
	return s
}

func (l *BayLock) take(ctx context.Context) error {
	cfg := l.db.pg.cfg.Copy()
	cfg.RuntimeParams["application_name"] = holderName(l.bay)
	conn, err := pgx.ConnectConfig(ctx, cfg)
	if err != nil {
		return fmt.Errorf("database %s: bay %s: lock connection: %w", l.db.path, l.bay, err)
	}
	// Advisory locks are per database, while a history is per schema
	// (search_path): the key names both, so histories side by side in one
	// database lock their bays apart.
	var schema string
	if err := conn.QueryRow(ctx, "SELECT coalesce(current_schema(), '')").Scan(&schema); err != nil {
		conn.Close(ctx)
		return fmt.Errorf("database %s: bay %s: lock: %w", l.db.path, l.bay, err)
	}
	key := bayKey(schema + "\x00" + l.bay)
	var ok bool
	if err := conn.QueryRow(ctx, "SELECT pg_try_advisory_lock($1::int, $2::int)", bayLockClass, key).Scan(&ok); err != nil {
		conn.Close(ctx)
		return fmt.Errorf("database %s: bay %s: lock: %w", l.db.path, l.bay, err)
	}
	if !ok {
		le := &LockedError{Path: l.db.path, Bay: l.bay}
		var app string
		var started time.Time
		err := conn.QueryRow(ctx, `
SELECT coalesce(a.application_name, ''), coalesce(a.backend_start, now())
FROM pg_locks k JOIN pg_stat_activity a ON a.pid = k.pid
WHERE k.locktype = 'advisory' AND k.granted AND k.classid::bigint = $1 AND k.objid::bigint = $2 AND k.objsubid = 2
LIMIT 1`, int64(bayLockClass), key).Scan(&app, &started)
		if err == nil {
			le.PID, le.Host = parseHolder(app)
			le.Since = started
		}
		conn.Close(ctx)
		return le
	}
	l.mu.Lock()
	l.conn = conn
	l.mu.Unlock()
	return nil
}

func parseHolder(app string) (pid int, host string) {
	for _, f := range strings.Fields(app) {
		k, v, _ := strings.Cut(f, "=")
		switch k {
		case "pid":
			pid, _ = strconv.Atoi(v)
		case "host":
			host = v
		}
	}
	return pid, host
}

// Check makes sure the lock is still held: when its connection was lost
// (the server restarted, the network failed) it connects again and takes
// the lock again, which fails with a *LockedError if another daemon took
// the bay meanwhile.
func (l *BayLock) Check(ctx context.Context) error {
	l.mu.Lock()
	if l.done {
		l.mu.Unlock()
		return fmt.Errorf("database %s: bay %s: lock released", l.db.path, l.bay)
	}
	conn := l.conn
	l.mu.Unlock()
	if conn != nil {
		if err := conn.Ping(ctx); err == nil {
			return nil
		}
		conn.Close(context.Background())
		l.mu.Lock()
		l.conn = nil
		l.mu.Unlock()
	}
	return l.take(ctx)
}

// Release drops the lock; calling it more than once is harmless.
func (l *BayLock) Release() error {
	l.mu.Lock()
	defer l.mu.Unlock()
	if l.done {
		return nil
	}
	l.done = true
	l.db.pg.mu.Lock()
	delete(l.db.pg.bay, l)
	l.db.pg.mu.Unlock()
	if l.conn == nil {
		return nil
	}
	ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
	defer cancel()
	err := l.conn.Close(ctx) // the session ends, and with it the lock
	l.conn = nil
	return err
}

// BayHolder is a daemon holding a bay of a PostgreSQL history.
type BayHolder struct {
	Bay   string
	PID   int
	Host  string
	Since time.Time
}

// BayHolders lists the daemons that hold bay locks on a PostgreSQL
// history, as far as the server shows them to this role; nil on SQLite.
func (db *DB) BayHolders(ctx context.Context) ([]BayHolder, error) {
	if db.dialect != postgresDialect {
		return nil, nil
	}
	rows, err := db.r.QueryContext(ctx, `
SELECT coalesce(a.application_name, ''), coalesce(a.backend_start, now())
FROM pg_locks k JOIN pg_stat_activity a ON a.pid = k.pid
WHERE k.locktype = 'advisory' AND k.granted AND k.classid::bigint = ? AND k.objsubid = 2
ORDER BY 1`, int64(bayLockClass))
	if err != nil {
		return nil, fmt.Errorf("database %s: bay locks: %w", db.path, err)
	}
	defer rows.Close()
	var out []BayHolder
	for rows.Next() {
		var app string
		var h BayHolder
		if err := rows.Scan(&app, &h.Since); err != nil {
			return nil, fmt.Errorf("database %s: bay locks: %w", db.path, err)
		}
		h.PID, h.Host = parseHolder(app)
		if i := strings.Index(app, "bay="); i >= 0 {
			h.Bay = app[i+4:]
		}
		out = append(out, h)
	}
	return out, rows.Err()
}
