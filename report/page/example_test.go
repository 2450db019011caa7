package page_test

import (
	"bytes"
	"context"
	"crypto/sha256"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/process"
	"github.com/ringlog/ringlog/pipeline/read"
	"github.com/ringlog/ringlog/pipeline/synth"
	"github.com/ringlog/ringlog/report/page"
)

// ExampleDaily records one simulated hit in a new history and writes the
// daily summary of its day.
func ExampleDaily() {
	ctx := context.Background()
	dir, _ := os.MkdirTemp("", "ringlog-example-")
	defer os.RemoveAll(dir)

	// One hit of an invented bracket: two modes, written as CSV.
	modes := []synth.Mode{{FrequencyHz: 62, DampingRatio: 0.012, Amplitude: 1}, {FrequencyHz: 230, DampingRatio: 0.008, Amplitude: 0.5}}
	h := synth.Hit{SampleRate: 2048, Duration: 2, PreTrigger: 0.05, Modes: modes, NoiseSD: synth.NoiseForSNR(modes, 46), PulseWidth: 0.001, PulsePeak: 150, Seed: 1}
	rec := &pipeline.Recording{Channels: []pipeline.Channel{
		{Name: "hammer", Unit: "N", Role: pipeline.RoleForce, SampleRate: 2048, Samples: h.Force()},
		{Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: 2048, Samples: h.Response()},
	}}
	var csv bytes.Buffer
	read.WriteCSV(&csv, rec, read.WriteOptions{TimeColumn: true})
	path := filepath.Join(dir, "bracket_R1_001.csv")
	os.WriteFile(path, csv.Bytes(), 0o644)
	res, err := process.File(ctx, path, process.Defaults())
	if err != nil {
		fmt.Println(err)
		return
	}
	store, err := db.Open(ctx, filepath.Join(dir, "history.db"))
	if err != nil {
		fmt.Println(err)
		return
	}
	defer store.Close()
	at := time.Date(2025, 6, 3, 10, 30, 0, 0, time.UTC)
	store.RecordResult(ctx, db.FileInfo{Path: path, Size: int64(csv.Len()), MTime: at, SHA256: fmt.Sprintf("%x", sha256.Sum256(csv.Bytes()))},
		db.HitMeta{Prototype: "bracket", Revision: "R1", Bay: "bay-1", HitTime: at}, res, nil)

	var out bytes.Buffer
	sum, err := page.Daily(ctx, &out, store, page.DailyOptions{Day: at})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%s: %d hit, %d accepted\n", sum.Day, sum.Hits, sum.Accepted)
	fmt.Println(strings.HasPrefix(out.String(), "<!DOCTYPE html>"), strings.Contains(out.String(), "<script"))
	// Output:
	// 2025-06-03: 1 hit, 1 accepted
	// true false
}
