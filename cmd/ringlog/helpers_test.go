package main

// Helpers for the process-level tests in daemon_test.go and cli_test.go:
// the ringlog binary built once in TestMain, daemons run as real processes,
// and the JSON output of 'status --json' and 'history --json' parsed back.

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/read"
	"github.com/ringlog/ringlog/pipeline/synth"
)

// ringlogBin is the ringlog binary built by TestMain; moduleRoot is the
// repository root (the folder of go.mod).
var ringlogBin, moduleRoot string

// raceBuild is set under 'go test -race' (race_test.go): the binary is
// then built with -race as well.
var raceBuild bool

// waitLong is the deadline of every poll. It is a deadline, not a timing
// assertion: on an idle machine the conditions hold within a second or two;
// the margin is for a loaded 2-core machine running other builds.
const waitLong = 90 * time.Second

func TestMain(m *testing.M) {
	code, err := buildAndRun(m)
	if err != nil {
		fmt.Fprintln(os.Stderr, "cmd/ringlog tests:", err)
		os.Exit(1)
	}
	os.Exit(code)
}

func buildAndRun(m *testing.M) (int, error) {
	root, err := findModuleRoot()
	if err != nil {
		return 0, err
	}
	moduleRoot = root
	// os.MkdirTemp, not t.TempDir: the binary must be reachable by the
	// unprivileged user of the permission test, so the folder is 0755.
	dir, err := os.MkdirTemp("", "ringlog-bin-")
	if err != nil {
		return 0, err
	}
	defer os.RemoveAll(dir)
	if err := os.Chmod(dir, 0o755); err != nil {
		return 0, err
	}
	name := "ringlog"
	if runtime.GOOS == "windows" {
		name += ".exe"
	}
	ringlogBin = filepath.Join(dir, name)
	gobin := "go"
	if p := filepath.Join(runtime.GOROOT(), "bin", "go"); fileExists(p) || fileExists(p+".exe") {
		gobin = p
	}
	args := []string{"build", "-o", ringlogBin}
	if raceBuild {
		args = append(args, "-race")
	}
	cmd := exec.Command(gobin, append(args, "./cmd/ringlog")...)
	cmd.Dir = root
	if out, err := cmd.CombinedOutput(); err != nil {
		return 0, fmt.Errorf("go build ./cmd/ringlog: %v\n%s", err, out)
	}
	return m.Run(), nil
}

func fileExists(p string) bool {
	_, err := os.Stat(p)
	return err == nil
}

// findModuleRoot walks up from the working directory (the package folder
// under go test) to the folder holding go.mod.
func findModuleRoot() (string, error) {
	dir, err := os.Getwd()
	if err != nil {
		return "", err
	}
	for {
		if fileExists(filepath.Join(dir, "go.mod")) {
			return dir, nil
		}
		parent := filepath.Dir(dir)
		if parent == dir {
			return "", errors.New("go.mod not found above the working directory")
		}
		dir = parent
	}
}

// ---------------------------------------------------------------------------
// Test files

// hitRecording is a short synthetic hit: a half-sine hammer pulse and one
// viscously damped mode from pipeline/synth (closed-form generator), with
// noise seeded by seed so that every seed gives different bytes.
func hitRecording(seed uint64, rate, dur float64) *pipeline.Recording {
	modes := []synth.Mode{{FrequencyHz: 95 + float64(seed%11), DampingRatio: 0.02, Amplitude: 20}}
	h := synth.Hit{
		SampleRate: rate, Duration: dur, PreTrigger: 0.02, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 40), Seed: seed, PulseWidth: 0.001, PulsePeak: 200,
	}
	return &pipeline.Recording{
		Meta: map[string]string{"operator": "test"},
		Channels: []pipeline.Channel{
			{Name: "force", Unit: "N", Role: pipeline.RoleForce, SampleRate: rate, Samples: h.Force()},
			{Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: rate, Samples: h.Response()},
		},
	}
}

// smallHitCSV is a quick-to-analyse hit (0.25 s at 2048 Hz) as CSV bytes.
func smallHitCSV(t testing.TB, seed uint64) []byte {
	return hitCSV(t, seed, 2048, 0.25)
}

func hitCSV(t testing.TB, seed uint64, rate, dur float64) []byte {
	t.Helper()
	var buf bytes.Buffer
	if err := read.WriteCSV(&buf, hitRecording(seed, rate, dur), read.WriteOptions{Digits: 6}); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

func writeFile(t testing.TB, path string, data []byte) {
	t.Helper()
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
}

func mkdir(t testing.TB, path string) string {
	t.Helper()
	if err := os.MkdirAll(path, 0o755); err != nil {
		t.Fatal(err)
	}
	return path
}

// ---------------------------------------------------------------------------
// Configuration

type daemonConfig struct {
	Database  string
	LogFile   string
	Settle    string // default "300ms"
	Scan      string // default "1s"
	Workers   int    // 0: one per CPU
	Folder    string
	Prototype string
	Revision  string
}

// writeConfig writes a TOML configuration into dir and returns its path.
func writeConfig(t testing.TB, dir string, c daemonConfig) string {
	t.Helper()
	if c.Settle == "" {
		c.Settle = "300ms"
	}
	if c.Scan == "" {
		c.Scan = "1s"
	}
	q := func(s string) string { b, _ := json.Marshal(s); return string(b) } // a TOML basic string
	var b strings.Builder
	fmt.Fprintf(&b, "database = %s\n", q(c.Database))
	if c.LogFile != "" {
		fmt.Fprintf(&b, "log_file = %s\n", q(c.LogFile))
	}
	fmt.Fprintf(&b, "log_level = \"debug\"\nsettle = %s\nscan_interval = %s\n", q(c.Settle), q(c.Scan))
	if c.Workers > 0 {
		fmt.Fprintf(&b, "workers = %d\n", c.Workers)
	}
	fmt.Fprintf(&b, "\n[[folder]]\npath = %s\n", q(c.Folder))
	if c.Prototype != "" {
		fmt.Fprintf(&b, "prototype = %s\n", q(c.Prototype))
	}
	if c.Revision != "" {
		fmt.Fprintf(&b, "revision = %s\n", q(c.Revision))
	}
	p := filepath.Join(dir, "ringlog.toml")
	writeFile(t, p, []byte(b.String()))
	return p
}

// setup is a test's working tree: an export folder, a database and a
// configuration naming both.
type setup struct {
	dir, export, dbPath, cfgPath, logPath string
}

func newSetup(t testing.TB, c daemonConfig) setup {
	t.Helper()
	dir := t.TempDir()
	s := setup{dir: dir, export: mkdir(t, filepath.Join(dir, "export")), dbPath: filepath.Join(dir, "history.db"),
		logPath: filepath.Join(dir, "ringlog.log")}
	c.Database, c.Folder, c.LogFile = s.dbPath, s.export, s.logPath
	s.cfgPath = writeConfig(t, dir, c)
	return s
}

// ---------------------------------------------------------------------------
// Processes

// syncBuffer is a bytes.Buffer safe for a process writing while the test
// reads.
type syncBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *syncBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *syncBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}

// daemon is a 'ringlog watch' process.
type daemon struct {
	t      testing.TB
	cmd    *exec.Cmd
	stderr *syncBuffer
	done   chan struct{}
	err    error // from Wait, valid once done is closed
}

// startDaemon starts 'ringlog watch --config cfg'. The test's cleanup kills
// it if it is still running.
func startDaemon(t testing.TB, cfg string, modify ...func(*exec.Cmd)) *daemon {
	t.Helper()
	d := &daemon{t: t, stderr: &syncBuffer{}, done: make(chan struct{})}
	d.cmd = exec.Command(ringlogBin, "watch", "--config", cfg)
	d.cmd.Stdout = d.stderr
	d.cmd.Stderr = d.stderr
	for _, f := range modify {
		f(d.cmd)
	}
	if err := d.cmd.Start(); err != nil {
		t.Fatalf("starting ringlog watch: %v", err)
	}
	go func() {
		d.err = d.cmd.Wait()
		close(d.done)
	}()
	t.Cleanup(func() {
		select {
		case <-d.done:
		default:
			_ = d.cmd.Process.Kill()
			<-d.done
		}
		if t.Failed() {
			t.Logf("daemon pid %d output:\n%s", d.cmd.Process.Pid, tail(d.stderr.String(), 6000))
		}
	})
	return d
}

func (d *daemon) pid() int { return d.cmd.Process.Pid }

func (d *daemon) running() bool {
	select {
	case <-d.done:
		return false
	default:
		return true
	}
}

// wait waits for the process to end and returns its exit code.
func (d *daemon) wait() int {
	d.t.Helper()
	select {
	case <-d.done:
	case <-time.After(waitLong):
		_ = d.cmd.Process.Kill()
		<-d.done
		d.t.Fatalf("daemon pid %d did not exit within %v; killed", d.pid(), waitLong)
	}
	return exitCode(d.err)
}

// waitReady waits until the daemon holds the writer lock of its database
// (status shows it running with its pid): it has opened the database and
// set up its watcher. Files already in the folder are found by its first
// scan either way.
func (d *daemon) waitReady(dbPath string) {
	d.t.Helper()
	waitFor(d.t, "daemon to hold the database lock", func() (bool, string) {
		if !d.running() {
			d.t.Fatalf("daemon exited early (%v):\n%s", d.err, d.stderr.String())
		}
		if !fileExists(dbPath) {
			return false, "no database yet"
		}
		st, err := statusOf(dbPath)
		if err != nil {
			return false, err.Error()
		}
		return st.DaemonRunning && st.DaemonPID == d.pid(), fmt.Sprintf("status %+v", st)
	})
}

// stop sends SIGTERM (or kills on Windows) and returns the exit code.
func (d *daemon) stop() int {
	d.t.Helper()
	if runtime.GOOS == "windows" {
		_ = d.cmd.Process.Kill()
	} else if err := d.cmd.Process.Signal(syscall.SIGTERM); err != nil {
		d.t.Fatalf("SIGTERM: %v", err)
	}
	return d.wait()
}

func exitCode(err error) int {
	if err == nil {
		return 0
	}
	var ee *exec.ExitError
	if errors.As(err, &ee) {
		return ee.ExitCode()
	}
	return -1
}

// ringlog runs the binary with args and returns its output and exit code.
func ringlog(t testing.TB, args ...string) (stdout, stderr string, code int) {
	t.Helper()
	var o, e bytes.Buffer
	code, err := ringlogErr(&o, &e, args...)
	if err != nil {
		t.Fatalf("ringlog %s: %v", strings.Join(args, " "), err)
	}
	return o.String(), e.String(), code
}

func ringlogErr(o, e *bytes.Buffer, args ...string) (int, error) {
	ctx, cancel := context.WithTimeout(context.Background(), waitLong)
	defer cancel()
	cmd := exec.CommandContext(ctx, ringlogBin, args...)
	cmd.Stdout, cmd.Stderr = o, e
	err := cmd.Run()
	if ctx.Err() != nil {
		return -1, fmt.Errorf("timed out after %v", waitLong)
	}
	var ee *exec.ExitError
	if err != nil && !errors.As(err, &ee) {
		return -1, err
	}
	return exitCode(err), nil
}

// ---------------------------------------------------------------------------
// Observing a database through the commands

// statusJSON is 'ringlog status --json'.
type statusJSON struct {
	Database      string         `json:"database"`
	Pending       int            `json:"pending"`
	Files         map[string]int `json:"files"`
	Hits          int            `json:"hits"`
	Verdicts      map[string]int `json:"verdicts"`
	DaemonRunning bool           `json:"daemon_running"`
	DaemonPID     int            `json:"daemon_pid"`
	LastError     *struct {
		File     string `json:"file"`
		Error    string `json:"error"`
		Attempts int    `json:"attempts"`
		Final    bool   `json:"final"`
	} `json:"last_error"`
}

// recorded is the number of files in a final state.
func (s statusJSON) recorded() int {
	return s.Files["analysed"] + s.Files["duplicate"] + s.Files["failed"]
}

func statusOf(dbPath string) (statusJSON, error) {
	var o, e bytes.Buffer
	code, err := ringlogErr(&o, &e, "status", "--db", dbPath, "--json")
	if err != nil {
		return statusJSON{}, err
	}
	if code != 0 {
		return statusJSON{}, fmt.Errorf("status exit %d: %s", code, e.String())
	}
	var st statusJSON
	if err := json.Unmarshal(o.Bytes(), &st); err != nil {
		return statusJSON{}, fmt.Errorf("status --json: %v: %q", err, o.String())
	}
	return st, nil
}

func mustStatus(t testing.TB, dbPath string) statusJSON {
	t.Helper()
	st, err := statusOf(dbPath)
	if err != nil {
		t.Fatal(err)
	}
	return st
}

// historyLine is one line of 'ringlog history --json'.
type historyLine struct {
	File      string            `json:"file"`
	SHA256    string            `json:"sha256"`
	Verdict   pipeline.Verdict  `json:"verdict"`
	Prototype string            `json:"prototype"`
	Revision  string            `json:"revision"`
	Modes     []pipeline.Mode   `json:"modes"`
	Reasons   []pipeline.Reason `json:"reasons"`
}

// history runs 'ringlog history --db dbPath --json args...'; no hits give
// an empty slice (the command says so on stderr and exits 0).
func history(t testing.TB, dbPath string, args ...string) []historyLine {
	t.Helper()
	out, errOut, code := ringlog(t, append([]string{"history", "--db", dbPath, "--json"}, args...)...)
	if code != 0 {
		t.Fatalf("history exit %d: %s", code, errOut)
	}
	return parseHistory(t, out)
}

func parseHistory(t testing.TB, out string) []historyLine {
	t.Helper()
	var hits []historyLine
	for _, line := range strings.Split(strings.TrimSpace(out), "\n") {
		if line == "" {
			continue
		}
		var h historyLine
		if err := json.Unmarshal([]byte(line), &h); err != nil {
			t.Fatalf("history --json line %q: %v", line, err)
		}
		hits = append(hits, h)
	}
	return hits
}

// waitFor polls cond until it holds or waitLong passes.
func waitFor(t testing.TB, what string, cond func() (ok bool, state string)) {
	t.Helper()
	deadline := time.Now().Add(waitLong)
	last := ""
	for {
		ok, state := cond()
		if ok {
			return
		}
		last = state
		if time.Now().After(deadline) {
			t.Fatalf("waited %v for %s; last state: %s", waitLong, what, last)
		}
		time.Sleep(100 * time.Millisecond)
	}
}

// waitRecorded waits until n files of the database are in a final state
// and none is pending.
func waitRecorded(t testing.TB, dbPath string, n int) statusJSON {
	t.Helper()
	var st statusJSON
	waitFor(t, fmt.Sprintf("%d files recorded", n), func() (bool, string) {
		var err error
		st, err = statusOf(dbPath)
		if err != nil {
			return false, err.Error()
		}
		return st.recorded() >= n && st.Pending == 0, fmt.Sprintf("%+v", st)
	})
	if st.recorded() != n {
		t.Fatalf("%d files recorded, want %d: %+v", st.recorded(), n, st)
	}
	return st
}

// integrityOK opens the database with the db package and runs
// PRAGMA integrity_check.
func integrityOK(t testing.TB, dbPath string) {
	t.Helper()
	ctx := context.Background()
	store, err := db.Open(ctx, dbPath)
	if err != nil {
		t.Fatal(err)
	}
	defer store.Close()
	res, err := store.IntegrityCheck(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if res != "ok" {
		t.Fatalf("integrity_check: %s", res)
	}
}

// fileStates reads the ingest queue rows of the given paths.
func fileStates(t testing.TB, dbPath string, paths ...string) map[string]db.FileState {
	t.Helper()
	ctx := context.Background()
	store, err := db.Open(ctx, dbPath)
	if err != nil {
		t.Fatal(err)
	}
	defer store.Close()
	out := map[string]db.FileState{}
	for _, p := range paths {
		fs, ok, err := store.File(ctx, p)
		if err != nil {
			t.Fatal(err)
		}
		if ok {
			out[p] = fs
		}
	}
	return out
}

func tail(s string, n int) string {
	if len(s) <= n {
		return s
	}
	return "..." + s[len(s)-n:]
}

// countLines counts the lines of s containing all of the parts.
func countLines(s string, parts ...string) int {
	n := 0
lines:
	for _, l := range strings.Split(s, "\n") {
		for _, p := range parts {
			if !strings.Contains(l, p) {
				continue lines
			}
		}
		n++
	}
	return n
}
