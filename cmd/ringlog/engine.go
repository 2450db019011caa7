package main

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"os"
	"runtime"
	"slices"
	"strings"
	"sync"
	"time"

	"github.com/rs/zerolog"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/process"
	"github.com/ringlog/ringlog/pipeline/read"
)

// job is one file to take through the pipeline.
type job struct {
	path    string
	folder  *FolderConfig     // nil for files given on the command line
	meta    map[string]string // command-line overrides (highest priority)
	openErr error             // the watcher could not open the file
}

// outcome is what a worker made of a job; the writer stores it.
type outcome struct {
	job
	fi  db.FileInfo
	res *pipeline.Result
	err error // the file could not be read or analysed
}

// engine takes files through read -> analyse -> store with a bounded
// worker pool and a single database writer. The watch daemon, ingest and
// the demo all use it.
type engine struct {
	cfg     *Config
	store   *db.DB
	log     zerolog.Logger
	workers int
	// recorded is called by the writer after each file is stored (progress
	// lines, counters). It must not block for long.
	recorded func(o outcome, rec db.Outcome, err error)
	// guard, when set, is asked before each store; an error means nothing
	// may be stored (the database file is gone) and becomes the file's
	// store error.
	guard func() error
	// lastErr is the store error of the last file run stored, nil when
	// that store succeeded: the state at the end of run.
	lastErr error
}

func newEngine(cfg *Config, store *db.DB, log zerolog.Logger) *engine {
	w := cfg.Workers
	if w <= 0 {
		w = runtime.NumCPU()
	}
	return &engine{cfg: cfg, store: store, log: log, workers: w}
}

// run consumes jobs until the channel is closed, then drains: every job
// taken from the channel is analysed and stored before run returns. A
// cancelled ctx does not abandon work in hand; the caller stops the
// producer and closes jobs.
func (e *engine) run(ctx context.Context, jobs <-chan job) error {
	outs := make(chan outcome, e.workers)
	var wg sync.WaitGroup
	for range e.workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for j := range jobs {
				outs <- e.analyse(j)
			}
		}()
	}
	go func() { wg.Wait(); close(outs) }()

	// The single writer. Stores use a context that outlives ctx so that
	// a stop drains what is in hand instead of losing it.
	wctx := context.WithoutCancel(ctx)
	var firstErr error
	for o := range outs {
		o.err = clipErr(o.err)
		var rec db.Outcome
		var err error
		if e.guard != nil {
			err = e.guard()
		}
		if err == nil {
			rec, err = e.store1(wctx, o)
		}
		e.lastErr = err
		if err != nil {
			e.log.Error().Err(err).Str("file", o.path).Msg("could not store result")
			if firstErr == nil {
				firstErr = err
			}
		}
		if e.recorded != nil {
			e.recorded(o, rec, err)
		}
	}
	return firstErr
}

// analyse reads, hashes and analyses one file. It never panics: a panic in
// an estimator on a strange file becomes that file's error.
func (e *engine) analyse(j job) (o outcome) {
	o.job = j
	o.fi.Path = j.path
	defer func() {
		if p := recover(); p != nil {
			o.res = nil
			o.err = fmt.Errorf("%s: internal error while analysing: %v", j.path, p)
		}
	}()
	if j.openErr != nil {
		o.err = j.openErr
		return o
	}
	st, err := os.Stat(j.path)
	if err != nil {
		o.err = err
		return o
	}
	o.fi.Size = st.Size()
	o.fi.MTime = st.ModTime()
	if limit := e.cfg.MaxFileSize; limit > 0 && st.Size() > limit {
		o.err = fmt.Errorf("%s: file too large: %d MB, the limit (max_file_size) is %d MB", j.path, st.Size()>>20, limit>>20)
		return o
	}
	data, err := read.ReadRegular(context.Background(), j.path, e.cfg.MaxFileSize)
	if err != nil {
		o.err = err
		return o
	}
	o.fi.SHA256 = sha256Hex(data)
	opt := e.cfg.processOptions(j.folder)
	o.res, o.err = process.Data(context.Background(), j.path, data, opt)
	if o.err == nil {
		if o.err = checkFinite(j.path, o.res); o.err != nil {
			o.res = nil
		}
	}
	return o
}

// maxErrorText bounds an error text that is stored (files.last_error),
// logged and shown by status: a reader quotes the file, and a file can
// hold anything.
const maxErrorText = 2000

// clippedError is an error whose text is cut to maxErrorText bytes; it
// still unwraps to the error it clips.
type clippedError struct {
	err error
	msg string
}

func (c *clippedError) Error() string { return c.msg }
func (c *clippedError) Unwrap() error { return c.err }

// clipErr returns err with its text cut to maxErrorText bytes.
func clipErr(err error) error {
	if err == nil {
		return nil
	}
	msg := err.Error()
	if len(msg) <= maxErrorText {
		return err
	}
	return &clippedError{err: err, msg: read.Clip(msg, maxErrorText)}
}

// store1 writes one outcome in one transaction.
func (e *engine) store1(ctx context.Context, o outcome) (db.Outcome, error) {
	o.err = clipErr(o.err)
	if o.err != nil {
		if errors.Is(o.err, os.ErrNotExist) {
			// Deleted before it was read: nothing to record, and no
			// pending row left behind.
			e.log.Debug().Str("file", o.path).Msg("file vanished before it was read")
			return db.Outcome{}, e.store.Vanished(ctx, o.path)
		}
		e.log.Warn().Str("file", o.path).Err(o.err).Msg("file could not be read; recorded as failed")
		return db.Outcome{}, e.store.RecordFailure(ctx, o.fi, o.err, true)
	}
	meta := hitMeta(o)
	flagFutureHitTime(o.res, meta.HitTime, time.Now())
	e.cfg.labelModes(meta.Prototype, o.res)
	out, err := e.store.RecordResult(ctx, o.fi, meta, o.res, settingsOf(e.cfg, o.folder))
	if err != nil {
		return out, err
	}
	e.logSupersede(o, out)
	ev := e.log.Info().Str("file", o.path).Str("verdict", string(o.res.Verdict)).Int("modes", len(o.res.Modes))
	if out.Duplicate {
		ev = e.log.Info().Str("file", o.path).Int64("hit", out.HitID)
		ev.Msg("same content as an earlier hit; recorded as duplicate")
		return out, nil
	}
	for i, m := range o.res.Modes {
		if i < 3 {
			ev = ev.Str(fmt.Sprintf("mode%d", i+1), fmt.Sprintf("%.2f Hz %.3f %%", m.FrequencyHz, 100*m.DampingRatio))
		}
	}
	if len(o.res.Reasons) > 0 {
		var codes []string
		for _, r := range o.res.Reasons {
			if !slices.Contains(codes, r.Code) {
				codes = append(codes, r.Code)
			}
		}
		ev = ev.Str("reasons", strings.Join(codes, ","))
	}
	ev.Msg("hit recorded")
	return out, nil
}

// logSupersede logs the hits a recording superseded (the file held other
// bytes before) and a hit made current again.
func (e *engine) logSupersede(o outcome, out db.Outcome) {
	for _, p := range out.Superseded {
		e.log.Info().Str("file", o.path).Str("sha256", o.fi.SHA256).Int64("hit", out.HitID).
			Str("superseded_sha256", p.SHA256).Int64("superseded_hit", p.HitID).Str("superseded_verdict", string(p.Verdict)).
			Msg("file changed after it was recorded; its earlier hit is superseded and no longer counted")
	}
	if out.Revived {
		e.log.Info().Str("file", o.path).Str("sha256", o.fi.SHA256).Int64("hit", out.HitID).
			Msg("file holds its earlier content again; that hit is current again")
	}
}

// hitMeta merges the metadata sources, later ones overriding earlier:
// folder defaults, file-name pattern, in-file metadata, command line.
func hitMeta(o outcome) db.HitMeta {
	m := o.folder.fileMeta(o.path)
	if o.res != nil {
		for k, v := range o.res.Meta {
			if v != "" {
				m[k] = v
			}
		}
	}
	for k, v := range o.meta {
		if v != "" {
			m[k] = v
		}
	}
	hm := db.HitMeta{
		Prototype: m["prototype"],
		Revision:  m["revision"],
		Bay:       m["bay"],
		Point:     m["point"],
		Direction: m["direction"],
		HitTime:   o.fi.MTime,
		Extra:     map[string]string{},
	}
	for _, k := range []string{"hit_time", "time", "date", "timestamp"} {
		if t, ok := parseTime(m[k]); ok {
			hm.HitTime = t
			break
		}
	}
	for k, v := range m {
		switch k {
		case "prototype", "revision", "bay", "point", "direction":
		default:
			hm.Extra[k] = v
		}
	}
	return hm
}

func parseTime(s string) (time.Time, bool) {
	s = strings.TrimSpace(s)
	if s == "" {
		return time.Time{}, false
	}
	for _, layout := range []string{time.RFC3339Nano, "2006-01-02 15:04:05", "2006-01-02T15:04:05", "2006-01-02 15:04", "20060102T150405", "2006-01-02"} {
		if t, err := time.ParseInLocation(layout, s, time.Local); err == nil {
			return t, true
		}
	}
	return time.Time{}, false
}

// settingsOf is the provenance stored with every result: what the analysis
// was told.
func settingsOf(cfg *Config, f *FolderConfig) any {
	opt := cfg.processOptions(f)
	return map[string]any{
		"analysis":   cfg.Analysis,
		"thresholds": opt.Thresholds,
		"channels":   cfg.Channels,
	}
}

func sha256Hex(b []byte) string {
	sum := sha256.Sum256(b)
	return hex.EncodeToString(sum[:])
}

// futureSlack is how far ahead of this computer's clock a hit time may be
// before it is flagged: recorder and server clocks differ by a few minutes.
const futureSlack = 10 * time.Minute

// reasonFutureHitTime is the code of the flag on a hit whose time lies in
// the future (a recorder clock set wrong, or a mistyped hit_time). It only
// informs: the numbers are not in doubt, the hit's place in a trend is.
const reasonFutureHitTime = "hit_time_in_future"

// flagFutureHitTime adds the future-time flag to res when hitTime is more
// than futureSlack after now.
func flagFutureHitTime(res *pipeline.Result, hitTime, now time.Time) {
	if res == nil || !hitTime.After(now.Add(futureSlack)) {
		return
	}
	for _, r := range res.Reasons {
		if r.Code == reasonFutureHitTime {
			return
		}
	}
	res.Reasons = append(res.Reasons, pipeline.Reason{
		Code:     reasonFutureHitTime,
		Severity: pipeline.SeverityFlag,
		Message: fmt.Sprintf("the hit time %s is %s ahead of this computer's clock: check the recorder's clock or the hit_time metadata",
			hitTime.Format(time.RFC3339), hitTime.Sub(now).Round(time.Minute)),
	})
	res.Decide()
}
