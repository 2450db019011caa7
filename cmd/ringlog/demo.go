package main

import (
	"bytes"
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"sort"
	"strings"
	"sync"
	"time"

	rpt "github.com/ringlog/ringlog/report"

	"gonum.org/v1/gonum/stat"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/read"
	"github.com/ringlog/ringlog/pipeline/synth"
)

func init() {
	register(command{name: "demo", summary: "watch a simulated test campaign: a recorder writes hit files, the daemon records them", run: runDemo})
}

// The demo scenario is invented: a gantry arm prototype for a pick-and-place
// machine, revision R1 (bolted) and revision R2 (with a constrained-layer
// damping patch), hit on test bay 3. Three modes; R2 damps more. Some hits
// are spoiled the way real ones are.
var demoModes = []struct {
	label string
	fHz   float64
	zeta  [2]float64 // R1, R2
	amp   float64
}{
	{"bending-1", 46.5, [2]float64{0.011, 0.016}, 1.0},
	{"torsion-1", 171, [2]float64{0.007, 0.0095}, 0.6},
	{"bending-2", 522, [2]float64{0.014, 0.017}, 0.35},
}

const (
	demoRate     = 4096.0
	demoDuration = 2.0
)

// demoHit is one file the simulated recorder writes.
type demoHit struct {
	name   string
	rev    int // 0 = R1, 1 = R2
	spoil  string
	format string // "csv", "wav", "uff"
}

func demoPlan(n int, r *rand.Rand) []demoHit {
	spoils := map[int]string{5: "clipped", 9: "double", 13: "ringing", 17: "missed", 21: "truncated", 25: "duplicate", 29: "friction", 33: "noisy"}
	var plan []demoHit
	for i := range n {
		rev := 0
		if i >= n/2 {
			rev = 1
		}
		point := []string{"P01", "P04", "P07"}[r.IntN(3)]
		dir := []string{"z", "y"}[r.IntN(2)]
		format := "csv"
		switch i % 11 {
		case 4:
			format = "wav"
		case 8:
			format = "uff"
		}
		ext := map[string]string{"csv": "csv", "wav": "wav", "uff": "uff"}[format]
		h := demoHit{name: fmt.Sprintf("R%d_%s_%s_%04d.%s", rev+1, point, dir, i+1, ext), rev: rev, spoil: spoils[i], format: format}
		if h.spoil != "" {
			h.format = "csv"
			h.name = fmt.Sprintf("R%d_%s_%s_%04d.csv", rev+1, point, dir, i+1)
		}
		plan = append(plan, h)
	}
	return plan
}

// demoRecording simulates one hit.
func demoRecording(h demoHit, seed uint64, r *rand.Rand) *pipeline.Recording {
	var modes []synth.Mode
	for _, m := range demoModes {
		z := m.zeta[h.rev] * (1 + 0.08*r.NormFloat64())
		f := m.fHz * (1 + 0.003*r.NormFloat64()) * (1 - 0.01*float64(h.rev))
		modes = append(modes, synth.Mode{FrequencyHz: f, DampingRatio: z, Amplitude: m.amp * (0.7 + 0.6*r.Float64()), Phase: 0})
	}
	hit := synth.Hit{
		SampleRate: demoRate, Duration: demoDuration, PreTrigger: 0.05, Modes: modes,
		NoiseSD: synth.NoiseForSNR(modes, 46), Seed: seed, PulseWidth: 0.0008, PulsePeak: 220,
	}
	switch h.spoil {
	case "clipped":
		hit.ClipLevel = 0.8
	case "double":
		hit.DoubleHitDelay, hit.DoubleHitScale = 0.021, 0.45
	case "ringing":
		hit.RingingBefore = 0.3
	case "missed":
		hit.Modes = nil
		hit.NoiseSD = 0.002
		hit.PulseWidth = 0
	case "friction":
		hit.Modes = hit.Modes[:1]
		hit.Friction = 1.1
	case "noisy":
		hit.NoiseSD = synth.NoiseForSNR(modes, 14)
	}
	resp := hit.Response()
	force := hit.Force()
	if force == nil {
		force = make([]float64, len(resp))
	}
	return &pipeline.Recording{
		Path:   h.name,
		Format: h.format,
		Meta:   map[string]string{"prototype": "gantry-arm", "bay": "bay-3", "hammer_tip": "medium"},
		Channels: []pipeline.Channel{
			{Name: "hammer", Unit: "N", Role: pipeline.RoleForce, SampleRate: demoRate, Samples: force},
			{Name: "accel", Unit: "m/s^2", Role: pipeline.RoleResponse, SampleRate: demoRate, Samples: resp},
		},
	}
}

func encodeDemo(h demoHit, rec *pipeline.Recording) ([]byte, error) {
	var buf bytes.Buffer
	var err error
	switch h.format {
	case "wav":
		// WAV carries no units: scale into +/-1 full scale; the demo config
		// gives the sensitivities back.
		scaled := *rec
		scaled.Channels = append([]pipeline.Channel(nil), rec.Channels...)
		scaled.Channels[0].Samples = scale(rec.Channels[0].Samples, 1.0/demoWAVForceFS)
		scaled.Channels[1].Samples = scale(rec.Channels[1].Samples, 1.0/demoWAVAccelFS)
		err = read.WriteWAV(&buf, &scaled, 24, false)
	case "uff":
		err = read.WriteUFF58(&buf, rec, false)
	default:
		err = read.WriteCSV(&buf, rec, read.WriteOptions{TimeColumn: true})
	}
	return buf.Bytes(), err
}

// Full scales of the demo's WAV channels (engineering units at WAV full scale).
const (
	demoWAVForceFS = 500.0
	demoWAVAccelFS = 5.0
)

func scale(x []float64, k float64) []float64 {
	y := make([]float64, len(x))
	for i, v := range x {
		y[i] = v * k
	}
	return y
}

// writeSlowly writes data the way recorders do: in chunks, over time.
func writeSlowly(ctx context.Context, path string, data []byte, chunks int, pause time.Duration) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	step := (len(data) + chunks - 1) / chunks
	for off := 0; off < len(data); off += step {
		end := min(off+step, len(data))
		if _, err := f.Write(data[off:end]); err != nil {
			f.Close()
			return err
		}
		select {
		case <-ctx.Done():
		case <-time.After(pause):
		}
	}
	return f.Close()
}

const demoConfig = `# ringlog demo configuration (written by 'ringlog demo').
database = %q
log_file = %q
settle = "1s"
scan_interval = "10s"

[analysis]
wav_channels = ["hammer", "accel"]

[[channel]]
name = "hammer"
role = "force"
unit = "N"
sensitivity = %g   # WAV full scale (1.0) corresponds to %g N
formats = ["wav"]   # the CSV and UFF files are already in N

[[channel]]
name = "accel"
role = "response"
unit = "m/s^2"
sensitivity = %g
formats = ["wav"]

[[folder]]
path = %q
prototype = "gantry-arm"
bay = "bay-3"
# R1_P04_z_0012.csv -> revision R1, point P04, direction z
pattern = '^(?P<revision>R\d+)_(?P<point>P\d+)_(?P<direction>[xyz])_'

# The live page: the last hit's verdict at the bay, in a browser.
[live]
listen = %q

# The modes expected on the gantry arm: hits are labelled by the nearest.
[[prototype]]
name = "gantry-arm"
%s`

func runDemo(ctx context.Context, e *env, args []string) error {
	fs := newFlags("demo", "[--dir DIR] [--hits N] [--interval DURATION]", e.stderr)
	dir := fs.String("dir", "", "folder for the demo (default: a new temporary folder)")
	n := fs.Int("hits", 40, "number of hit files the simulated recorder writes")
	interval := fs.Duration("interval", 900*time.Millisecond, "time between hits")
	seed := fs.Uint64("seed", 7, "random seed of the scenario")
	rest, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return usagef("unexpected argument %q", rest[0])
	}
	if *n < 1 {
		return usagef("--hits must be at least 1")
	}
	root := *dir
	if root == "" {
		if root, err = os.MkdirTemp("", "ringlog-demo-"); err != nil {
			return err
		}
	}
	export := filepath.Join(root, "export")
	if err := os.MkdirAll(export, 0o755); err != nil {
		return err
	}
	cfgPath := filepath.Join(root, "ringlog.toml")
	dbPath := filepath.Join(root, "history.db")
	var expected strings.Builder
	for _, dm := range demoModes {
		fmt.Fprintf(&expected, "[[prototype.mode]]\nlabel = %q\nfrequency_hz = %g\ntolerance = 0.08\n", dm.label, dm.fHz)
	}
	cfgText := fmt.Sprintf(demoConfig, dbPath, filepath.Join(root, "ringlog.log"),
		1/demoWAVForceFS, demoWAVForceFS, 1/demoWAVAccelFS, export, demoLiveAddr(), expected.String())
	if err := os.WriteFile(cfgPath, []byte(cfgText), 0o644); err != nil {
		return err
	}
	cfg, err := loadConfig(cfgPath)
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "ringlog demo in %s\n  export folder %s\n  config        %s\n\n", root, export, cfgPath)
	fmt.Fprintf(e.stdout, "A simulated recorder writes %d hit files of prototype gantry-arm (revisions R1 and R2, bay-3), in chunks, about one every %s; some are spoiled.\n\n", *n, *interval)

	m := &Main{Config: cfg, Stderr: e.stderr}
	var mu sync.Mutex
	recorded := 0
	m.Recorded = func(o outcome, rec db.Outcome, err error) {
		mu.Lock()
		recorded++
		mu.Unlock()
	}
	if err := m.Open(ctx); err != nil {
		return err
	}
	defer m.Close()
	fmt.Fprintf(e.stdout, "live page     %s  (open it in a browser: every hit shows there as it is recorded)\n\n", m.LiveURL())
	dctx, stop := context.WithCancel(ctx)
	defer stop()
	runErr := make(chan error, 1)
	go func() { runErr <- m.Run(dctx) }()

	r := rand.New(rand.NewPCG(*seed, 11))
	plan := demoPlan(*n, r)
	written := 0
	var prev []byte
	for i, h := range plan {
		if ctx.Err() != nil {
			break
		}
		rec := demoRecording(h, *seed*1000+uint64(i), r)
		data, err := encodeDemo(h, rec)
		if err != nil {
			return err
		}
		switch h.spoil {
		case "truncated":
			data = data[:len(data)/3]
			data = data[:bytes.LastIndexByte(data, '\n')+6] // cut inside a line
		case "duplicate":
			if prev != nil {
				data = prev // the same hit exported twice under another name
			}
		}
		if err := writeSlowly(ctx, filepath.Join(export, h.name), data, 4, 120*time.Millisecond); err != nil {
			return err
		}
		written++
		prev = data
		select {
		case <-ctx.Done():
		case <-time.After(*interval):
		}
	}
	// Wait for the daemon to record everything written (settle + analysis).
	deadline := time.Now().Add(cfg.Settle.Duration + 30*time.Second)
	for time.Now().Before(deadline) && ctx.Err() == nil {
		mu.Lock()
		done := recorded >= written
		mu.Unlock()
		if done {
			break
		}
		time.Sleep(200 * time.Millisecond)
	}
	stop()
	if err := <-runErr; err != nil {
		return err
	}
	return demoSummary(context.WithoutCancel(ctx), e, m.store, root, dbPath, cfgPath)
}

// demoSummary prints what the history now holds.
func demoSummary(ctx context.Context, e *env, store *db.DB, root, dbPath, cfgPath string) error {
	st, err := store.Status(ctx)
	if err != nil {
		return err
	}
	hits, err := store.Hits(ctx, db.Filter{})
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "\n== summary ==\n")
	printStatus(e.stdout, st)
	// Per revision and mode: mean damping of the modes that count, by the
	// rule every history report uses (report.Identify).
	type key struct {
		rev  string
		mode string
	}
	vals := map[key][]float64{}
	byProto := map[string][]db.Hit{}
	for _, h := range hits {
		byProto[h.Meta.Prototype] = append(byProto[h.Meta.Prototype], h)
	}
	leftHits, leftModes := 0, 0
	for _, hs := range byProto {
		id := rpt.Identify(hs, rpt.IdentifyOptions{})
		for _, o := range id.Obs {
			if o.Label != "" && o.Source == rpt.SourceStored {
				vals[key{o.Revision, o.Label}] = append(vals[key{o.Revision, o.Label}], o.DampingRatio)
			}
		}
		for _, ex := range id.Excluded {
			for _, x := range ex {
				if x.What == "hit" {
					leftHits += x.Count
				} else {
					leftModes += x.Count
				}
			}
		}
	}
	var keys []key
	for k := range vals {
		keys = append(keys, k)
	}
	sort.Slice(keys, func(i, j int) bool {
		if keys[i].mode != keys[j].mode {
			return keys[i].mode < keys[j].mode
		}
		return keys[i].rev < keys[j].rev
	})
	fmt.Fprintf(e.stdout, "\ndamping per revision and mode (the modes that count, as 'ringlog stats' counts them: %d hit(s) and %d mode(s) left out; the full statistics and why come with 'ringlog stats'):\n", leftHits, leftModes)
	fmt.Fprintf(e.stdout, "  %-10s %-8s %4s %10s %10s\n", "mode", "revision", "n", "mean [%]", "sd [%]")
	for _, k := range keys {
		v := vals[k]
		mean, sd := stat.MeanStdDev(v, nil)
		if len(v) < 2 {
			sd = math.NaN()
		}
		fmt.Fprintf(e.stdout, "  %-10s %-8s %4d %10.3f %10.3f\n", k.mode, k.rev, len(v), 100*mean, 100*sd)
	}
	fmt.Fprintf(e.stdout, "\ndatabase: %s\nconfig:   %s\n", dbPath, cfgPath)
	self := selfCommand()
	fmt.Fprintf(e.stdout, "next:     %s history --db %s\n          %s watch --config %s   (drop your own files into the export folder)\n",
		self, shellQuote(dbPath), self, shellQuote(cfgPath))
	fmt.Fprintln(e.stdout, "\nCaution: measured damping depends on amplitude, boundary conditions and temperature; over-estimating it makes a model unconservative. See README, 'Cautions'.")
	return writeDemoReport(ctx, e, store, root, dbPath, cfgPath)
}

// selfCommand is how the user runs this ringlog again, as printed in
// follow-up commands: "ringlog" when that name on the PATH is this
// program, "go run github.com/ringlog/ringlog/cmd/ringlog" under 'go run'
// (the binary is in a temporary build folder), else the program's path.
func selfCommand() string {
	exe, err := os.Executable()
	if err != nil {
		return "ringlog"
	}
	if r, err := filepath.EvalSymlinks(exe); err == nil {
		exe = r
	}
	if onPath, err := exec.LookPath("ringlog"); err == nil {
		if r, err := filepath.EvalSymlinks(onPath); err == nil {
			if a, err1 := os.Stat(r); err1 == nil {
				if b, err2 := os.Stat(exe); err2 == nil && os.SameFile(a, b) {
					return "ringlog"
				}
			}
		}
	}
	slash := filepath.ToSlash(exe)
	if strings.Contains(slash, "/go-build") && strings.Contains(slash, "/exe/") {
		return "go run github.com/ringlog/ringlog/cmd/ringlog"
	}
	return shellQuote(exe)
}

// shellQuote quotes p for a shell when it holds a blank or a quote.
func shellQuote(p string) string {
	if !strings.ContainsAny(p, " \t'\"$&;|<>()*?`") {
		return p
	}
	if runtime.GOOS == "windows" {
		return `"` + p + `"`
	}
	return "'" + strings.ReplaceAll(p, "'", `'\''`) + "'"
}
