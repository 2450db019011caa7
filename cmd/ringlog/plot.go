package main

import (
	"bytes"
	"fmt"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/ringlog/ringlog/pipeline"
	"github.com/ringlog/ringlog/pipeline/process"
	"github.com/ringlog/ringlog/pipeline/read"
	"github.com/ringlog/ringlog/report/page"
)

// hitPlotPath returns where 'analyze --plot FILE.svg' writes the plot of
// the i-th (from 0) of n files: FILE.svg itself for one file, FILE-1.svg,
// FILE-2.svg, ... (numbered in the order the files were given) for
// several.
func hitPlotPath(plot string, i, n int) string {
	if n <= 1 {
		return plot
	}
	ext := filepath.Ext(plot)
	return strings.TrimSuffix(plot, ext) + "-" + strconv.Itoa(i+1) + ext
}

// writeHitPlot reads file again with the options of the analysis and
// writes the plot of its analysis res to path as an SVG document (see
// page.WriteHitSVG): the record with the fitted envelope and model, the
// first cycles, the spectrum with the modes marked.
func writeHitPlot(path, file string, opt process.Options, res *pipeline.Result) error {
	rec, err := read.File(file, opt.ReadOptions(res.Format))
	if err != nil {
		return err
	}
	for i := range rec.Channels {
		if u, ok := opt.Units[rec.Channels[i].Name]; ok && u != "" {
			rec.Channels[i].Unit = u
		}
	}
	var buf bytes.Buffer
	if err := page.WriteHitSVG(&buf, rec, res); err != nil {
		return fmt.Errorf("%s: plot: %w", file, err)
	}
	return writeFileAtomic(path, buf.Bytes())
}
