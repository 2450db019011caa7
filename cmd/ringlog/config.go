package main

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"runtime"
	"strings"
	"time"

	"github.com/BurntSushi/toml"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/read"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline/check"
	"github.com/ringlog/ringlog/pipeline/process"
)

// duration is a time.Duration written as "2s", "500ms", "1m" in TOML.
type duration struct{ time.Duration }

func (d *duration) UnmarshalText(b []byte) error {
	v, err := time.ParseDuration(strings.TrimSpace(string(b)))
	if err != nil {
		return fmt.Errorf("not a duration (write e.g. \"2s\" or \"500ms\"): %w", err)
	}
	if v < 0 {
		return fmt.Errorf("duration %s is negative", v)
	}
	d.Duration = v
	return nil
}

func (d duration) MarshalText() ([]byte, error) { return []byte(d.String()), nil }

// Config is the TOML configuration file. The keys database, [[folder]]
// path, prototype and revision are a contract that scripts rely on.
type Config struct {
	Database string `toml:"database"`
	// Spool, Bay and PasswordFile are for a PostgreSQL database (lab.go).
	Spool        string   `toml:"spool"`
	Bay          string   `toml:"bay"`
	PasswordFile string   `toml:"password_file"`
	LogFile      string   `toml:"log_file"`
	LogLevel     string   `toml:"log_level"`
	Settle       duration `toml:"settle"`
	ScanInterval duration `toml:"scan_interval"`
	Workers      int      `toml:"workers"`
	// OpenRetries and OpenBackoff: how often and how patiently a file the
	// recorder still holds locked is retried before it is recorded as
	// failed.
	OpenRetries int      `toml:"open_retries"`
	OpenBackoff duration `toml:"open_backoff"`
	// MaxFileSize in bytes: larger files are recorded as failed rather than
	// read into memory (default 1 GiB).
	MaxFileSize int64 `toml:"max_file_size"`

	Folders    []FolderConfig    `toml:"folder"`
	Channels   []ChannelConfig   `toml:"channel"`
	Prototypes []PrototypeConfig `toml:"prototype"`
	Analysis   AnalysisConfig    `toml:"analysis"`
	Thresholds check.Thresholds  `toml:"thresholds"`
	Report     ReportConfig      `toml:"report"`
	Live       *LiveConfig       `toml:"live"` // the live page (live.go); nil: none

	path string // file the config came from
}

// FolderConfig is one watched export folder.
type FolderConfig struct {
	Path      string   `toml:"path"`
	Prototype string   `toml:"prototype"`
	Revision  string   `toml:"revision"`
	Bay       string   `toml:"bay"`
	Pattern   string   `toml:"pattern"` // regular expression with named groups on the file name
	Include   []string `toml:"include"`
	Recursive bool     `toml:"recursive"`
	Poll      bool     `toml:"poll"` // polling only, for network shares

	re *regexp.Regexp
}

// ChannelConfig names a channel's role and calibration.
type ChannelConfig struct {
	Name        string   `toml:"name"`
	Role        string   `toml:"role"`        // "force" or "response"
	Sensitivity float64  `toml:"sensitivity"` // raw file units per engineering unit; 0 = 1
	Formats     []string `toml:"formats"`     // formats the sensitivity applies to ("wav", "csv", "uff"); empty = all
	Unit        string   `toml:"unit"`
	FullScale   float64  `toml:"full_scale"`  // measuring range in engineering units; 0 = unknown
	HighpassHz  float64  `toml:"highpass_hz"` // AC-coupling corner of the sensor or amplifier, Hz; 0 = none (DC)
}

// PrototypeConfig lists the modes expected on a prototype.
type PrototypeConfig struct {
	Name  string       `toml:"name"`
	Modes []ModeConfig `toml:"mode"`
}

// ModeConfig is one expected mode.
type ModeConfig struct {
	Label       string  `toml:"label"`
	FrequencyHz float64 `toml:"frequency_hz"`
	Tolerance   float64 `toml:"tolerance"` // relative, e.g. 0.1 for +/- 10 %
}

// AnalysisConfig are the analysis defaults.
type AnalysisConfig struct {
	Channel      string   `toml:"channel"`
	ForceChannel string   `toml:"force_channel"`
	WindowTauS   float64  `toml:"window_tau"`
	SampleRate   float64  `toml:"sample_rate"`
	WAVChannels  []string `toml:"wav_channels"` // names of WAV channels in file order
	MaxModes     int      `toml:"max_modes"`
	FMinHz       float64  `toml:"fmin_hz"`
	FMaxHz       float64  `toml:"fmax_hz"`
	MainsHz      float64  `toml:"mains_hz"` // 50 or 60: lines never taken for modes; 0 = both; negative = none
}

// ReportConfig sets the daily report.
type ReportConfig struct {
	Time   string `toml:"time"`   // "HH:MM" local time; "" = no daily report
	Folder string `toml:"folder"` // where reports are written
}

// loadConfig reads and validates a configuration file.
func loadConfig(path string) (*Config, error) {
	cfg := &Config{
		Settle:       duration{2 * time.Second},
		ScanInterval: duration{30 * time.Second},
		Thresholds:   check.DefaultThresholds(),
		path:         path,
	}
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("config %s: %w", path, err)
	}
	md, err := toml.Decode(string(b), cfg)
	if err != nil {
		var pe toml.ParseError
		if errors.As(err, &pe) {
			return nil, fmt.Errorf("config %s: line %d: %s", path, pe.Position.Line, pe.Message)
		}
		return nil, fmt.Errorf("config %s: %w", path, err)
	}
	if und := md.Undecoded(); len(und) > 0 {
		var keys []string
		for _, k := range und {
			keys = append(keys, k.String())
		}
		return nil, fmt.Errorf("config %s: unknown key(s): %s", path, strings.Join(keys, ", "))
	}
	return cfg, cfg.validate()
}

// checkPath refuses a path with a control character: in a TOML basic
// string "C:\ringlog\test.db" reads as a carriage return and a tab.
func (c *Config) checkPath(key, p string) error {
	for i, r := range p {
		if r < 0x20 || r == 0x7f {
			return fmt.Errorf("config %s: %s %q holds a control character (byte %d): in a TOML string in double quotes a backslash starts an escape "+
				"(\\r, \\t, ...); write the path with forward slashes (\"C:/ringlog/test.db\") or in single quotes ('C:\\ringlog\\test.db')",
				c.path, key, p, i)
		}
	}
	return nil
}

func (c *Config) validate() error {
	paths := []struct{ key, p string }{{"database", c.Database}, {"log_file", c.LogFile}, {"report folder", c.Report.Folder}}
	for _, f := range c.Folders {
		paths = append(paths, struct{ key, p string }{"folder path", f.Path})
	}
	for _, x := range paths {
		if err := c.checkPath(x.key, x.p); err != nil {
			return err
		}
	}
	dir := filepath.Dir(c.path)
	abs := func(p string) string {
		if p == "" || filepath.IsAbs(p) {
			return p
		}
		return filepath.Join(dir, p)
	}
	if !db.IsPostgres(c.Database) {
		c.Database = abs(c.Database)
	}
	if err := c.validateLab(abs); err != nil {
		return err
	}
	c.LogFile = abs(c.LogFile)
	c.Report.Folder = abs(c.Report.Folder)
	for i := range c.Folders {
		f := &c.Folders[i]
		if f.Path == "" {
			return fmt.Errorf("config %s: folder %d has no path", c.path, i+1)
		}
		f.Path = abs(f.Path)
		if f.Pattern != "" {
			re, err := regexp.Compile(f.Pattern)
			if err != nil {
				return fmt.Errorf("config %s: folder %s: pattern: %w", c.path, f.Path, err)
			}
			f.re = re
		}
	}
	for _, ch := range c.Channels {
		if ch.Role != "" && ch.Role != "force" && ch.Role != "response" {
			return fmt.Errorf("config %s: channel %q: role must be \"force\" or \"response\", got %q", c.path, ch.Name, ch.Role)
		}
		if ch.Sensitivity < 0 {
			return fmt.Errorf("config %s: channel %q: sensitivity must be positive", c.path, ch.Name)
		}
		if ch.HighpassHz < 0 || math.IsNaN(ch.HighpassHz) || math.IsInf(ch.HighpassHz, 0) {
			return fmt.Errorf("config %s: channel %q: highpass_hz must be 0 (none) or a positive corner frequency", c.path, ch.Name)
		}
		for _, f := range ch.Formats {
			if f != "wav" && f != "csv" && f != "uff" {
				return fmt.Errorf("config %s: channel %q: formats: %q is not one of wav, csv, uff", c.path, ch.Name, f)
			}
		}
	}
	for _, p := range c.Prototypes {
		for _, m := range p.Modes {
			if m.FrequencyHz <= 0 || m.Tolerance < 0 {
				return fmt.Errorf("config %s: prototype %q mode %q: frequency_hz must be positive and tolerance not negative", c.path, p.Name, m.Label)
			}
		}
	}
	if c.Report.Time != "" {
		if _, err := time.Parse("15:04", c.Report.Time); err != nil {
			return fmt.Errorf("config %s: report time %q: write it as HH:MM", c.path, c.Report.Time)
		}
	}
	if err := c.Thresholds.Validate(); err != nil {
		return fmt.Errorf("config %s: thresholds: %w", c.path, err)
	}
	if c.Workers <= 0 {
		c.Workers = runtime.NumCPU()
	}
	if c.MaxFileSize <= 0 {
		c.MaxFileSize = read.DefaultMaxFileSize
	}
	if c.OpenRetries < 0 {
		return fmt.Errorf("config %s: open_retries must not be negative", c.path)
	}
	return nil
}

// processOptions returns the analysis options for files of folder f (nil
// for files given on the command line).
func (c *Config) processOptions(f *FolderConfig) process.Options {
	opt := process.Defaults()
	opt.Thresholds = c.Thresholds
	opt.Channel = c.Analysis.Channel
	opt.ForceChannel = c.Analysis.ForceChannel
	opt.WindowTauS = c.Analysis.WindowTauS
	opt.Read.SampleRate = c.Analysis.SampleRate
	opt.Read.Names = c.Analysis.WAVChannels
	opt.Modal.MaxModes = c.Analysis.MaxModes
	opt.Modal.FMinHz = c.Analysis.FMinHz
	opt.Modal.FMaxHz = c.Analysis.FMaxHz
	opt.Modal.MainsHz = c.Analysis.MainsHz
	for _, ch := range c.Channels {
		if ch.Sensitivity > 0 {
			if opt.Calibration == nil {
				opt.Calibration = map[string]process.Calibration{}
			}
			opt.Calibration[ch.Name] = process.Calibration{Sensitivity: ch.Sensitivity, Formats: ch.Formats}
		}
		if ch.FullScale > 0 {
			if opt.FullScale == nil {
				opt.FullScale = map[string]float64{}
			}
			opt.FullScale[ch.Name] = ch.FullScale
		}
		if ch.HighpassHz > 0 {
			if opt.HighpassHz == nil {
				opt.HighpassHz = map[string]float64{}
			}
			opt.HighpassHz[ch.Name] = ch.HighpassHz
		}
		if ch.Unit != "" {
			if opt.Units == nil {
				opt.Units = map[string]string{}
			}
			opt.Units[ch.Name] = ch.Unit
		}
		if ch.Role == "force" && opt.ForceChannel == "" {
			opt.ForceChannel = ch.Name
		}
		if ch.Role == "response" && opt.Channel == "" {
			opt.Channel = ch.Name
		}
	}
	return opt
}

// fileMeta returns the metadata the folder defaults and the file-name
// pattern give for path.
func (f *FolderConfig) fileMeta(path string) map[string]string {
	m := map[string]string{}
	if f == nil {
		return m
	}
	set := func(k, v string) {
		if v != "" {
			m[k] = v
		}
	}
	set("prototype", f.Prototype)
	set("revision", f.Revision)
	set("bay", f.Bay)
	if f.re != nil {
		name := filepath.Base(path)
		if sm := f.re.FindStringSubmatch(name); sm != nil {
			for i, g := range f.re.SubexpNames() {
				if g != "" && sm[i] != "" {
					m[g] = sm[i]
				}
			}
		}
	}
	return m
}

func defaultThresholds() check.Thresholds { return check.DefaultThresholds() }

// labelModes gives modes of res the labels of the expected modes of the
// prototype (see labelNearest).
func (c *Config) labelModes(prototype string, res *pipeline.Result) {
	for _, p := range c.Prototypes {
		if p.Name == prototype {
			labelNearest(res, p.Modes)
		}
	}
}

// labelNearest gives modes of res the labels of expected: each expected
// mode labels the nearest mode within its tolerance (default 10 %), each
// label at most once per hit and each mode at most one label. A label
// already on a mode (stored at ingest) wins: that mode and that label are
// taken. Modes that match none keep an empty label; the statistics
// cluster them.
func labelNearest(res *pipeline.Result, expected []ModeConfig) {
	if res == nil {
		return
	}
	taken := make([]bool, len(res.Modes))
	used := map[string]bool{}
	for i, m := range res.Modes {
		if m.Label != "" {
			taken[i], used[m.Label] = true, true
		}
	}
	for _, em := range expected {
		if used[em.Label] {
			continue
		}
		tol := em.Tolerance
		if tol <= 0 {
			tol = 0.1
		}
		best, bi := math.Inf(1), -1
		for i, m := range res.Modes {
			if taken[i] || m.Dropped {
				continue
			}
			if d := math.Abs(m.FrequencyHz-em.FrequencyHz) / em.FrequencyHz; d <= tol && d < best {
				best, bi = d, i
			}
		}
		if bi >= 0 {
			taken[bi], used[em.Label] = true, true
			res.Modes[bi].Label = em.Label
		}
	}
}
