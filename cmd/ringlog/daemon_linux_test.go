package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"syscall"
	"testing"
)

// TestDaemonUnreadableFile runs the daemon as a real process that cannot
// read one file of the export folder (mode 000; as root the daemon runs as
// user nobody, since root reads anything). The file is not recorded, neither
// as a hit nor as failed, while the daemon retries opening it; the other
// files are recorded meanwhile; once the file becomes readable it is
// recorded like any other. (That a file which stays unreadable through all
// retries is recorded as failed with its reason is shown by
// TestDaemonUnopenableFileRecordedFailed: the default retries take minutes.)
func TestDaemonUnreadableFile(t *testing.T) {
	t.Parallel()
	var as func(*exec.Cmd)
	uid, gid := os.Getuid(), os.Getgid()
	if uid == 0 {
		const nobody = 65534 // user and group nobody on Debian-like systems
		uid, gid = nobody, nobody
		cred := &syscall.Credential{Uid: nobody, Gid: nobody}
		as = func(c *exec.Cmd) { c.SysProcAttr = &syscall.SysProcAttr{Credential: cred} }
		probe := exec.Command(ringlogBin, "version")
		as(probe)
		if out, err := probe.CombinedOutput(); err != nil {
			t.Skipf("cannot run ringlog as uid %d here (%v %s); no real-process permission test", nobody, err, out)
		}
	} else {
		as = func(*exec.Cmd) {}
	}

	// Under os.MkdirTemp, not t.TempDir: the other user must reach it.
	base, err := os.MkdirTemp("", "ringlog-perm-")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(base) })
	if err := os.Chmod(base, 0o755); err != nil {
		t.Fatal(err)
	}
	export := mkdir(t, filepath.Join(base, "export"))
	dbDir := mkdir(t, filepath.Join(base, "db"))
	if err := os.Chown(dbDir, uid, gid); err != nil {
		t.Fatal(err)
	}
	dbPath := filepath.Join(dbDir, "history.db")
	cfg := writeConfig(t, base, daemonConfig{Database: dbPath, LogFile: filepath.Join(dbDir, "ringlog.log"), Folder: export})

	good := filepath.Join(export, "good.csv")
	locked := filepath.Join(export, "locked.csv")
	want := map[string][]byte{good: smallHitCSV(t, 61), locked: smallHitCSV(t, 62)}
	writeFile(t, good, want[good])
	writeFile(t, locked, want[locked])
	if err := os.Chmod(locked, 0); err != nil {
		t.Fatal(err)
	}

	// Every process touching the database runs as the daemon's user, so
	// that no -wal or -shm file is created that the daemon cannot write.
	tryStatus := func() (statusJSON, error) {
		var o, e bytes.Buffer
		cmd := exec.Command(ringlogBin, "status", "--db", dbPath, "--json")
		as(cmd)
		cmd.Stdout, cmd.Stderr = &o, &e
		if err := cmd.Run(); err != nil {
			return statusJSON{}, fmt.Errorf("status: %v: %s", err, e.String())
		}
		var st statusJSON
		if err := json.Unmarshal(o.Bytes(), &st); err != nil {
			return statusJSON{}, fmt.Errorf("status --json %q: %v", o.String(), err)
		}
		return st, nil
	}
	status := func() statusJSON {
		t.Helper()
		st, err := tryStatus()
		if err != nil {
			t.Fatal(err)
		}
		return st
	}

	d := startDaemon(t, cfg, as)
	waitFor(t, "the readable file recorded", func() (bool, string) {
		if !d.running() {
			t.Fatalf("daemon exited (%v):\n%s", d.err, d.stderr.String())
		}
		if !fileExists(dbPath) {
			return false, "no database yet"
		}
		// the file exists before the daemon has set up its schema, which
		// a read-only status refuses: that is "not yet", not a failure
		st, err := tryStatus()
		if err != nil {
			return false, err.Error()
		}
		return st.Files["analysed"] == 1, fmt.Sprintf("%+v", st)
	})
	// Let it fail to open the unreadable file at least twice.
	waitFor(t, "two failed opens logged", func() (bool, string) {
		n := countLines(d.stderr.String(), locked, "permission denied")
		return n >= 2, fmt.Sprintf("%d log lines", n)
	})
	if st := status(); st.Files["failed"] != 0 || st.Pending != 0 || st.Hits != 1 || st.LastError != nil {
		t.Errorf("while the file is unreadable: %+v (last error %+v); want only the readable file recorded", st, st.LastError)
	}

	if err := os.Chmod(locked, 0o644); err != nil {
		t.Fatal(err)
	}
	waitFor(t, "the file recorded once readable", func() (bool, string) {
		st := status()
		return st.Files["analysed"] == 2 && st.Pending == 0, fmt.Sprintf("%+v", st)
	})
	if code := d.stop(); code != 0 {
		t.Errorf("daemon exit status %d, want 0", code)
	}
	if st := status(); st.Files["failed"] != 0 || st.LastError != nil {
		t.Errorf("status %+v (last error %+v); want no failure", st, st.LastError)
	}
	checkOncePerFile(t, history(t, dbPath), want)
}

// TestDaemonIgnoresFIFOAndFolders: a named pipe and a folder named like data
// files are not files to analyse. Opening the pipe for reading would block
// until a writer came; the daemon must neither hang on it nor record it.
func TestDaemonIgnoresFIFOAndFolders(t *testing.T) {
	t.Parallel()
	s := newSetup(t, daemonConfig{})
	fifo := filepath.Join(s.export, "pipe.csv")
	if err := syscall.Mkfifo(fifo, 0o644); err != nil {
		t.Skipf("cannot make a FIFO here: %v", err)
	}
	trap := mkdir(t, filepath.Join(s.export, "trap.csv"))
	d := startDaemon(t, s.cfgPath)
	d.waitReady(s.dbPath)
	good := filepath.Join(s.export, "good.csv")
	writeFile(t, good, smallHitCSV(t, 71))

	st := waitRecorded(t, s.dbPath, 1)
	if len(st.Files) != 1 || st.Files["analysed"] != 1 || st.LastError != nil {
		t.Errorf("status %+v (last error %+v); want only the good file", st, st.LastError)
	}
	if got := fileStates(t, s.dbPath, fifo, trap); len(got) != 0 {
		t.Errorf("recorded: %+v", got)
	}
	if code := d.stop(); code != 0 {
		t.Errorf("daemon exit status %d, want 0", code)
	}
}
