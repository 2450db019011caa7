package main

// Tests of defects found by trying ringlog as a new user and as an
// attacker would: each failed before its fix.

import (
	"bytes"
	"context"
	"database/sql"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"sync/atomic"
	"testing"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/check"
	"github.com/ringlog/ringlog/pipeline/read"
)

// TestQueryCommandsNeverCreateADatabase: read-only commands open the
// history read-only; on an empty file they fail and leave it empty, on a
// missing path they create nothing.
func TestQueryCommandsNeverCreateADatabase(t *testing.T) {
	dir := t.TempDir()
	empty := filepath.Join(dir, "empty.db")
	writeFile(t, empty, nil)
	missing := filepath.Join(dir, "missing.db")
	for _, args := range [][]string{
		{"status", "--db"}, {"history", "--db"}, {"stats", "--prototype", "P", "--db"}, {"report", "daily", "--out", filepath.Join(dir, "d.html"), "--db"},
	} {
		for _, p := range []string{empty, missing} {
			a := append(append([]string(nil), args...), p)
			_, stderr, code := ringlog(t, a...)
			if code != exitFailure {
				t.Errorf("ringlog %s: exit %d, want %d\n%s", strings.Join(a, " "), code, exitFailure, stderr)
			}
		}
		if fi, err := os.Stat(empty); err != nil || fi.Size() != 0 {
			t.Fatalf("ringlog %s wrote into an empty file: %v", strings.Join(args, " "), err)
		}
		if fileExists(missing) {
			t.Fatalf("ringlog %s created %s", strings.Join(args, " "), missing)
		}
	}
}

// TestAnalyzeAnyMetadataValue: no metadata value makes analyze panic or
// print an error object without "file"; a value that makes the file
// unusable is an error naming it (exit 1). "# sample_rate: 4.9e-324"
// used to panic in the spectral peak search.
func TestAnalyzeAnyMetadataValue(t *testing.T) {
	var body bytes.Buffer
	if err := read.WriteCSV(&body, hitRecording(3, 2048, 0.25), read.WriteOptions{Digits: 6, NoSampleRate: true}); err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	values := []string{"4.9e-324", "1e-320", "2.2250738585072014e-308", "1e-300", "1e308", "-1e308", "1.7976931348623157e308",
		"0", "-0", "NaN", "Inf", "-Inf", "1e-9", "", "x", "2048 kHz", strings.Repeat("9", 400)}
	keys := []string{"sample_rate", "dt", "full_scale", "hit_time", "prototype", "window_tau"}
	n := 0
	for _, k := range keys {
		for _, v := range values {
			n++
			head := "# " + k + ": " + v + "\n"
			if k != "sample_rate" && k != "dt" {
				head += "# sample_rate: 2048\n"
			}
			f := filepath.Join(dir, fmt.Sprintf("m%03d.csv", n))
			writeFile(t, f, append([]byte(head), body.Bytes()...))
			var o, e bytes.Buffer
			code := run(context.Background(), &env{stdout: &o, stderr: &e, stdin: strings.NewReader("")}, []string{"analyze", "--json", f})
			if code != exitOK && code != exitFailure {
				t.Errorf("%s = %q: exit %d\n%s", k, v, code, e.String())
			}
			var obj map[string]any
			if err := json.Unmarshal(o.Bytes(), &obj); err != nil {
				t.Errorf("%s = %q: output is not one JSON object: %v: %q", k, v, err, o.String())
				continue
			}
			if obj["file"] != f {
				t.Errorf("%s = %q: JSON \"file\" = %v, want %s", k, v, obj["file"], f)
			}
			if _, isErr := obj["error"]; isErr != (code == exitFailure) {
				t.Errorf("%s = %q: exit %d but error object %v", k, v, code, isErr)
			}
		}
	}
}

// TestAnalyzeNonFiniteIsAnError: a UFF file whose abscissa step makes the
// duration infinite printed {"error":"json: unsupported value: +Inf"}
// without "file" and exited 0.
func TestAnalyzeNonFiniteIsAnError(t *testing.T) {
	src, err := os.ReadFile(filepath.Join(moduleRoot, "testdata", "read", "decay-ascii.uff"))
	if err != nil {
		t.Fatal(err)
	}
	f := filepath.Join(t.TempDir(), "step.uff")
	writeFile(t, f, bytes.ReplaceAll(src, []byte("4.88281E-04"), []byte("1.0E+306")))
	stdout, stderr, code := ringlog(t, "analyze", "--json", f)
	if code != exitFailure {
		t.Errorf("exit %d, want %d", code, exitFailure)
	}
	var obj map[string]any
	if err := json.Unmarshal([]byte(stdout), &obj); err != nil || obj["file"] != f || obj["error"] == nil {
		t.Errorf("JSON error object without the file: %q (%v)", stdout, err)
	}
	if !strings.Contains(stderr, f) {
		t.Errorf("stderr does not name the file: %q", stderr)
	}
}

// TestAnalyzeResultCheckedFinite: checkFinite finds a NaN or an infinity
// anywhere in a result, which could be neither stored nor printed.
func TestAnalyzeResultCheckedFinite(t *testing.T) {
	res := &pipeline.Result{File: "a.csv", SampleRate: 2048, DurationS: math.Inf(1)}
	if err := checkFinite("a.csv", res); err == nil || !strings.HasPrefix(err.Error(), "a.csv: ") {
		t.Errorf("infinite duration: err = %v", err)
	}
	res.DurationS = 1
	res.Modes = []pipeline.Mode{{FrequencyHz: 10, DampingRatio: math.NaN()}}
	if err := checkFinite("a.csv", res); err == nil {
		t.Error("NaN damping ratio passed")
	}
	res.Modes[0].DampingRatio = 0.01
	if err := checkFinite("a.csv", res); err != nil {
		t.Errorf("finite result: %v", err)
	}
}

// TestServiceInstallMessage: on a machine without systemd 'service
// install' said it wrote a systemd unit while it wrote a SysV script
// without restart on failure.
func TestServiceInstallMessage(t *testing.T) {
	sysv := installMessage("linux-sysv", "bay3", "/usr/local/bin/ringlog", "/etc/ringlog/bay3.toml")
	for _, want := range []string{"no systemd", "/etc/init.d/bay3", "does not restart", "/usr/local/bin/ringlog watch --config /etc/ringlog/bay3.toml"} {
		if !strings.Contains(sysv, want) {
			t.Errorf("sysv message %q lacks %q", sysv, want)
		}
	}
	if strings.Contains(sysv, "systemd unit") || strings.Contains(sysv, ".service") {
		t.Errorf("sysv message claims a systemd unit: %q", sysv)
	}
	sd := installMessage("linux-systemd", "bay3", "/usr/local/bin/ringlog", "/etc/ringlog/bay3.toml")
	if !strings.Contains(sd, "/etc/systemd/system/bay3.service") || !strings.Contains(sd, "Restart=on-failure") {
		t.Errorf("systemd message %q", sd)
	}
	if other := installMessage("unix-systemv", "x", "/r", "/c"); !strings.Contains(other, "not systemd") {
		t.Errorf("unknown system message %q", other)
	}
}

// TestDaemonMissingFolderRetried: a watched folder missing at start (a
// recorder share offline at boot) stopped the daemon; now it warns, looks
// again at every scan and records the files once the folder is there.
func TestDaemonMissingFolderRetried(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	missing := filepath.Join(dir, "share", "export")
	dbPath := filepath.Join(dir, "h.db")
	cfg := writeConfig(t, dir, daemonConfig{Database: dbPath, Folder: missing, Scan: "200ms"})
	d := startDaemon(t, cfg)
	d.waitReady(dbPath)
	if !strings.Contains(d.stderr.String(), "cannot be read now") || !strings.Contains(d.stderr.String(), missing) {
		t.Errorf("no warning naming the missing folder:\n%s", d.stderr.String())
	}
	stdout, _, _ := ringlog(t, "status", "--config", cfg)
	if !strings.Contains(stdout, missing) || !strings.Contains(stdout, "cannot be read") {
		t.Errorf("status does not show the folder's trouble:\n%s", stdout)
	}
	mkdir(t, missing)
	writeFile(t, filepath.Join(missing, "hit.csv"), smallHitCSV(t, 5))
	waitRecorded(t, dbPath, 1)
	stdout, _, _ = ringlog(t, "status", "--config", cfg)
	if !strings.Contains(stdout, missing) || strings.Contains(stdout, "cannot be read") {
		t.Errorf("status once the folder is there:\n%s", stdout)
	}
	if code := d.stop(); code != 0 {
		t.Errorf("exit status %d, want 0", code)
	}
}

// TestDaemonRefusesDatabaseInWatchedFolder: the daemon read its own WAL
// for ever when the database lay in a watched folder.
func TestDaemonRefusesDatabaseInWatchedFolder(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	export := mkdir(t, filepath.Join(dir, "export"))
	for _, dbPath := range []string{filepath.Join(export, "h.db"), filepath.Join(export, "sub", "h.db")} {
		mkdir(t, filepath.Dir(dbPath))
		cfg := writeConfig(t, dir, daemonConfig{Database: dbPath, Folder: export})
		if strings.Contains(dbPath, "sub") {
			b, _ := os.ReadFile(cfg)
			writeFile(t, cfg, append(b, []byte("recursive = true\n")...))
		}
		d := startDaemon(t, cfg)
		if code := d.wait(); code != exitFailure {
			t.Errorf("%s: exit status %d, want %d", dbPath, code, exitFailure)
		}
		if msg := d.stderr.String(); !strings.Contains(msg, "inside the watched folder") {
			t.Errorf("%s: message %q", dbPath, msg)
		}
		if fileExists(dbPath) {
			t.Errorf("%s was created", dbPath)
		}
	}
}

// TestDaemonDatabaseDeletedOrReplaced: a database file deleted under the
// running daemon was written into silently (and lost). The daemon now
// notices a deleted or replaced file and stops non-zero naming it, so its
// service manager restarts it on the file now there.
func TestDaemonDatabaseDeletedOrReplaced(t *testing.T) {
	if runtime.GOOS == "windows" {
		t.Skip("Windows does not let an open file be deleted or replaced")
	}
	t.Parallel()
	for _, how := range []string{"deleted", "replaced"} {
		t.Run(how, func(t *testing.T) {
			t.Parallel()
			s := newSetup(t, daemonConfig{})
			d := startDaemon(t, s.cfgPath)
			d.waitReady(s.dbPath)
			writeFile(t, filepath.Join(s.export, "a.csv"), smallHitCSV(t, 11))
			waitRecorded(t, s.dbPath, 1)
			if how == "deleted" {
				for _, suffix := range []string{"", "-wal", "-shm"} {
					os.Remove(s.dbPath + suffix)
				}
			} else {
				other := filepath.Join(s.dir, "other.db")
				writeFile(t, other, []byte("not the daemon's database"))
				if err := os.Rename(other, s.dbPath); err != nil {
					t.Fatal(err)
				}
			}
			if code := d.wait(); code != exitFailure {
				t.Errorf("exit status %d, want %d", code, exitFailure)
			}
			if msg := d.stderr.String(); !strings.Contains(msg, "was "+how) || !strings.Contains(msg, s.dbPath) {
				t.Errorf("message does not say the database %s was %s:\n%s", s.dbPath, how, tail(msg, 2000))
			}
		})
	}
}

// TestStatusFailed: failed files were visible only as the last error;
// 'status --failed' lists each with its error (also as JSON).
func TestStatusFailed(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	dbPath := filepath.Join(dir, "h.db")
	good, bad1, bad2 := filepath.Join(dir, "good.csv"), filepath.Join(dir, "bad1.csv"), filepath.Join(dir, "bad2.csv")
	writeFile(t, good, smallHitCSV(t, 9))
	writeFile(t, bad1, []byte("force,accel\n1,2\n3,oops\n"))
	writeFile(t, bad2, append([]byte("# sample_rate: 1000\nforce,accel\n0,"), bytes.Repeat([]byte("z"), 1<<20)...))
	ringlog(t, "ingest", "--db", dbPath, good, bad1, bad2)
	stdout, stderr, code := ringlog(t, "status", "--db", dbPath, "--failed")
	if code != 0 || !strings.Contains(stdout, bad1+": ") || !strings.Contains(stdout, bad2+": ") || strings.Contains(stdout, good) {
		t.Errorf("status --failed: exit %d\n%s%s", code, stdout, stderr)
	}
	for _, p := range []string{bad1, bad2} {
		if n := strings.Count(stdout, p); n != 1 {
			t.Errorf("status --failed names %s %d times, want once:\n%s", p, n, stdout)
		}
	}
	if len(stdout) > 2*maxErrorText+2000 {
		t.Errorf("status --failed printed %d bytes: the 1 MB cell was not clipped", len(stdout))
	}
	stdout, _, _ = ringlog(t, "status", "--db", dbPath, "--failed", "--json")
	var out struct {
		Failed []struct {
			File  string `json:"file"`
			Error string `json:"error"`
		} `json:"failed"`
	}
	if err := json.Unmarshal([]byte(stdout), &out); err != nil || len(out.Failed) != 2 {
		t.Fatalf("status --failed --json: %v: %s", err, stdout)
	}
	for _, f := range out.Failed {
		if f.Error == "" || !strings.HasPrefix(f.Error, f.File) {
			t.Errorf("failed entry %+v: the error should name the file", f)
		}
	}
}

// TestDaemonExitStatusAtExit: after a storage error that has since
// cleared, the daemon's exit status stayed 1. A write lock held by another
// process past the busy timeout makes one store fail; the file is stored
// at the next scan, and a stop then exits 0.
func TestDaemonExitStatusAtExit(t *testing.T) {
	if testing.Short() {
		t.Skip("waits out the database busy timeout (10 s)")
	}
	t.Parallel()
	s := newSetup(t, daemonConfig{})
	d := startDaemon(t, s.cfgPath)
	d.waitReady(s.dbPath)
	other, err := sql.Open("sqlite", s.dbPath)
	if err != nil {
		t.Fatal(err)
	}
	defer other.Close()
	ctx := context.Background()
	conn, err := other.Conn(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := conn.ExecContext(ctx, "BEGIN IMMEDIATE"); err != nil {
		t.Fatal(err)
	}
	writeFile(t, filepath.Join(s.export, "a.csv"), smallHitCSV(t, 21))
	waitFor(t, "a store error while the lock is held", func() (bool, string) {
		return strings.Contains(d.stderr.String(), "could not store result"), tail(d.stderr.String(), 500)
	})
	if _, err := conn.ExecContext(ctx, "ROLLBACK"); err != nil {
		t.Fatal(err)
	}
	conn.Close()
	waitRecorded(t, s.dbPath, 1)
	if code := d.stop(); code != 0 {
		t.Errorf("exit status %d after the storage error cleared, want 0", code)
	}
}

// TestHelpShowsDoubleDash: -h showed "-flag" while the README and the
// synopsis show "--flag".
func TestHelpShowsDoubleDash(t *testing.T) {
	for _, c := range []string{"analyze", "watch", "status", "ingest", "rules"} {
		var o, e bytes.Buffer
		code := run(context.Background(), &env{stdout: &o, stderr: &e, stdin: strings.NewReader("")}, []string{c, "-h"})
		if code != exitOK {
			t.Errorf("%s -h: exit %d", c, code)
		}
		lines := strings.Split(e.String(), "\n")
		n := 0
		for _, l := range lines {
			if strings.HasPrefix(l, "  -") {
				n++
				if !strings.HasPrefix(l, "  --") {
					t.Errorf("%s -h: option line %q has one dash", c, l)
				}
			}
		}
		if n == 0 {
			t.Errorf("%s -h lists no option:\n%s", c, e.String())
		}
	}
}

// TestRulesShowValues: 'ringlog rules' named the thresholds without the
// default values the README promised; with --config it shows the values in
// force beside the defaults.
func TestRulesShowValues(t *testing.T) {
	dir := t.TempDir()
	def := check.DefaultThresholds().ClipFlatRun
	cfg := filepath.Join(dir, "c.toml")
	writeFile(t, cfg, []byte(fmt.Sprintf("database = \"h.db\"\n[[folder]]\npath = \".\"\n[thresholds]\nclip_flat_run = %d\n", def+4)))
	var o, e bytes.Buffer
	if code := run(context.Background(), &env{stdout: &o, stderr: &e}, []string{"rules"}); code != 0 {
		t.Fatalf("rules: exit %d: %s", code, e.String())
	}
	if want := fmt.Sprintf("clip_flat_run = %d\n", def); !strings.Contains(o.String(), want) {
		t.Errorf("rules does not show %q:\n%s", want, o.String())
	}
	if strings.Contains(o.String(), "not set") {
		t.Errorf("a threshold without a value:\n%s", o.String())
	}
	o.Reset()
	if code := run(context.Background(), &env{stdout: &o, stderr: &e}, []string{"rules", "--config", cfg}); code != 0 {
		t.Fatalf("rules --config: exit %d: %s", code, e.String())
	}
	if want := fmt.Sprintf("clip_flat_run = %d (default %d)", def+4, def); !strings.Contains(o.String(), want) {
		t.Errorf("rules --config does not show %q:\n%s", want, o.String())
	}
}

// TestConfigControlCharacterInPath: database = "C:\ringlog\test.db" in
// TOML silently became a path with a carriage return and a tab in it.
func TestConfigControlCharacterInPath(t *testing.T) {
	dir := t.TempDir()
	for _, body := range []string{
		"database = \"C:\\ringlog\\test.db\"\n[[folder]]\npath = \".\"\n",
		"database = \"h.db\"\n[[folder]]\npath = \"D:\\export\\new\"\n",
	} {
		p := filepath.Join(dir, "c.toml")
		writeFile(t, p, []byte(body))
		_, err := loadConfig(p)
		if err == nil || !strings.Contains(err.Error(), "control character") || !strings.Contains(err.Error(), "forward slashes") ||
			!strings.Contains(err.Error(), "single quotes") {
			t.Errorf("%q: err = %v", body, err)
		}
	}
	p := filepath.Join(dir, "ok.toml")
	writeFile(t, p, []byte("database = 'C:\\ringlog\\test.db'\n[[folder]]\npath = \"D:/export\"\n"))
	if _, err := loadConfig(p); err != nil {
		t.Errorf("single quotes and forward slashes: %v", err)
	}
}

// TestWAVWithoutNamesPicksImpulsiveForce: a two-channel WAV without
// channel names (hammer first) was analysed on the hammer channel and
// rejected with a message blaming the accelerometer. The impulsive channel
// is now the force, and the output says which channel was analysed.
func TestWAVWithoutNamesPicksImpulsiveForce(t *testing.T) {
	rec := hitRecording(17, 4096, 0.5) // force first, then the response
	for i := range rec.Channels {      // into the WAV range of +-1, as a recorder scales its inputs
		c := &rec.Channels[i]
		peak := 0.0
		for _, v := range c.Samples {
			peak = max(peak, math.Abs(v))
		}
		for k := range c.Samples {
			c.Samples[k] *= 0.5 / peak
		}
	}
	var b bytes.Buffer
	if err := read.WriteWAV(&b, rec, 16, false); err != nil {
		t.Fatal(err)
	}
	f := filepath.Join(t.TempDir(), "hit.wav")
	writeFile(t, f, b.Bytes())
	var o, e bytes.Buffer
	if code := run(context.Background(), &env{stdout: &o, stderr: &e}, []string{"analyze", "--json", f}); code != 0 {
		t.Fatalf("exit %d: %s%s", code, o.String(), e.String())
	}
	var res struct {
		Channel      string            `json:"channel"`
		ForceChannel string            `json:"force_channel"`
		Verdict      string            `json:"verdict"`
		Meta         map[string]string `json:"meta"`
	}
	if err := json.Unmarshal(o.Bytes(), &res); err != nil {
		t.Fatal(err)
	}
	if res.Channel != "ch2" || res.ForceChannel != "ch1" || res.Verdict == "rejected" {
		t.Errorf("analysed %q with force %q, verdict %s; want ch2 with force ch1, not rejected", res.Channel, res.ForceChannel, res.Verdict)
	}
	if !strings.Contains(res.Meta["force_channel_picked"], "ch1") {
		t.Errorf("meta does not say the force channel was picked: %v", res.Meta)
	}
	o.Reset()
	run(context.Background(), &env{stdout: &o, stderr: &e}, []string{"analyze", f})
	if !strings.Contains(o.String(), "analysed channel ch2") {
		t.Errorf("human output does not say which channel was analysed:\n%s", o.String())
	}
}

// TestDemoFollowUpCommand: after 'go run ./cmd/ringlog demo' the printed
// follow-up commands named 'ringlog', which is not on the PATH. The
// command printed is now one that runs this program.
func TestDemoFollowUpCommand(t *testing.T) {
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	empty := t.TempDir()
	t.Setenv("PATH", empty)
	got := selfCommand()
	if got == "ringlog" {
		t.Fatalf("selfCommand = %q with no ringlog on the PATH", got)
	}
	if got != shellQuote(exe) && !strings.HasPrefix(got, "go run ") {
		t.Errorf("selfCommand = %q, want the program's path %s", got, exe)
	}
	if runtime.GOOS == "windows" {
		return
	}
	if err := os.Symlink(exe, filepath.Join(empty, "ringlog")); err != nil {
		t.Fatal(err)
	}
	if got := selfCommand(); got != "ringlog" {
		t.Errorf("selfCommand = %q with this program on the PATH as ringlog, want ringlog", got)
	}
	if q := shellQuote("/tmp/my demo/h.db"); q != "'/tmp/my demo/h.db'" {
		t.Errorf("shellQuote = %s", q)
	}
}

// TestFutureHitTimeFlagged: a hit time in the future passed without
// comment. Ingest a file whose hit_time is a year ahead: it is flagged
// with the reason, a file of today is not.
func TestFutureHitTimeFlagged(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	dbPath := filepath.Join(dir, "h.db")
	future := time.Now().AddDate(1, 0, 0).Format("2006-01-02 15:04:05")
	fut, now := filepath.Join(dir, "future.csv"), filepath.Join(dir, "now.csv")
	writeFile(t, fut, append([]byte("# hit_time: "+future+"\n"), smallHitCSV(t, 31)...))
	writeFile(t, now, smallHitCSV(t, 32))
	if _, stderr, code := ringlog(t, "ingest", "--db", dbPath, "--prototype", "P", fut, now); code != 0 {
		t.Fatalf("ingest: exit %d\n%s", code, stderr)
	}
	stdout, _, _ := ringlog(t, "history", "--db", dbPath, "--json")
	n := 0
	for _, line := range strings.Split(strings.TrimSpace(stdout), "\n") {
		var h struct {
			File    string `json:"file"`
			Verdict string `json:"verdict"`
			Reasons []struct {
				Code string `json:"code"`
			} `json:"reasons"`
		}
		if err := json.Unmarshal([]byte(line), &h); err != nil {
			t.Fatalf("%v: %s", err, line)
		}
		flagged := false
		for _, r := range h.Reasons {
			flagged = flagged || r.Code == reasonFutureHitTime
		}
		if want := h.File == fut; flagged != want {
			t.Errorf("%s: future-time flag %v, want %v (verdict %s)", h.File, flagged, want, h.Verdict)
		}
		if h.File == fut && h.Verdict == "accepted" {
			t.Errorf("%s: verdict accepted with a hit time a year ahead", h.File)
		}
		n++
	}
	if n != 2 {
		t.Errorf("history has %d hits, want 2:\n%s", n, stdout)
	}
}

// TestReleaseWhenIdle: memory stayed high after a burst; the daemon now
// gives it back once per burst, after the idle time.
func TestReleaseWhenIdle(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	var last atomic.Int64
	var calls atomic.Int32
	done := make(chan struct{})
	go func() {
		defer close(done)
		releaseWhenIdle(ctx, last.Load, 40*time.Millisecond, func() { calls.Add(1) })
	}()
	time.Sleep(150 * time.Millisecond)
	if n := calls.Load(); n != 0 {
		t.Errorf("released %d times before any work", n)
	}
	last.Store(time.Now().UnixNano())
	deadline := time.Now().Add(10 * time.Second)
	for calls.Load() == 0 && time.Now().Before(deadline) {
		time.Sleep(10 * time.Millisecond)
	}
	time.Sleep(200 * time.Millisecond) // idle on: no second release for the same burst
	if n := calls.Load(); n != 1 {
		t.Errorf("released %d times after one burst, want 1", n)
	}
	last.Store(time.Now().UnixNano())
	deadline = time.Now().Add(10 * time.Second)
	for calls.Load() == 1 && time.Now().Before(deadline) {
		time.Sleep(10 * time.Millisecond)
	}
	if n := calls.Load(); n != 2 {
		t.Errorf("released %d times after two bursts, want 2", n)
	}
	cancel()
	<-done
}

// TestStatusJSONKeysAlwaysPresent: keys the README documents for
// 'status --json' were left out when empty.
func TestStatusJSONKeysAlwaysPresent(t *testing.T) {
	dbPath := filepath.Join(t.TempDir(), "h.db")
	store, err := db.Open(context.Background(), dbPath)
	if err != nil {
		t.Fatal(err)
	}
	store.Close()
	stdout, stderr, code := ringlog(t, "status", "--db", dbPath, "--json")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	var obj map[string]json.RawMessage
	if err := json.Unmarshal([]byte(stdout), &obj); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"database", "pending", "files", "hits", "verdicts", "schema", "daemon_running",
		"daemon_pid", "daemon_since", "last_hit", "last_error", "folders"} {
		if _, ok := obj[k]; !ok {
			t.Errorf("key %q missing: %s", k, stdout)
		}
	}
}
