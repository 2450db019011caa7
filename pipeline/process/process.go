package process

import (
	"context"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/check"
	"github.com/ringlog/ringlog/pipeline/modal"
	"github.com/ringlog/ringlog/pipeline/read"
)

// Options steer the analysis of one hit. The zero value is not usable;
// start from Defaults.
type Options struct {
	Channel      string  // response channel to analyse; "" = first response channel
	ForceChannel string  // force channel; "" = the channel the reader marked as force
	NoForce      bool    // ignore any force channel
	WindowTauS   float64 // exponential window time constant; 0 = from file metadata, or none
	Read         read.Options
	// Calibration divides, per channel name, the raw values of files of
	// the listed formats (raw file units per engineering unit), through
	// the reader's sensitivities; FullScale below is in engineering units.
	Calibration map[string]Calibration
	// FullScale and Units override, per channel name, what the file says
	// (WAV files carry neither).
	FullScale map[string]float64
	Units     map[string]string
	// HighpassHz is, per channel name, the corner of the first-order
	// high-pass (AC coupling) of the sensor or amplifier; it becomes part
	// of the fitted model of that response channel.
	HighpassHz map[string]float64
	Modal      modal.Options
	Thresholds check.Thresholds
}

// Defaults returns the options used when nothing is configured.
func Defaults() Options {
	return Options{Thresholds: check.DefaultThresholds()}
}

// File reads one hit file and analyses it. An error means the file could
// not be read or has no usable channel; a spoiled hit is not an error but a
// Result with verdict "rejected" and its reasons. Like every re-read it
// opens only a regular file within read.DefaultMaxFileSize and stops with
// ctx (read.ReadRegular).
func File(ctx context.Context, path string, opt Options) (*pipeline.Result, error) {
	data, err := read.ReadRegular(ctx, path, 0)
	if err != nil {
		return nil, &read.Error{File: path, Offset: -1, Problem: "cannot open", Err: err}
	}
	return Data(ctx, path, data, opt)
}

// Data analyses a file already read into memory (the daemon reads each
// file once, hashes the bytes and analyses the same bytes). name is the
// file's path, used for format detection and in errors.
func Data(ctx context.Context, name string, data []byte, opt Options) (*pipeline.Result, error) {
	rec, err := read.Data(name, data, opt.ReadOptions(read.Sniff(data[:min(len(data), 1024)], name)))
	if err != nil {
		return nil, err
	}
	return Recording(ctx, rec, opt)
}

// ReadOptions are the reader options for a file of the given format
// (Recording.Format or read.Sniff): the force channel, and the
// calibrations that apply to that format. Whoever re-reads a hit's file
// (plots, reports) reads it with these, as the analysis did.
func (opt Options) ReadOptions(format string) read.Options {
	ro := opt.Read
	if opt.ForceChannel != "" {
		ro.ForceChannel = opt.ForceChannel
	}
	for name, cal := range opt.Calibration {
		if cal.Sensitivity > 0 && cal.applies(format) {
			if ro.Sensitivity == nil {
				ro.Sensitivity = map[string]float64{}
			}
			ro.Sensitivity[name] = cal.Sensitivity
		}
	}
	return ro
}

// Recording analyses a recording already in memory.
func Recording(ctx context.Context, rec *pipeline.Recording, opt Options) (*pipeline.Result, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	for i := range rec.Channels {
		c := &rec.Channels[i]
		if v, ok := opt.FullScale[c.Name]; ok && v > 0 {
			c.FullScale = v
		}
		if u, ok := opt.Units[c.Name]; ok && u != "" {
			c.Unit = u
		}
	}
	resp, force, err := channels(rec, opt)
	if err != nil {
		return nil, err
	}
	mo := opt.Modal
	mo.WindowTauS = opt.WindowTauS
	if hp, ok := opt.HighpassHz[resp.Name]; ok && hp > 0 {
		mo.HighpassHz = hp
	}
	if mo.WindowTauS == 0 {
		mo.WindowTauS = metaFloat(rec.Meta, "window_tau", "window_tau_s", "exp_window_tau")
	}
	th := opt.Thresholds

	res := &pipeline.Result{
		File:            rec.Path,
		Format:          rec.Format,
		Channel:         resp.Name,
		SampleRate:      resp.SampleRate,
		DurationS:       resp.Duration(),
		WindowTauS:      mo.WindowTauS,
		Meta:            rec.Meta,
		AnalysisVersion: pipeline.AnalysisVersion,
		Reasons:         []pipeline.Reason{},
		Modes:           []pipeline.Mode{},
	}
	var fs []float64
	if force != nil {
		res.ForceChannel = force.Name
		fs = force.Samples
	}
	dec, err := modal.Analyze(resp.Samples, resp.SampleRate, fs, mo)
	if err != nil {
		return nil, fmt.Errorf("%s: channel %q: %w", rec.Path, resp.Name, err)
	}
	res.NoiseRMS = dec.NoiseRMS
	res.PeakForce = modal.PeakForce(fs)
	res.TriggerS = float64(dec.Trigger) / resp.SampleRate
	res.OnsetS = float64(dec.Onset) / resp.SampleRate
	res.Modes = append(res.Modes, dec.Modes...)
	res.Reasons = append(res.Reasons, check.Run(check.Input{Rec: rec, Response: resp, Force: force, Decay: dec}, th)...)
	res.SortModes()
	res.Decide()
	return res, nil
}

// Calibration converts a channel's raw file values to engineering units.
type Calibration struct {
	Sensitivity float64  // raw file units per engineering unit, > 0
	Formats     []string // "wav", "csv", "uff"; empty: every format
}

func (c Calibration) applies(format string) bool {
	if len(c.Formats) == 0 {
		return true
	}
	for _, f := range c.Formats {
		if f == format || (f == "uff" && strings.HasPrefix(format, "uff")) {
			return true
		}
	}
	return false
}

func channels(rec *pipeline.Recording, opt Options) (resp, force *pipeline.Channel, err error) {
	if opt.Channel != "" {
		resp = rec.Channel(opt.Channel)
		if resp == nil {
			return nil, nil, fmt.Errorf("%s: no channel named %q (channels: %s)", rec.Path, opt.Channel, names(rec))
		}
	} else {
		rs := rec.ByRole(pipeline.RoleResponse)
		if len(rs) == 0 {
			return nil, nil, fmt.Errorf("%s: no response channel (channels: %s)", rec.Path, names(rec))
		}
		resp = rs[0]
	}
	if opt.NoForce {
		return resp, nil, nil
	}
	if opt.ForceChannel != "" {
		force = rec.Channel(opt.ForceChannel)
		if force == nil {
			return nil, nil, fmt.Errorf("%s: no force channel named %q (channels: %s)", rec.Path, opt.ForceChannel, names(rec))
		}
	} else if fc := rec.ByRole(pipeline.RoleForce); len(fc) > 0 {
		force = fc[0]
	}
	if force == resp {
		force = nil
	}
	if force != nil && (len(force.Samples) != len(resp.Samples) || force.SampleRate != resp.SampleRate) {
		return nil, nil, fmt.Errorf("%s: force channel %q and response %q differ in length or sample rate", rec.Path, force.Name, resp.Name)
	}
	return resp, force, nil
}

func names(rec *pipeline.Recording) string {
	var n []string
	for _, c := range rec.Channels {
		n = append(n, c.Name)
	}
	return strings.Join(n, ", ")
}

func metaFloat(meta map[string]string, keys ...string) float64 {
	for _, k := range keys {
		if v, ok := meta[k]; ok {
			f, err := strconv.ParseFloat(strings.TrimSpace(strings.ReplaceAll(v, ",", ".")), 64)
			if err == nil && f > 0 && !math.IsInf(f, 0) {
				return f
			}
		}
	}
	return 0
}
