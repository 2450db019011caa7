// Package pgtest gives tests a PostgreSQL history to work on: a fresh
// schema on the test server named by RINGLOG_TEST_POSTGRES (what .ci/run
// starts, see .ci/pg-cluster), or a throw-away server of their own that a
// fault test may stop and start again (needs RINGLOG_TEST_PGBIN, the
// folder of initdb and pg_ctl). Without those variables the tests that
// need PostgreSQL are skipped with a message saying how to run them.
package pgtest

import (
	"context"
	"crypto/rand"
	"encoding/hex"
	"fmt"
	"net"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
)

// EnvURL names the test server.
const EnvURL = "RINGLOG_TEST_POSTGRES"

// EnvBin names the folder of the PostgreSQL server binaries.
const EnvBin = "RINGLOG_TEST_PGBIN"

const skipMsg = "PostgreSQL tests skipped: set " + EnvURL + "=postgres://... (and " + EnvBin +
	"=/usr/lib/postgresql/N/bin for the fault tests); .ci/run starts a throw-away cluster with .ci/pg-cluster"

// Available reports whether a test server is configured.
func Available() bool { return os.Getenv(EnvURL) != "" }

// URL returns the URL of a new, empty schema on the test server; the
// schema is dropped when the test ends. It skips the test when no server
// is configured.
func URL(t testing.TB) string {
	t.Helper()
	base := os.Getenv(EnvURL)
	if base == "" {
		t.Skip(skipMsg)
	}
	return NewSchema(t, base)
}

// NewSchema creates a fresh schema on the server at base and returns base
// with search_path set to it; the schema is dropped at the end of the test.
func NewSchema(t testing.TB, base string) string {
	t.Helper()
	var b [6]byte
	_, _ = rand.Read(b[:])
	schema := "t_" + hex.EncodeToString(b[:])
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	conn, err := pgx.Connect(ctx, base)
	if err != nil {
		t.Fatalf("pgtest: connecting to %s: %v", base, err)
	}
	defer conn.Close(ctx)
	if _, err := conn.Exec(ctx, "CREATE SCHEMA "+schema); err != nil {
		t.Fatalf("pgtest: %v", err)
	}
	t.Cleanup(func() {
		ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
		defer cancel()
		conn, err := pgx.Connect(ctx, base)
		if err != nil {
			return // the server was stopped by the test; its folder goes with it
		}
		defer conn.Close(ctx)
		_, _ = conn.Exec(ctx, "DROP SCHEMA "+schema+" CASCADE")
	})
	return WithParam(base, "search_path", schema)
}

// WithParam returns the URL u with the query parameter k set to v.
func WithParam(u, k, v string) string {
	p, err := url.Parse(u)
	if err != nil {
		return u
	}
	q := p.Query()
	q.Set(k, v)
	p.RawQuery = q.Encode()
	return p.String()
}

// Exec runs SQL statements on the server at u (setting up roles in a test).
func Exec(t testing.TB, u string, stmts ...string) {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	conn, err := pgx.Connect(ctx, u)
	if err != nil {
		t.Fatalf("pgtest: connecting: %v", err)
	}
	defer conn.Close(ctx)
	for _, s := range stmts {
		if _, err := conn.Exec(ctx, s); err != nil {
			t.Fatalf("pgtest: %s: %v", s, err)
		}
	}
}

// Cluster is a PostgreSQL server of the test's own, in a temporary folder,
// that the test may stop hard and start again.
type Cluster struct {
	t    testing.TB
	bin  string
	dir  string
	port int
	cred credential // run the server as this user (nobody when the test runs as root)
}

// NewCluster initialises and starts a server owned by the test; it is
// stopped and removed when the test ends. It skips the test when
// RINGLOG_TEST_PGBIN is not set.
func NewCluster(t testing.TB) *Cluster {
	t.Helper()
	return newCluster(t, "")
}

// NewClusterWithPasswords is NewCluster with password authentication
// (scram-sha-256) on TCP; the superuser ringlog has the password super.
// Connections through the socket stay trusted.
func NewClusterWithPasswords(t testing.TB, super string) *Cluster {
	t.Helper()
	return newCluster(t, super)
}

func newCluster(t testing.TB, super string) *Cluster {
	t.Helper()
	bin := os.Getenv(EnvBin)
	if bin == "" {
		t.Skip(skipMsg)
	}
	c := &Cluster{t: t, bin: bin}
	dir, err := os.MkdirTemp("", "ringlog-pgtest-")
	if err != nil {
		t.Fatal(err)
	}
	c.dir = dir
	t.Cleanup(func() {
		c.pgctl("-m", "immediate", "-w", "stop")
		os.RemoveAll(dir)
	})
	if err := c.dropRoot(); err != nil {
		t.Fatalf("pgtest: %v", err)
	}
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	c.port = l.Addr().(*net.TCPAddr).Port
	l.Close()
	args := []string{"-D", c.data(), "-A", "trust", "-U", "ringlog", "-E", "UTF8", "--no-sync", "--no-instructions"}
	if super != "" {
		pw := filepath.Join(dir, "superpw")
		if err := os.WriteFile(pw, []byte(super+"\n"), 0o644); err != nil {
			t.Fatal(err)
		}
		args = append(args, "--auth-host=scram-sha-256", "--pwfile="+pw)
	}
	if out, err := c.run(filepath.Join(bin, "initdb"), args...); err != nil {
		t.Fatalf("pgtest: initdb: %v\n%s", err, out)
	}
	c.Start()
	return c
}

func (c *Cluster) data() string { return filepath.Join(c.dir, "data") }

func (c *Cluster) run(name string, args ...string) ([]byte, error) {
	cmd := exec.Command(name, args...)
	cmd.Dir = c.dir
	applyCred(c.cred, cmd)
	return cmd.CombinedOutput()
}

func (c *Cluster) pgctl(args ...string) ([]byte, error) {
	return c.run(filepath.Join(c.bin, "pg_ctl"), append([]string{"-D", c.data()}, args...)...)
}

// URL is the URL of the cluster's postgres database.
func (c *Cluster) URL() string { return c.DBURL("ringlog", "postgres") }

// DBURL is the URL of database as user, without a password.
func (c *Cluster) DBURL(user, database string) string {
	return fmt.Sprintf("postgres://%s@127.0.0.1:%d/%s?sslmode=disable&connect_timeout=5", user, c.port, database)
}

// Start starts the server and waits until it accepts connections.
func (c *Cluster) Start() {
	c.t.Helper()
	opts := fmt.Sprintf("-h 127.0.0.1 -p %d -k %s -c max_connections=100", c.port, c.dir)
	if out, err := c.pgctl("-l", filepath.Join(c.dir, "server.log"), "-w", "-t", "60", "-o", opts, "start"); err != nil {
		log, _ := os.ReadFile(filepath.Join(c.dir, "server.log"))
		c.t.Fatalf("pgtest: pg_ctl start: %v\n%s\n%s", err, out, tail(string(log)))
	}
}

// Kill stops the server hard (immediate shutdown: the processes quit at
// once, the next start recovers from the write-ahead log, as after a
// crash).
func (c *Cluster) Kill() {
	c.t.Helper()
	if out, err := c.pgctl("-m", "immediate", "-w", "stop"); err != nil {
		c.t.Fatalf("pgtest: pg_ctl stop: %v\n%s", err, out)
	}
}

func tail(s string) string {
	lines := strings.Split(s, "\n")
	if len(lines) > 20 {
		lines = lines[len(lines)-20:]
	}
	return strings.Join(lines, "\n")
}
