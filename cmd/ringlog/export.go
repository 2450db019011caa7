package main

import (
	"context"
	"fmt"
	"time"

	"github.com/ringlog/ringlog/db"
	rpt "github.com/ringlog/ringlog/report"
)

func init() {
	register(command{name: "export", summary: "write the per-mode damping table and Rayleigh coefficients with provenance (csv or json)", run: runExport})
}

func runExport(ctx context.Context, e *env, args []string) error {
	fs := newFlags("export", "--db PATH --prototype P [--revision R] --format csv|json [--config FILE]", e.stderr)
	rf := addReportFlags(fs)
	revision := fs.String("revision", "", "only this revision (default: every revision)")
	format := fs.String("format", "", "csv (one table, '# ' comment header) or json (one object per revision per line)")
	rest, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return usagef("unexpected argument %q", rest[0])
	}
	switch *format {
	case "csv", "json":
	case "":
		return usagef("--format csv or --format json is required")
	default:
		return usagef("--format %q: use csv or json", *format)
	}
	src, err := rf.open(ctx)
	if err != nil {
		return err
	}
	defer src.Close()
	hits, err := src.hits(ctx, db.Filter{Revision: *revision})
	if err != nil {
		return err
	}
	if len(hits) == 0 {
		noHits(e.stderr, src.prototype, *revision)
		return nil
	}
	id := rpt.Identify(hits, src.identify)
	opt := rpt.ExportOptions{Tool: versionString(), GeneratedAt: time.Now().UTC().Truncate(time.Second)}
	var exs []rpt.Export
	for _, rs := range rpt.Stats(id) {
		ex := rpt.BuildExport(rs, opt)
		if ex.RayleighNote != "" {
			fmt.Fprintf(e.stderr, "ringlog export: revision %s: %s\n", revLabel(rs.Revision), ex.RayleighNote)
		}
		exs = append(exs, ex)
	}
	if *format == "json" {
		return rpt.WriteExportJSON(e.stdout, exs)
	}
	return rpt.WriteExportCSV(e.stdout, exs)
}
