package db

import (
	"context"
	"database/sql"
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"testing/fstest"
)

func userVersion(t *testing.T, d *DB) int {
	t.Helper()
	var v int
	if err := d.r.QueryRow("PRAGMA user_version").Scan(&v); err != nil {
		t.Fatal(err)
	}
	return v
}

func TestOpenSetsPragmas(t *testing.T) {
	d := openSQLite(t)
	ctx := context.Background()
	var mode string
	var sync, fk, busy int
	if err := d.w.QueryRowContext(ctx, "PRAGMA journal_mode").Scan(&mode); err != nil {
		t.Fatal(err)
	}
	if err := d.w.QueryRowContext(ctx, "PRAGMA synchronous").Scan(&sync); err != nil {
		t.Fatal(err)
	}
	if err := d.w.QueryRowContext(ctx, "PRAGMA foreign_keys").Scan(&fk); err != nil {
		t.Fatal(err)
	}
	if err := d.w.QueryRowContext(ctx, "PRAGMA busy_timeout").Scan(&busy); err != nil {
		t.Fatal(err)
	}
	// PRAGMA synchronous reports 2 for FULL (sqlite.org/pragma.html#pragma_synchronous).
	if mode != "wal" || sync != 2 || fk != 1 || busy != busyTimeoutMS {
		t.Errorf("writer pragmas: journal_mode=%s synchronous=%d foreign_keys=%d busy_timeout=%d; want wal 2 1 %d",
			mode, sync, fk, busy, busyTimeoutMS)
	}
	// The read pool refuses writes.
	if _, err := d.r.ExecContext(ctx, "DELETE FROM files"); err == nil {
		t.Error("a read connection accepted a write")
	}
	// Writes begin IMMEDIATE: an open write transaction holds the write
	// lock before its first statement, so another connection cannot start one.
	tx, err := d.w.BeginTx(ctx, nil)
	if err != nil {
		t.Fatal(err)
	}
	other, err := sql.Open("sqlite", d.Path()+"?_pragma=busy_timeout(0)")
	if err != nil {
		t.Fatal(err)
	}
	defer other.Close()
	if _, err := other.ExecContext(ctx, "BEGIN IMMEDIATE"); err == nil || !strings.Contains(err.Error(), "locked") {
		t.Errorf("second writer while a write transaction is open: err = %v, want 'database is locked'", err)
	}
	tx.Rollback()
	// The -wal side file exists while the database is open in WAL mode.
	if _, err := os.Stat(d.Path() + "-wal"); err != nil {
		t.Errorf("no WAL file beside the database: %v", err)
	}
}

func TestMigrationsIdempotent(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "h.sqlite")
	for i := 0; i < 3; i++ {
		d, err := Open(ctx, path)
		if err != nil {
			t.Fatalf("open #%d: %v", i+1, err)
		}
		if v := userVersion(t, d); v != SchemaVersion() || v < 1 {
			t.Errorf("open #%d: user_version %d, want %d", i+1, v, SchemaVersion())
		}
		if err := d.Close(); err != nil {
			t.Fatal(err)
		}
	}
}

func TestMigrationsApplyOnlyMissing(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "h.sqlite")
	// Running a CREATE TABLE twice fails, so a second application of
	// 0001 would make the second Open fail.
	v1 := fstest.MapFS{
		"migrations/0001_a.sql": {Data: []byte("CREATE TABLE a (x INTEGER);")},
	}
	v2 := fstest.MapFS{
		"migrations/0001_a.sql": v1["migrations/0001_a.sql"],
		"migrations/0002_b.sql": {Data: []byte("CREATE TABLE b (y TEXT); INSERT INTO a VALUES (7);")},
	}
	v3bad := fstest.MapFS{
		"migrations/0001_a.sql": v1["migrations/0001_a.sql"],
		"migrations/0002_b.sql": v2["migrations/0002_b.sql"],
		"migrations/0003_c.sql": {Data: []byte("CREATE TABLE c (z); INSERT INTO nowhere VALUES (1);")},
	}
	d, err := openWith(ctx, path, v1)
	if err != nil {
		t.Fatal(err)
	}
	if v := userVersion(t, d); v != 1 {
		t.Errorf("after v1: user_version %d, want 1", v)
	}
	d.Close()

	d, err = openWith(ctx, path, v2)
	if err != nil {
		t.Fatalf("reopen with one more migration: %v", err)
	}
	var n int
	if err := d.r.QueryRow("SELECT count(*) FROM a").Scan(&n); err != nil || n != 1 {
		t.Errorf("rows in a after 0002: %d (%v), want 1", n, err)
	}
	if v := userVersion(t, d); v != 2 {
		t.Errorf("after v2: user_version %d, want 2", v)
	}
	d.Close()

	_, err = openWith(ctx, path, v3bad)
	if err == nil || !strings.Contains(err.Error(), "0003_c.sql") {
		t.Fatalf("failing migration: err = %v, want one naming 0003_c.sql", err)
	}
	// The failed migration was rolled back as a whole.
	d, err = openWith(ctx, path, v2)
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	if v := userVersion(t, d); v != 2 {
		t.Errorf("after failed v3: user_version %d, want 2", v)
	}
	if err := d.r.QueryRow("SELECT count(*) FROM sqlite_schema WHERE name = 'c'").Scan(&n); err != nil || n != 0 {
		t.Errorf("table c exists after its migration failed (n=%d, %v)", n, err)
	}
	// A database newer than the code is refused.
	_, err = openWith(ctx, path, v1)
	if err == nil || !strings.Contains(err.Error(), "newer") {
		t.Errorf("opening a v2 database with v1 code: err = %v, want a 'newer' error", err)
	}
}

func TestLoadMigrationsRejectsGaps(t *testing.T) {
	bad := fstest.MapFS{
		"migrations/0001_a.sql": {Data: []byte("SELECT 1;")},
		"migrations/0003_c.sql": {Data: []byte("SELECT 1;")},
	}
	if _, err := loadMigrations(bad); err == nil || !strings.Contains(err.Error(), "0003_c.sql") {
		t.Errorf("gap in numbers: err = %v", err)
	}
	if _, err := loadMigrations(fstest.MapFS{"migrations/init.sql": {Data: []byte("SELECT 1;")}}); err == nil {
		t.Error("unnumbered migration accepted")
	}
}

func TestOpenUnwritablePath(t *testing.T) {
	dir := t.TempDir()
	file := filepath.Join(dir, "file.txt")
	if err := os.WriteFile(file, []byte("not a folder"), 0o644); err != nil {
		t.Fatal(err)
	}
	// A regular file as the parent: refused for root too.
	path := filepath.Join(file, "db.sqlite")
	_, err := Open(context.Background(), path)
	if err == nil {
		t.Fatal("Open under a regular file succeeded")
	}
	msg := err.Error()
	if !strings.Contains(msg, "database "+path+": cannot create") || !strings.Contains(msg, "not a folder") {
		t.Errorf("error %q does not name the path and the problem", msg)
	}
	if !errors.Is(err, syscall.ENOTDIR) {
		t.Errorf("error %v does not wrap ENOTDIR", err)
	}

	missing := filepath.Join(dir, "no", "such", "db.sqlite")
	_, err = Open(context.Background(), missing)
	if err == nil || !errors.Is(err, fs.ErrNotExist) || !strings.Contains(err.Error(), "does not exist") ||
		!strings.Contains(err.Error(), missing) {
		t.Errorf("missing folder: err = %v", err)
	}

	if _, err := Open(context.Background(), dir); err == nil || !strings.Contains(err.Error(), "folder") {
		t.Errorf("a folder as database: err = %v", err)
	}
}

func TestOpenUnwritableFolder(t *testing.T) {
	if os.Geteuid() == 0 {
		t.Skip("running as root: folder permissions are not enforced")
	}
	dir := t.TempDir()
	if err := os.Chmod(dir, 0o555); err != nil {
		t.Fatal(err)
	}
	defer os.Chmod(dir, 0o755)
	path := filepath.Join(dir, "db.sqlite")
	_, err := Open(context.Background(), path)
	if err == nil || !errors.Is(err, fs.ErrPermission) ||
		err.Error() != "database "+path+": cannot create: permission denied" {
		t.Errorf("read-only folder: err = %v", err)
	}
}

func TestOpenNotADatabase(t *testing.T) {
	path := filepath.Join(t.TempDir(), "notes.sqlite")
	junk := strings.Repeat("this is a text file, not an SQLite database\n", 200)
	if err := os.WriteFile(path, []byte(junk), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := Open(context.Background(), path)
	if err == nil || !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), "not an SQLite database") {
		t.Errorf("junk file: err = %v", err)
	}
	// The file was left alone.
	b, _ := os.ReadFile(path)
	if string(b) != junk {
		t.Error("Open changed a file that is not a database")
	}
}

func TestOpenPathWithSpecialCharacters(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "lab 3 #2 (50% done)")
	if err := os.Mkdir(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, "hist?ory&x=1.sqlite")
	if strings.ContainsAny(path, "?") && isWindows() {
		path = filepath.Join(dir, "history&x=1.sqlite")
	}
	d, err := Open(context.Background(), path)
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	if d.Path() != path {
		t.Errorf("Path() = %q, want %q", d.Path(), path)
	}
	// The database is the file at exactly that path, and nothing else was created.
	entries, _ := os.ReadDir(dir)
	for _, e := range entries {
		if !strings.HasPrefix(e.Name(), filepath.Base(path)) {
			t.Errorf("unexpected file %q beside the database", e.Name())
		}
	}
	if st, err := os.Stat(path); err != nil || st.Size() == 0 {
		t.Errorf("database file %q: %v", path, err)
	}
}

func TestIntegrityCheck(t *testing.T) {
	d := openTemp(t)
	ctx := context.Background()
	if _, err := d.RecordResult(ctx, fileInfo("/data/a.csv", "a", t0), HitMeta{}, sampleResult("/data/a.csv"), nil); err != nil {
		t.Fatal(err)
	}
	got, err := d.IntegrityCheck(ctx)
	// "ok" is the documented output of a sound database (sqlite.org/pragma.html#pragma_integrity_check).
	if err != nil || got != "ok" {
		t.Errorf("IntegrityCheck = %q, %v; want ok", got, err)
	}
}

// TestQueriesUseIndexes checks with EXPLAIN QUERY PLAN that the hot
// lookups search an index instead of scanning a table
// (sqlite.org/eqp.html: "SEARCH ... USING INDEX" versus "SCAN").
func TestQueriesUseIndexes(t *testing.T) {
	d := openSQLite(t)
	for _, c := range []struct {
		query string
		args  []any
		index string
	}{
		{"SELECT size, mtime, state, attempts FROM files WHERE path = ?", []any{"/x"}, "sqlite_autoindex_files"},
		{"SELECT id, first_path FROM hits WHERE sha256 = ?", []any{"ab"}, "sqlite_autoindex_hits"},
		{"SELECT count(*) FROM files WHERE state = 'pending'", nil, "files_state"},
		{"SELECT id FROM hits WHERE prototype = ? AND revision = ? ORDER BY hit_time", []any{"P", "A"}, "hits_prototype"},
		{"SELECT result_id FROM modes WHERE label = ?", []any{"m1"}, "modes_label"},
		{"SELECT id FROM results WHERE hit_id = ? AND superseded = 0", []any{int64(1)}, "results_current"},
	} {
		rows, err := d.r.Query("EXPLAIN QUERY PLAN "+c.query, c.args...)
		if err != nil {
			t.Fatal(err)
		}
		var plan []string
		for rows.Next() {
			var id, parent, unused int
			var detail string
			if err := rows.Scan(&id, &parent, &unused, &detail); err != nil {
				t.Fatal(err)
			}
			plan = append(plan, detail)
		}
		rows.Close()
		p := strings.Join(plan, "; ")
		t.Log(p)
		if !strings.Contains(p, c.index) || strings.Contains(p, "SCAN") && !strings.Contains(p, "COVERING INDEX") {
			t.Errorf("%s: plan %q does not use %s", c.query, p, c.index)
		}
	}
}
