package db

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"path/filepath"
	"runtime"
	"testing"
	"time"

	"github.com/ringlog/ringlog/pipeline"
)

// openTemp opens a fresh database in a temporary folder.
func openTemp(t testing.TB) *DB {
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
