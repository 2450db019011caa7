// Command benchhistory times the history commands of ringlog on large
// histories and prints one table: the median wall time, CPU time and peak
// resident memory (RSS) of each command on each history over several runs,
// and whether it meets the target (issue 10: under 1 s and 300 MB at
// 100,000 hits). Each run is a fresh ringlog process, so the figures
// include starting it and opening the database.
//
//	go run ./cmd/ringlog synth-history --db /tmp/h100k.db --hits 100000 --end 2026-06-30
//	go run ./cmd/ringlog synth-history --db postgres://.../h100k --hits 100000 --end 2026-06-30
//	go run ./db/benchhistory --db /tmp/h100k.db --db postgres://.../h100k --day 2026-06-30
//
// --db may be given once per history (an SQLite path or a postgres:// URL).
// It builds ringlog from ./cmd/ringlog unless --ringlog names a binary.
// By default it reads the synthetic hits (--synthetic on every command).
// This is a benchmark that prints numbers, not a test: it never fails on
// a slow run. Peak RSS is measured on Linux and the BSDs (getrusage of
// the child); elsewhere it shows "-".
package main

import (
	"bytes"
	"context"
	"flag"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"time"
)

type benchCmd struct {
	name string
	args []string
	// stdout to a file instead of discarding it
	toFile bool
}

func main() {
	bin := flag.String("ringlog", "", "the ringlog binary (default: built from ./cmd/ringlog)")
	var dbs []string
	flag.Func("db", "a history (an SQLite path or a postgres:// URL); once per history, at least once", func(v string) error {
		dbs = append(dbs, v)
		return nil
	})
	proto := flag.String("prototype", "synthetic-frame", "prototype")
	revA := flag.String("revision-a", "A", "reference revision of compare")
	revB := flag.String("revision-b", "B", "other revision of compare")
	day := flag.String("day", "", "day of 'report daily', YYYY-MM-DD (default today)")
	runs := flag.Int("runs", 5, "runs per command; the table shows medians")
	synthetic := flag.Bool("synthetic", true, "add --synthetic to every command (the hits of synth-history)")
	only := flag.String("only", "", "comma-separated names of the commands to run (default all)")
	timeout := flag.Duration("timeout", 2*time.Minute, "give up a run after this long")
	maxTime := flag.Duration("max-time", time.Second, "target wall time of one command")
	maxRSS := flag.Float64("max-rss", 300, "target peak RSS of one command, MB")
	flag.Parse()
	if len(dbs) == 0 {
		fmt.Fprintln(os.Stderr, "benchhistory: --db is required")
		os.Exit(2)
	}
	tmp, err := os.MkdirTemp("", "ringlog-bench-")
	if err != nil {
		fail(err)
	}
	defer os.RemoveAll(tmp)
	if *bin == "" {
		*bin = filepath.Join(tmp, "ringlog")
		out, err := exec.Command("go", "build", "-o", *bin, "./cmd/ringlog").CombinedOutput()
		if err != nil {
			fail(fmt.Errorf("building ringlog: %v\n%s", err, out))
		}
	}
	if *day == "" {
		*day = time.Now().Format("2006-01-02")
	}
	want := map[string]bool{}
	for _, n := range strings.Split(*only, ",") {
		if n = strings.TrimSpace(n); n != "" {
			want[n] = true
		}
	}
	fmt.Printf("ringlog history benchmark: %d run(s) per command, medians; %d CPU(s), %s; load average %s at the start\n\n",
		*runs, runtime.NumCPU(), runtime.Version(), loadAverage())
	fmt.Printf("| command | history | time [s] | min .. max [s] | CPU [s] | peak RSS [MB] | max RSS [MB] | under %v and %.0f MB | status |\n",
		*maxTime, *maxRSS)
	fmt.Printf("|---|---|---:|---:|---:|---:|---:|---|---|\n")
	for _, dbPath := range dbs {
		for _, c := range commands(dbPath, *proto, *revA, *revB, *day, tmp) {
			if len(want) > 0 && !want[c.name] {
				continue
			}
			args := c.args
			if *synthetic {
				args = append(slices.Clone(args), "--synthetic")
			}
			var times, cpus, rss []float64
			status := "ok"
			for range *runs {
				t, cpu, m, err := runOnce(*bin, args, c.toFile, tmp, *timeout)
				if err != nil {
					status = err.Error()
					break
				}
				times, cpus, rss = append(times, t), append(cpus, cpu), append(rss, m)
			}
			if len(times) == 0 {
				fmt.Printf("| %s | %s | - | - | - | - | - | - | %s |\n", c.name, backend(dbPath), status)
				continue
			}
			t, m := median(times), median(rss)
			meets := "yes"
			if t >= maxTime.Seconds() || m >= *maxRSS*1e6 {
				meets = "no"
			}
			fmt.Printf("| %s | %s | %.3f | %.3f .. %.3f | %.3f | %s | %s | %s | %s |\n", c.name, backend(dbPath), t, slices.Min(times),
				slices.Max(times), median(cpus), mb(m), mb(slices.Max(rss)), meets, status)
		}
	}
	fmt.Printf("\nload average %s at the end\n", loadAverage())
}

// backend names the kind of history at dbPath for the table.
func backend(dbPath string) string {
	if strings.HasPrefix(dbPath, "postgres://") || strings.HasPrefix(dbPath, "postgresql://") {
		return "PostgreSQL"
	}
	return "SQLite"
}

// loadAverage is the 1, 5 and 15 minute load average of the machine
// (Linux), or "unknown": other work on a shared machine shows up there.
func loadAverage() string {
	b, err := os.ReadFile("/proc/loadavg")
	if f := strings.Fields(string(b)); err == nil && len(f) >= 3 {
		return strings.Join(f[:3], " ")
	}
	return "unknown"
}

// runOnce runs ringlog with args and returns the wall time and the CPU
// time (user and system) in seconds and the peak RSS in bytes (NaN when
// unknown).
func runOnce(bin string, args []string, toFile bool, tmp string, timeout time.Duration) (wall, cpu, rss float64, err error) {
	ctx, cancel := context.WithTimeout(context.Background(), timeout)
	defer cancel()
	cmd := exec.CommandContext(ctx, bin, args...)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	if toFile {
		f, err := os.Create(filepath.Join(tmp, "out"))
		if err != nil {
			return 0, 0, 0, err
		}
		defer f.Close()
		cmd.Stdout = f
	}
	start := time.Now()
	err = cmd.Run()
	wall = time.Since(start).Seconds()
	if ctx.Err() != nil {
		return 0, 0, 0, fmt.Errorf("over %v", timeout)
	}
	if err != nil {
		msg := strings.TrimSpace(stderr.String())
		if i := strings.IndexByte(msg, '\n'); i > 0 {
			msg = msg[:i]
		}
		return 0, 0, 0, fmt.Errorf("%v: %s", err, msg)
	}
	ps := cmd.ProcessState
	return wall, (ps.UserTime() + ps.SystemTime()).Seconds(), peakRSS(ps), nil
}

// commands are the history commands timed on the history at dbPath.
func commands(dbPath, proto, revA, revB, day, tmp string) []benchCmd {
	db, p := []string{"--db", dbPath}, []string{"--prototype", proto}
	return []benchCmd{
		{name: "history --json", args: cat([]string{"history"}, db, p, []string{"--json"}), toFile: true},
		{name: "stats", args: cat([]string{"stats"}, db, p)},
		{name: "compare", args: cat([]string{"compare"}, db, p, []string{"--revision", revA, "--revision", revB})},
		{name: "trend", args: cat([]string{"trend"}, db, p)},
		{name: "rayleigh", args: cat([]string{"rayleigh"}, db, p)},
		{name: "export", args: cat([]string{"export"}, db, p, []string{"--format", "csv"}), toFile: true},
		{name: "report daily", args: cat([]string{"report", "daily"}, db, []string{"--day", day, "--out", filepath.Join(tmp, "daily.html")})},
		{name: "report compare", args: cat([]string{"report", "compare"}, db, p, []string{"--revision", revA, "--revision", revB,
			"--out", filepath.Join(tmp, "compare.html")})},
	}
}

func cat(parts ...[]string) []string {
	var out []string
	for _, p := range parts {
		out = append(out, p...)
	}
	return out
}

func median(x []float64) float64 {
	s := slices.Clone(x)
	slices.Sort(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

func mb(b float64) string {
	if b != b {
		return "-"
	}
	return fmt.Sprintf("%.0f", b/1e6)
}

func fail(err error) {
	fmt.Fprintln(os.Stderr, "benchhistory:", err)
	os.Exit(1)
}
