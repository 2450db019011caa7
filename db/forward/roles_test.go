package forward

import (
	"context"
	"errors"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/db/pgtest"
)

// readmeRolesSQL is the SQL block of README.md that creates the bay and
// analyst roles: the test runs what the README tells a lab to run.
func readmeRolesSQL(t *testing.T) string {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "..", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	s := string(b)
	i := strings.Index(s, "```sql\n-- ringlog lab roles")
	if i < 0 {
		t.Fatal("README.md has no ```sql block starting with '-- ringlog lab roles'")
	}
	s = s[i+len("```sql\n"):]
	j := strings.Index(s, "```")
	if j < 0 {
		t.Fatal("README.md: the roles block does not end")
	}
	return s[:j]
}

func withPassword(u, user, pw string) string {
	p, _ := url.Parse(u)
	p.User = url.UserPassword(user, pw)
	return p.String()
}

// TestRolesAndPasswords sets a server up as the README says, on a cluster
// that asks for passwords: the owner creates the schema with a password
// file, the roles come from the README's SQL, the bay forwards with
// PGPASSWORD but cannot delete or change a hit, the analyst reads with a
// ~/.pgpass-style file but cannot write, and a password file others may
// read is refused.
func TestRolesAndPasswords(t *testing.T) {
	if testing.Short() {
		t.Skip("starts a PostgreSQL server")
	}
	cl := pgtest.NewClusterWithPasswords(t, "owner-secret")
	ctx := context.Background()
	pgtest.Exec(t, withPassword(cl.URL(), "ringlog", "owner-secret"), "CREATE DATABASE ringlog")
	ownerURL := cl.DBURL("ringlog", "ringlog")
	dir := t.TempDir()

	// No password: the server refuses.
	t.Setenv("PGPASSWORD", "")
	t.Setenv("PGPASSFILE", filepath.Join(dir, "none"))
	if d, err := db.Open(ctx, ownerURL); err == nil {
		d.Close()
		t.Fatal("connected without a password to a server that asks for one")
	}
	// A password file others may read is refused before it is used.
	pw := filepath.Join(dir, "owner-password")
	if err := os.WriteFile(pw, []byte("owner-secret\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := db.OpenWith(ctx, ownerURL, db.Options{PasswordFile: pw}); err == nil || !strings.Contains(err.Error(), "chmod 600") {
		t.Fatalf("a world-readable password file: %v", err)
	}
	os.Chmod(pw, 0o600)
	// The owner creates the schema (ringlog migrate does this), password from the file
	// given as the URL's password_file (what the config key password_file becomes).
	owner, err := db.Open(ctx, pgtest.WithParam(ownerURL, "password_file", pw))
	if err != nil {
		t.Fatal(err)
	}
	owner.Close()
	pgtest.Exec(t, withPassword(ownerURL, "ringlog", "owner-secret"), readmeRolesSQL(t))

	// The bay, with PGPASSWORD (the README's placeholder password).
	t.Setenv("PGPASSWORD", "change-me")
	bayURL := cl.DBURL("ringlog_bay", "ringlog")
	spool := openSpool(t)
	record(t, spool, "r", "r", 0, 10, db.HitMeta{Prototype: "P1"})
	// a file changed after it was recorded: its new hit supersedes the first
	changed := db.FileInfo{Path: "/export/r0000.csv", Size: 9, MTime: t0.Add(time.Hour), SHA256: shaOf("r-0 and more")}
	if _, err := spool.RecordResult(ctx, changed, db.HitMeta{Prototype: "P1"}, result(changed.Path, 0), nil); err != nil {
		t.Fatal(err)
	}
	if err := spool.RecordFailure(ctx, db.FileInfo{Path: "/export/bad.csv", Size: 1, MTime: t0}, errors.New("truncated"), true); err != nil {
		t.Fatal(err)
	}
	batch, err := spool.Outbox(ctx, 100)
	if err != nil {
		t.Fatal(err)
	}
	f := newForwarder(t, spool, bayURL, "bay-2")
	if n, err := f.Flush(ctx); err != nil || n != 12 {
		t.Fatalf("the bay role forwarding: %d, %v", n, err)
	}
	// Sending a batch again (after a crash) needs only what the role has.
	bay, err := db.Open(ctx, bayURL)
	if err != nil {
		t.Fatal(err)
	}
	for i := range batch {
		batch[i].File.Path = CentralPath("bay-2", batch[i].File.Path)
		batch[i].Meta.Bay = "bay-2"
	}
	if _, err := bay.Receive(ctx, batch); err != nil {
		t.Errorf("the bay role receiving a repeated batch: %v", err)
	}
	bay.Close()
	bayPW := withPassword(bayURL, "ringlog_bay", "change-me")
	for _, stmt := range []string{
		"DELETE FROM hits", "DELETE FROM files", "UPDATE hits SET verdict = 'accepted'",
		"UPDATE results SET superseded = 1", "UPDATE modes SET damping_ratio = 0", "DROP TABLE reasons",
		"UPDATE hits SET first_path = 'elsewhere'",
	} {
		if err := tryExec(ctx, bayPW, stmt); err == nil || !strings.Contains(err.Error(), "ermission denied") && !strings.Contains(err.Error(), "must be owner") {
			t.Errorf("bay role: %s: %v, want permission denied", stmt, err)
		}
	}

	// The analyst, with a password file in the format of ~/.pgpass.
	t.Setenv("PGPASSWORD", "")
	pgpass := filepath.Join(dir, "pgpass")
	if err := os.WriteFile(pgpass, []byte("*:*:ringlog:ringlog_analyst:change-me-too\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	t.Setenv("PGPASSFILE", pgpass)
	analystURL := cl.DBURL("ringlog_analyst", "ringlog")
	an, err := db.OpenReadOnly(ctx, analystURL)
	if err != nil {
		t.Fatal(err)
	}
	hs, err := an.Hits(ctx, db.Filter{Prototype: "P1"})
	an.Close()
	if err != nil || len(hs) != 10 {
		t.Errorf("analyst reads %d hits, %v; want 10", len(hs), err)
	}
	an, err = db.Open(ctx, analystURL) // even a writable open cannot write
	if err != nil {
		t.Fatal(err)
	}
	if _, err := an.RecordResult(ctx, db.FileInfo{Path: "/x.csv", Size: 1, MTime: t0, SHA256: shaOf("x")}, db.HitMeta{}, result("/x.csv", 1), nil); err == nil {
		t.Error("the analyst role recorded a result")
	}
	an.Close()
	os.Chmod(pgpass, 0o644)
	if _, err := db.OpenReadOnly(ctx, analystURL); err == nil || !strings.Contains(err.Error(), "chmod 600") {
		t.Errorf("a world-readable PGPASSFILE: %v", err)
	}
}

func tryExec(ctx context.Context, u, stmt string) error {
	c, err := pgx.Connect(ctx, u)
	if err != nil {
		return err
	}
	defer c.Close(ctx)
	_, err = c.Exec(ctx, stmt)
	return err
}
