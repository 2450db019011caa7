package main

// The daily summary page: written by 'ringlog report daily', by the daemon
// at the configured time, and at the end of 'ringlog demo'.

import (
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/rs/zerolog"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline/read"
	rpt "github.com/ringlog/ringlog/report"
	"github.com/ringlog/ringlog/report/page"
)

// dailyName is the file name of the daily summary of day.
func dailyName(day time.Time) string {
	return "ringlog-daily-" + day.Format("2006-01-02") + ".html"
}

// reportFolder is where the daemon writes its reports: the configured
// folder, or the folder of the database.
func reportFolder(cfg *Config) string {
	if cfg.Report.Folder != "" {
		return cfg.Report.Folder
	}
	if db.IsPostgres(cfg.Database) {
		return filepath.Dir(cfg.Spool)
	}
	return filepath.Dir(cfg.Database)
}

// dailyOptions returns the page options for day from cfg (nil: none).
func dailyOptions(cfg *Config, day time.Time, dbPath string) page.DailyOptions {
	opt := page.DailyOptions{Day: day, Generator: versionString(), Database: dbPath}
	if cfg == nil {
		return opt
	}
	opt.MaxFileSize = cfg.MaxFileSize
	opt.Expected = func(prototype string) []rpt.Expected {
		var out []rpt.Expected
		for _, p := range cfg.Prototypes {
			if p.Name == prototype {
				for _, m := range p.Modes {
					out = append(out, rpt.Expected{Label: m.Label, FrequencyHz: m.FrequencyHz, Tolerance: m.Tolerance})
				}
			}
		}
		return out
	}
	opt.Read = func(h db.Hit) read.Options {
		format := ""
		if h.Result != nil {
			format = h.Result.Format
		}
		return cfg.processOptions(folderOf(cfg, h.Path)).ReadOptions(format)
	}
	return opt
}

// folderOf returns the watched folder that holds path, the deepest when
// folders nest; nil when none does.
func folderOf(cfg *Config, path string) *FolderConfig {
	var best *FolderConfig
	for i := range cfg.Folders {
		f := &cfg.Folders[i]
		rel, err := filepath.Rel(f.Path, path)
		if err != nil || rel == ".." || strings.HasPrefix(rel, ".."+string(filepath.Separator)) || filepath.IsAbs(rel) {
			continue
		}
		if best == nil || len(f.Path) > len(best.Path) {
			best = f
		}
	}
	return best
}

// writeDaily writes the daily summary of day to path, atomically: the
// page appears under its name only once it is complete.
func writeDaily(ctx context.Context, store page.Source, opt page.DailyOptions, path string) (page.DailySummary, error) {
	dir := filepath.Dir(path)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return page.DailySummary{}, fmt.Errorf("report folder: %w", err)
	}
	var sum page.DailySummary
	err := writeAtomic(path, func(w io.Writer) error {
		var err error
		sum, err = page.Daily(ctx, w, store, opt)
		return err
	})
	return sum, err
}

// dailyClock is what the scheduler needs of time; tests replace it.
type dailyClock struct {
	now   func() time.Time
	after func(time.Duration) <-chan time.Time
}

var realClock = dailyClock{now: time.Now, after: time.After}

// scheduleDaily writes the daily summary into the report folder (the
// configured [report] folder, or the database's folder) at the configured
// [report] time each day, until ctx ends. It does nothing when no report
// time is configured.
//
// The report written at the report time covers that calendar day up to
// then. Report times missed while the daemon was down are caught up on
// start: the previous day's report is written if its file does not exist,
// and today's if the report time has passed and its file does not exist.
//
// A report file written before the moment it should reflect is rewritten
// once: the previous day's when it was written before that day ended (so
// the hits after the report time join it, shortly after midnight), and the
// day's when it was written before the report time (for example by hand
// with 'ringlog report daily'). Otherwise an existing report is never
// overwritten. Failures are logged and retried every 15 minutes, never
// fatal: the daemon keeps recording hits.
func scheduleDaily(ctx context.Context, cfg *Config, store *db.DB, log zerolog.Logger) {
	runDaily(ctx, cfg, store, log, realClock)
}

func runDaily(ctx context.Context, cfg *Config, store page.Source, log zerolog.Logger, clk dailyClock) {
	if cfg.Report.Time == "" {
		return
	}
	at, err := time.Parse("15:04", cfg.Report.Time)
	if err != nil {
		log.Error().Str("time", cfg.Report.Time).Msg("daily report time is not HH:MM; no daily report")
		return
	}
	folder := reportFolder(cfg)
	failed := map[string]time.Time{}  // day -> last failure, to retry every 15 minutes
	written := map[string]time.Time{} // day -> cutoff of the report written here
	// write writes the report of day unless its file exists and was
	// written at or after cutoff (the moment the report should reflect).
	write := func(day time.Time, why string, cutoff time.Time) {
		path := filepath.Join(folder, dailyName(day))
		key := day.Format("2006-01-02")
		if c, ok := written[key]; ok && !c.Before(cutoff) {
			return // written here for this moment (whatever the file's clock says)
		}
		if st, err := os.Stat(path); err == nil {
			if !st.ModTime().Before(cutoff) {
				return
			}
			why += "; the existing file was written before " + cutoff.Format("2006-01-02 15:04")
		}
		if t, ok := failed[key]; ok && clk.now().Sub(t) < 15*time.Minute {
			return
		}
		sum, err := writeDaily(ctx, store, dailyOptions(cfg, day, cfg.Database), path)
		if err != nil {
			if ctx.Err() == nil {
				failed[key] = clk.now()
				log.Error().Err(err).Str("day", key).Msg("daily report failed; retrying in 15 minutes")
			}
			return
		}
		delete(failed, key)
		written[key] = cutoff
		log.Info().Str("file", path).Str("day", sum.Day).Int("hits", sum.Hits).Int("flagged", sum.Flagged).
			Int("rejected", sum.Rejected).Int("superseded", sum.Superseded).Int("failed", sum.Failed).Str("why", why).Msg("daily report written")
	}
	// today's report time, in local time
	slot := func(t time.Time) time.Time {
		y, m, d := t.Date()
		return time.Date(y, m, d, at.Hour(), at.Minute(), 0, 0, t.Location())
	}
	endOf := func(t time.Time) time.Time { _, end := page.DayBounds(t); return end }
	// Poll once a minute rather than sleep until the report time: a
	// suspended machine or a clock change then delays a report by a
	// minute at most.
	for {
		now := clk.now()
		prev := now.AddDate(0, 0, -1)
		write(prev, "previous day", endOf(prev))
		if !now.Before(slot(now)) {
			write(now, "report time", slot(now))
		}
		wait := time.Minute
		if d := slot(now).Sub(now); d > 0 && d < wait {
			wait = d
		}
		select {
		case <-ctx.Done():
			return
		case <-clk.after(wait):
		}
	}
}

// writeDemoReport ends 'ringlog demo': it writes the daily summary of the
// demo's day (the day of its last hit) into the demo folder and prints the
// page's path.
func writeDemoReport(ctx context.Context, e *env, store *db.DB, root, dbPath, cfgPath string) error {
	cfg, err := loadConfig(cfgPath)
	if err != nil {
		return err
	}
	day := time.Now()
	if st, err := store.Status(ctx); err == nil && st.LastHit != nil {
		day = st.LastHit.HitTime.Local()
	}
	path := filepath.Join(root, dailyName(day))
	sum, err := writeDaily(ctx, store, dailyOptions(cfg, day, dbPath), path)
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "\ndaily report (%s, %d flagged, %d rejected; open it in a browser):\n  %s\n",
		reportPlural(sum.Hits, "hit"), sum.Flagged, sum.Rejected, path)
	return nil
}
