package db

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"testing"
	"time"

	"github.com/ringlog/ringlog/db/pgtest"
	"github.com/ringlog/ringlog/pipeline"
)

// backendEnv names the backend the db suite runs on: sqlite (the first
// pass) or postgres (the second pass, see TestMain).
const backendEnv = "RINGLOG_TEST_BACKEND"

// TestMain runs the suite on SQLite and then, when a PostgreSQL test
// server is configured (RINGLOG_TEST_POSTGRES, which .ci/run always sets),
// once more with openTemp giving PostgreSQL histories: every test written
// with openTemp runs on both backends.
func TestMain(m *testing.M) {
	first := os.Getenv(backendEnv) == ""
	if first {
		os.Setenv(backendEnv, "sqlite") // child processes of tests stay in this pass
	}
	code := m.Run()
	if !first {
		os.Exit(code)
	}
	if !pgtest.Available() {
		fmt.Println("db: " + pgtest.EnvURL + " is not set: the suite ran on SQLite only, PostgreSQL skipped")
		os.Exit(code)
	}
	fmt.Println("db: the suite again on PostgreSQL (" + pgtest.EnvURL + ")")
	cmd := exec.Command(os.Args[0], os.Args[1:]...)
	cmd.Env = append(os.Environ(), backendEnv+"=postgres")
	cmd.Stdout, cmd.Stderr = os.Stdout, os.Stderr
	if err := cmd.Run(); err != nil && code == 0 {
		code = 1
	}
	os.Exit(code)
}

// onPostgres reports whether this pass runs on PostgreSQL.
func onPostgres() bool { return os.Getenv(backendEnv) == "postgres" }

// openTemp opens a fresh history: an SQLite file in a temporary folder,
// or in the PostgreSQL pass a fresh schema on the test server.
func openTemp(t testing.TB) *DB {
	t.Helper()
	if onPostgres() {
		d, err := Open(context.Background(), pgtest.URL(t))
		if err != nil {
			t.Fatal(err)
		}
		t.Cleanup(func() {
			if err := d.Close(); err != nil {
				t.Error(err)
			}
		})
		return d
	}
	return openSQLite(t)
}

// openSQLite opens a fresh SQLite history in a temporary folder, for the
// tests of what only SQLite has (pragmas, files, the lock file).
func openSQLite(t testing.TB) *DB {
	t.Helper()
	d, err := Open(context.Background(), filepath.Join(t.TempDir(), "history.sqlite"))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() {
		if err := d.Close(); err != nil {
			t.Error(err)
		}
	})
	return d
}

func shaOf(s string) string {
	h := sha256.Sum256([]byte(s))
	return hex.EncodeToString(h[:])
}

func fileInfo(path, content string, mtime time.Time) FileInfo {
	return FileInfo{Path: path, Size: int64(len(content)), MTime: mtime, SHA256: shaOf(content)}
}

// sampleResult is a typical three-mode result as the analysis shapes it:
// reasons with and without a mode index, a dropped mode, estimates primary
// first, in-file metadata. The numbers are plausible, not computed.
func sampleResult(file string) *pipeline.Result {
	mode := func(f, z float64) pipeline.Mode {
		return pipeline.Mode{
			FrequencyHz:    f,
			FrequencyCI95:  [2]float64{f * 0.999, f * 1.001},
			DampingRatio:   z,
			DampingRatioCI: [2]float64{z * 0.9, z * 1.1},
			DampingRatioSD: z * 0.05,
			Amplitude:      1.5,
			EnergyShare:    0.3,
			Cycles:         42.5,
			DecaySNRdB:     48,
			Spread:         0.04,
			Estimates: []pipeline.Estimate{
				{Method: "nls", FrequencyHz: f, DampingRatio: z},
				{Method: "subspace", FrequencyHz: f * 1.0001, DampingRatio: z * 1.01},
				{Method: "envelope", FrequencyHz: f, DampingRatio: z * 0.98, Note: "stopped at 10x noise"},
				{Method: "logdec", FrequencyHz: f * 0.9999, DampingRatio: z * 1.03},
			},
		}
	}
	r := &pipeline.Result{
		File:            file,
		Format:          "csv",
		Channel:         "acc1",
		ForceChannel:    "hammer",
		SampleRate:      10240,
		DurationS:       2,
		NoiseRMS:        0.0012,
		WindowTauS:      0.5,
		Modes:           []pipeline.Mode{mode(48.2, 0.012), mode(131.7, 0.0061), mode(402.5, 0.0032)},
		Meta:            map[string]string{"operator": "kb", "tip": "medium"},
		AnalysisVersion: pipeline.AnalysisVersion,
	}
	r.Modes[1].Label = "bending-1"
	r.AddReason("excitation_band", pipeline.SeverityDrop, pipeline.ModeRef(2), "force spectrum %d dB down at %.0f Hz", 24, 402.5)
	r.AddReason("beating", pipeline.SeverityFlag, nil, "two modes close together")
	r.Decide()
	return r
}

var t0 = time.Date(2025, 3, 14, 9, 26, 53, 589793238, time.UTC)

func isWindows() bool { return runtime.GOOS == "windows" }
