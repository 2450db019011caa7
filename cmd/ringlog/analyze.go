package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"strings"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/process"
	"github.com/ringlog/ringlog/pipeline/read"
)

func init() {
	register(command{name: "analyze", summary: "check hit files and estimate frequency and damping of every mode", run: runAnalyze})
}

func runAnalyze(ctx context.Context, e *env, args []string) error {
	fs := newFlags("analyze", "[--json] [--plot FILE.svg] [--channel NAME] [--force-channel NAME] [--window-tau SECONDS] FILE...", e.stderr)
	asJSON := fs.Bool("json", false, "print one JSON object per file, one per line")
	channel := fs.String("channel", "", "response channel to analyse (default: the first response channel)")
	force := fs.String("force-channel", "", "force (hammer) channel (default: a channel named like force/hammer)")
	noForce := fs.Bool("no-force", false, "ignore any force channel")
	tau := fs.Float64("window-tau", 0, "time constant in seconds of an exponential window applied by the recorder (corrected for)")
	sampleRate := fs.Float64("sample-rate", 0, "sample rate in Hz for files that carry none")
	config := fs.String("config", "", "TOML configuration file for thresholds and channel settings (optional)")
	plot := fs.String("plot", "", "write a plot of each hit as SVG (decay, envelope, fitted model, spectrum); with several files FILE-1.svg, FILE-2.svg, ... in the order given")
	files, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(files) == 0 {
		return usagef("no FILE given")
	}
	if *tau < 0 {
		return usagef("--window-tau must be positive, got %g", *tau)
	}
	if *sampleRate < 0 {
		return usagef("--sample-rate must be positive, got %g", *sampleRate)
	}
	opt := process.Defaults()
	if *config != "" {
		cfg, err := loadConfig(*config)
		if err != nil {
			return err
		}
		opt = cfg.processOptions(nil)
	}
	opt.Channel = *channel
	opt.ForceChannel = *force
	opt.NoForce = *noForce
	opt.WindowTauS = *tau
	if *sampleRate > 0 {
		opt.Read.SampleRate = *sampleRate
	}

	failed := 0
	for i, f := range files {
		if err := ctx.Err(); err != nil {
			return err
		}
		res, err := analyseFile(ctx, f, opt)
		if err != nil {
			failed++
			fmt.Fprintf(e.stderr, "ringlog analyze: %v\n", err)
			if *asJSON {
				writeJSONLine(e.stdout, map[string]string{"file": f, "error": err.Error()})
			}
			continue
		}
		if *asJSON {
			b, err := json.Marshal(res)
			if err != nil { // checkFinite missed a field: still an error naming the file
				failed++
				err = fmt.Errorf("%s: %v", f, err)
				fmt.Fprintf(e.stderr, "ringlog analyze: %v\n", err)
				writeJSONLine(e.stdout, map[string]string{"file": f, "error": err.Error()})
				continue
			}
			e.stdout.Write(append(b, '\n'))
		} else {
			printResult(e.stdout, res)
		}
		if *plot != "" {
			if err := writeHitPlot(hitPlotPath(*plot, i, len(files)), f, opt, res); err != nil {
				failed++
				fmt.Fprintf(e.stderr, "ringlog analyze: %v\n", err)
			}
		}
	}
	if failed > 0 {
		return errReported
	}
	return nil
}

// writeJSONLine writes v as one line of JSON. Should v hold a value JSON
// cannot carry, it writes an error object instead, with the "file" key
// every error object has (null when v names no file).
func writeJSONLine(w io.Writer, v any) {
	b, err := json.Marshal(v)
	if err != nil {
		var file any
		switch x := v.(type) {
		case map[string]any:
			file = x["file"]
		case map[string]string:
			file = x["file"]
		}
		b, _ = json.Marshal(map[string]any{"file": file, "error": err.Error()})
	}
	w.Write(append(b, '\n'))
}

// analyseFile is process.File that never panics and never returns a
// result with a value that is not finite: both become an error naming
// the file.
func analyseFile(ctx context.Context, path string, opt process.Options) (res *pipeline.Result, err error) {
	defer func() {
		if p := recover(); p != nil {
			res, err = nil, fmt.Errorf("%s: internal error while analysing: %v", path, p)
		}
	}()
	data, err := read.ReadRegular(ctx, path, 0)
	if err != nil {
		var pe *fs.PathError
		if errors.As(err, &pe) {
			return nil, &read.Error{File: path, Offset: -1, Problem: "cannot open", Err: pe.Err}
		}
		return nil, err
	}
	res, err = process.Data(ctx, path, data, opt)
	if err == nil {
		err = checkFinite(path, res)
	}
	if err != nil {
		return nil, err
	}
	return res, nil
}

// checkFinite returns an error naming the file when the result holds a
// number that is NaN or infinite (it could be neither stored nor printed
// as JSON).
func checkFinite(path string, res *pipeline.Result) error {
	if _, err := json.Marshal(res); err != nil {
		var uv *json.UnsupportedValueError
		if errors.As(err, &uv) {
			return fmt.Errorf("%s: the analysis gave a value that is not a finite number (%s); the file's sample rate, calibration or values are out of range", path, uv.Str)
		}
		return fmt.Errorf("%s: %v", path, err)
	}
	return nil
}

// printResult writes the human-readable view of one hit.
func printResult(w io.Writer, r *pipeline.Result) {
	fmt.Fprintf(w, "%s  %s\n", r.File, strings.ToUpper(string(r.Verdict)))
	src := fmt.Sprintf("channel %s", r.Channel)
	if r.ForceChannel != "" {
		src += ", force " + r.ForceChannel
	}
	fmt.Fprintf(w, "  %s, %.0f Hz, %.3f s, noise rms %.3g", src, r.SampleRate, r.DurationS, r.NoiseRMS)
	if r.WindowTauS > 0 {
		fmt.Fprintf(w, ", exponential window tau %.4g s corrected", r.WindowTauS)
	}
	fmt.Fprintln(w)
	if note := r.Meta["force_channel_picked"]; note != "" {
		fmt.Fprintf(w, "  %s; analysed channel %s\n", note, r.Channel)
	}
	if len(r.Modes) > 0 {
		fmt.Fprintf(w, "  %-4s %12s %9s %21s %7s %7s  %s\n", "mode", "f_n [Hz]", "zeta [%]", "95 % interval [%]", "cycles", "spread", "cross-checks zeta [%]")
		for i, m := range r.Modes {
			var cc []string
			for _, est := range m.Estimates[min(1, len(m.Estimates)):] {
				cc = append(cc, fmt.Sprintf("%s %.3f", est.Method, 100*est.DampingRatio))
			}
			note := ""
			if m.Dropped {
				note = " (dropped)"
			}
			fmt.Fprintf(w, "  %-4d %12.3f %9.3f %9.3f .. %-8.3f %7.0f %6.0f%%  %s%s\n",
				i+1, m.FrequencyHz, 100*m.DampingRatio, 100*m.DampingRatioCI[0], 100*m.DampingRatioCI[1],
				m.Cycles, 100*m.Spread, strings.Join(cc, ", "), note)
		}
		printAmplitudeCurves(w, r)
	} else {
		fmt.Fprintln(w, "  no mode found")
	}
	printReasons(w, "  ", r.Reasons)
	fmt.Fprintln(w)
}

// printReasons prints each reason once: a rule that names two modes (two
// beating modes) stores the same reason for each, with the same message,
// and the message names both.
func printReasons(w io.Writer, indent string, reasons []pipeline.Reason) {
	seen := map[pipeline.Reason]bool{}
	for _, rs := range reasons {
		key := rs
		key.Mode = nil
		if seen[key] {
			continue
		}
		seen[key] = true
		fmt.Fprintf(w, "%s%-6s %s: %s\n", indent, rs.Severity, rs.Code, rs.Message)
	}
}
