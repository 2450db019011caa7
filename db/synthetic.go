package db

// Synthetic hits: a large history for benchmarks, stored through the same
// result tables as real hits but marked by their path, which starts with
// SyntheticPathPrefix (no recorder file has such a path: RecordResult
// refuses it), and by the metadata key SyntheticMark. Queries select the
// real hits unless Filter.Synthetic asks for the synthetic ones (never
// both), so a synthetic hit never enters a statistic or a report of real
// ones.

import (
	"context"
	"crypto/sha256"
	"database/sql"
	"encoding/hex"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
	"time"

	"github.com/ringlog/ringlog/pipeline"
)

// SyntheticOptions describe a synthetic history. The zero value of a field
// takes the default named beside it.
type SyntheticOptions struct {
	Hits      int       // number of hits (required, > 0)
	Prototype string    // default "synthetic-frame"
	Revisions []string  // consecutive blocks of equal length in time; default A, B
	Seed      uint64    // default 1: the same options give the same history
	End       time.Time // hit time of the last hit; default now
	// PerYear is the hit rate the times are spread by (default 10,000 a
	// year, a busy lab): 100,000 hits span ten years.
	PerYear float64
	// Batch is the number of hits stored per transaction (default 1000).
	Batch int
	// Progress, when set, is called after every batch with the hits
	// stored so far.
	Progress func(done int)
}

// SyntheticPathPrefix starts the path of every synthetic hit
// ("synthetic:" and the first 16 hex digits of its hash).
const SyntheticPathPrefix = "synthetic:"

// SyntheticMark is the metadata key every synthetic hit carries (value
// "synth-history"), beside the hits.synthetic column.
const SyntheticMark = "synthetic"

// syntheticModes are the invented modes of the synthetic prototype: nominal
// frequency and damping ratio.
var syntheticModes = [...]struct{ f, z float64 }{{31, 0.008}, {88, 0.005}, {170, 0.006}, {290, 0.009}}

// ErrRealHits is returned by RecordSynthetic when the database holds real
// hits: synthetic hits go into a database of their own.
var ErrRealHits = errors.New("the database holds real hits: write synthetic hits into a database of their own")

// SyntheticHit returns the result and metadata of synthetic hit i (0-based)
// of opt, a pure function of opt and i. The scenario is invented: a frame
// with four modes, damping scattered by about 10 % (log-normal) and
// frequency by 0.3 %, a slow damping drift over the history; about 85 %
// of the hits accepted, 8 % flagged (beating modes, or one mode dropped for
// a short decay) and 7 % rejected (clipped or a double strike).
func SyntheticHit(opt SyntheticOptions, i int) (HitMeta, *pipeline.Result) {
	opt = opt.defaults()
	r := rand.New(rand.NewPCG(opt.Seed, uint64(i)))
	n := opt.Hits
	span := time.Duration(float64(n) / opt.PerYear * 365.25 * 24 * float64(time.Hour))
	step := span / time.Duration(max(n, 1))
	at := opt.End.Add(-span + time.Duration(i+1)*step - time.Duration(r.Float64()*float64(step)/2))
	rev := opt.Revisions[min(i*len(opt.Revisions)/max(n, 1), len(opt.Revisions)-1)]
	meta := HitMeta{
		Prototype: opt.Prototype, Revision: rev, Bay: "bay-" + strconv.Itoa(1+i%3), Point: "P" + strconv.Itoa(1+i%4), Direction: "+z",
		HitTime: at, Extra: map[string]string{SyntheticMark: "synth-history", "tip": "medium"},
	}
	drift := 1 + 0.05*float64(i)/float64(max(n, 1))
	res := &pipeline.Result{
		File: meta.HitTime.UTC().Format("20060102T150405") + ".csv", Format: "csv", Channel: "acc1", ForceChannel: "hammer",
		SampleRate: 10240, DurationS: 2, NoiseRMS: 0.001 * (1 + 0.2*r.Float64()), WindowTauS: math.NaN(),
		AnalysisVersion: pipeline.AnalysisVersion,
	}
	for _, m := range syntheticModes {
		f := m.f * (1 + 0.003*r.NormFloat64())
		z := m.z * drift * math.Exp(0.1*r.NormFloat64())
		sd := 0.05 * z
		res.Modes = append(res.Modes, pipeline.Mode{
			FrequencyHz: f, FrequencyCI95: [2]float64{f * 0.999, f * 1.001},
			DampingRatio: z, DampingRatioCI: [2]float64{z - 1.96*sd, z + 1.96*sd}, DampingRatioSD: sd,
			Amplitude: 1 + r.Float64(), EnergyShare: 0.25, Cycles: 40 + 20*r.Float64(), DecaySNRdB: 45 + 5*r.Float64(), Spread: 0.03,
			Estimates: []pipeline.Estimate{
				{Method: "nls", FrequencyHz: f, DampingRatio: z},
				{Method: "subspace", FrequencyHz: f * 1.0001, DampingRatio: z * 1.01},
				{Method: "envelope", FrequencyHz: f, DampingRatio: z * 0.98, Note: "stopped at 10x noise"},
				{Method: "logdec", FrequencyHz: f * 0.9999, DampingRatio: z * 1.03},
			},
		})
	}
	switch u := r.Float64(); {
	case u < 0.04:
		res.AddReason("clipped", pipeline.SeverityReject, nil, "response reached full scale in %d samples", 3+r.IntN(20))
	case u < 0.07:
		res.AddReason("double_strike", pipeline.SeverityReject, nil, "second force pulse %.1f ms after the first", 2+8*r.Float64())
	case u < 0.11:
		res.AddReason("beating_modes", pipeline.SeverityFlag, nil, "two modes close enough to beat")
	case u < 0.15:
		k := r.IntN(len(res.Modes))
		res.AddReason("short_decay", pipeline.SeverityDrop, pipeline.ModeRef(k), "%.0f usable cycles, fewer than 10", 3+6*r.Float64())
	}
	res.Decide()
	return meta, res
}

func (opt SyntheticOptions) defaults() SyntheticOptions {
	if opt.Prototype == "" {
		opt.Prototype = "synthetic-frame"
	}
	if len(opt.Revisions) == 0 {
		opt.Revisions = []string{"A", "B"}
	}
	if opt.Seed == 0 {
		opt.Seed = 1
	}
	if opt.End.IsZero() {
		opt.End = time.Now()
	}
	if !(opt.PerYear > 0) {
		opt.PerYear = 10000
	}
	if opt.Batch <= 0 {
		opt.Batch = 1000
	}
	return opt
}

// RecordSynthetic stores opt.Hits synthetic hits (SyntheticHit) marked
// synthetic, in transactions of opt.Batch hits. It refuses a database that
// holds real hits (ErrRealHits). A synthetic hit has no file row: there is
// no recorder file behind it; its path is SyntheticPathPrefix and its hash.
// Hits already stored (same seed and index) are skipped, so a run that was
// interrupted can be repeated.
func (db *DB) RecordSynthetic(ctx context.Context, opt SyntheticOptions) (stored int, err error) {
	if opt.Hits <= 0 {
		return 0, fmt.Errorf("database %s: synthetic hits: the number of hits must be positive, got %d", db.path, opt.Hits)
	}
	opt = opt.defaults()
	var one int
	err = db.r.QueryRowContext(ctx, "SELECT 1 FROM hits WHERE first_path NOT LIKE '"+SyntheticPathPrefix+"%' LIMIT 1").Scan(&one)
	switch {
	case err == nil:
		return 0, fmt.Errorf("database %s: %w", db.path, ErrRealHits)
	case !errors.Is(err, sql.ErrNoRows):
		return 0, fmt.Errorf("database %s: synthetic hits: %w", db.path, err)
	}
	for lo := 0; lo < opt.Hits; lo += opt.Batch {
		hi := min(lo+opt.Batch, opt.Hits)
		batch := 0
		err := db.write(ctx, "storing synthetic hits", func(tx *sql.Tx) error {
			now := time.Now()
			analysis, err := analysisID(ctx, tx, pipeline.AnalysisVersion, `{"synthetic":true}`, now)
			if err != nil {
				return err
			}
			ins, err := tx.PrepareContext(ctx, `
INSERT INTO hits (sha256, first_path, prototype, revision, bay, point, direction, hit_time, meta,
                  format, channel, force_channel, sample_rate, duration, noise_rms, verdict, analysis_id, ingested_at)
VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)
ON CONFLICT (sha256) DO NOTHING
RETURNING id`)
			if err != nil {
				return err
			}
			defer ins.Close()
			for i := lo; i < hi; i++ {
				meta, res := SyntheticHit(opt, i)
				sum := sha256.Sum256([]byte("ringlog synthetic hit " + strconv.FormatUint(opt.Seed, 10) + " " + strconv.Itoa(i)))
				hash := hex.EncodeToString(sum[:])
				extra, err := marshalMap(meta.Extra)
				if err != nil {
					return err
				}
				var hitID int64
				err = ins.QueryRowContext(ctx, hash, SyntheticPathPrefix+hash[:16], meta.Prototype, meta.Revision, meta.Bay, meta.Point, meta.Direction,
					toNS(meta.HitTime), extra, res.Format, res.Channel, res.ForceChannel, sqlReal(res.SampleRate), sqlReal(res.DurationS),
					sqlReal(res.NoiseRMS), string(res.Verdict), analysis, toNS(now)).Scan(&hitID)
				if errors.Is(err, sql.ErrNoRows) {
					continue // stored by an earlier run
				}
				if err != nil {
					return fmt.Errorf("inserting synthetic hit %d: %w", i, err)
				}
				if _, err := insertResult(ctx, tx, hitID, analysis, res, now); err != nil {
					return err
				}
				batch++
			}
			return nil
		})
		if err != nil {
			return stored, err
		}
		stored += batch
		if opt.Progress != nil {
			opt.Progress(hi)
		}
	}
	return stored, nil
}
