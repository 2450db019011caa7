package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"

	"github.com/ringlog/ringlog/db/pgtest"
)

// labConfig writes the config of a bay recording into the PostgreSQL
// history at url, with its spool beside the config (the default).
func labConfig(t *testing.T, dir, url, bay, export string) string {
	t.Helper()
	q := func(s string) string { b, _ := json.Marshal(s); return string(b) }
	c := fmt.Sprintf("database = %s\nbay = %s\nlog_file = %s\nlog_level = \"debug\"\nsettle = \"200ms\"\nscan_interval = \"1s\"\nworkers = 2\n\n[[folder]]\npath = %s\nprototype = \"P7\"\n",
		q(url), q(bay), q(filepath.Join(dir, "ringlog.log")), q(export))
	p := filepath.Join(dir, "ringlog.toml")
	writeFile(t, p, []byte(c))
	return p
}

type labStatus struct {
	Hits       int    `json:"hits"`
	Error      string `json:"error"`
	BayDaemons []struct {
		Bay string `json:"bay"`
		PID int    `json:"pid"`
	} `json:"bay_daemons"`
	Forwarding *struct {
		Backlog   int    `json:"backlog"`
		Forwarded int    `json:"forwarded"`
		LastError string `json:"last_error"`
	} `json:"forwarding"`
}

func labStatusOf(args ...string) (labStatus, int, error) {
	var o, e bytes.Buffer
	code, err := ringlogErr(&o, &e, append([]string{"status", "--json"}, args...)...)
	if err != nil {
		return labStatus{}, code, err
	}
	var st labStatus
	if err := json.Unmarshal(o.Bytes(), &st); err != nil && code == 0 {
		return st, code, fmt.Errorf("status --json: %v: %q %s", err, o.String(), e.String())
	}
	return st, code, nil
}

// TestLabBayKilledDuringForwarding runs a bay daemon as a real process
// against a PostgreSQL history, kills it (SIGKILL) while it records and
// forwards a burst, and starts it again: the central history ends with
// every hit once, under the bay's name, and the spool's backlog is empty.
func TestLabBayKilledDuringForwarding(t *testing.T) {
	url := pgtest.URL(t)
	dir := t.TempDir()
	export := mkdir(t, filepath.Join(dir, "export"))
	cfg := labConfig(t, dir, url, "bay-2", export)
	const n = 40
	for i := 0; i < n; i++ {
		writeFile(t, filepath.Join(export, fmt.Sprintf("hit%03d.csv", i)), smallHitCSV(t, uint64(500+i)))
	}
	d := startDaemon(t, cfg)
	waitFor(t, "some hits in the central history", func() (bool, string) {
		st, _, err := labStatusOf("--db", url)
		if err != nil {
			return false, err.Error()
		}
		return st.Hits > 0, fmt.Sprintf("%+v", st)
	})
	if err := d.cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	d.wait()
	st, _, _ := labStatusOf("--config", cfg)
	t.Logf("killed with %d hits central, spool %+v", st.Hits, st.Forwarding)

	d2 := startDaemon(t, cfg)
	// the restarted daemon must be running before the stop below: all hits
	// may have been forwarded before the kill, so the next condition can
	// hold at once
	waitFor(t, "the restarted daemon running", func() (bool, string) {
		return strings.Contains(d2.stderr.String(), "ringlog daemon started"), tail(d2.stderr.String(), 500)
	})
	waitFor(t, "every hit forwarded", func() (bool, string) {
		st, _, err := labStatusOf("--config", cfg)
		if err != nil {
			return false, err.Error()
		}
		return st.Hits == n && st.Forwarding != nil && st.Forwarding.Backlog == 0, fmt.Sprintf("%+v %+v", st, st.Forwarding)
	})
	if code := d2.stop(); code != 0 {
		t.Errorf("daemon exit %d", code)
	}
	hits := history(t, url)
	seen := map[string]bool{}
	for _, h := range hits {
		if seen[h.SHA256] {
			t.Errorf("hit %s stored twice", h.File)
		}
		seen[h.SHA256] = true
		if !strings.HasPrefix(h.File, "bay-2:"+export) {
			t.Errorf("central path %q does not name the bay", h.File)
		}
	}
	if len(hits) != n {
		t.Errorf("central history has %d hits, want %d", len(hits), n)
	}
}

// TestLabTwoBaysAndALock runs two bay daemons recording into one
// PostgreSQL history at the same moment, and a third daemon configured for
// a bay already recorded, which must refuse to start.
func TestLabTwoBaysAndALock(t *testing.T) {
	url := pgtest.URL(t)
	var cfgs []string
	const n = 12
	for b, bay := range []string{"bay-2", "bay-3"} {
		dir := t.TempDir()
		export := mkdir(t, filepath.Join(dir, "export"))
		for i := 0; i < n; i++ {
			writeFile(t, filepath.Join(export, fmt.Sprintf("hit%03d.csv", i)), smallHitCSV(t, uint64(700+100*b+i)))
		}
		cfgs = append(cfgs, labConfig(t, dir, url, bay, export))
	}
	d2, d3 := startDaemon(t, cfgs[0]), startDaemon(t, cfgs[1])
	waitFor(t, "both bays' hits in the central history", func() (bool, string) {
		st, _, err := labStatusOf("--db", url)
		if err != nil {
			return false, err.Error()
		}
		return st.Hits == 2*n && len(st.BayDaemons) == 2, fmt.Sprintf("%+v", st)
	})
	// A second daemon for bay-2 (another folder, another spool) is refused.
	dir := t.TempDir()
	other := labConfig(t, dir, url, "bay-2", mkdir(t, filepath.Join(dir, "export")))
	d := startDaemon(t, other)
	if code := d.wait(); code == 0 {
		t.Fatal("a second daemon for bay-2 started")
	}
	if out := d.stderr.String(); !strings.Contains(out, `bay "bay-2"`) || !strings.Contains(out, fmt.Sprint(d2.pid())) {
		t.Errorf("refusal does not name the bay and the holder's pid %d:\n%s", d2.pid(), out)
	}
	for _, d := range []*daemon{d2, d3} {
		if code := d.stop(); code != 0 {
			t.Errorf("daemon exit %d", code)
		}
	}
	for _, bay := range []string{"bay-2", "bay-3"} {
		if hs := history(t, url, "--bay", bay); len(hs) != n {
			t.Errorf("%s: %d hits, want %d", bay, len(hs), n)
		}
	}
}

// TestLabServerAway starts a bay whose PostgreSQL server is not running:
// the daemon records into its spool, status shows the backlog and the
// error, and once the server is up the backlog is forwarded.
func TestLabServerAway(t *testing.T) {
	cl := pgtest.NewCluster(t)
	cl.Kill()
	dir := t.TempDir()
	export := mkdir(t, filepath.Join(dir, "export"))
	cfg := labConfig(t, dir, cl.URL(), "bay-5", export)
	const n = 6
	for i := 0; i < n; i++ {
		writeFile(t, filepath.Join(export, fmt.Sprintf("hit%03d.csv", i)), smallHitCSV(t, uint64(900+i)))
	}
	d := startDaemon(t, cfg)
	var code int
	waitFor(t, "the backlog shown while the server is away", func() (bool, string) {
		st, c, err := labStatusOf("--config", cfg)
		code = c
		if err != nil {
			return false, err.Error()
		}
		return st.Forwarding != nil && st.Forwarding.Backlog == n && st.Forwarding.LastError != "", fmt.Sprintf("%+v %+v", st, st.Forwarding)
	})
	if code == 0 {
		t.Error("status exits 0 while the central history cannot be reached")
	}
	cl.Start()
	waitFor(t, "the backlog forwarded", func() (bool, string) {
		st, _, err := labStatusOf("--config", cfg)
		if err != nil {
			return false, err.Error()
		}
		return st.Hits == n && st.Forwarding != nil && st.Forwarding.Backlog == 0 && st.Forwarding.LastError == "", fmt.Sprintf("%+v %+v", st, st.Forwarding)
	})
	if code := d.stop(); code != 0 {
		t.Errorf("daemon exit %d", code)
	}
	if _, err := os.Stat(filepath.Join(dir, defaultSpool)); err != nil {
		t.Errorf("no spool beside the config: %v", err)
	}
}

// TestWatchStoppedWhileStarting: a stop asked for while the daemon is still
// opening its database (a lab server that answers slowly, a bay lock still
// held by a killed daemon's session) ends it with exit status 0 and a
// message, not with the failure the cancelled start produces (the defect
// seen in TestLabBayKilledDuringForwarding: "listing pending files: context
// canceled", exit 1).
func TestWatchStoppedWhileStarting(t *testing.T) {
	s := newSetup(t, daemonConfig{})
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	var o, e bytes.Buffer
	code := run(ctx, &env{stdout: &o, stderr: &e}, []string{"watch", "--config", s.cfgPath})
	if code != exitOK {
		t.Fatalf("exit %d, want %d: %s", code, exitOK, e.String())
	}
	if !strings.Contains(e.String(), "stopped while starting") {
		t.Errorf("no word of the stop: %q", e.String())
	}
}
