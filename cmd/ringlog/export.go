package main

import (
	"context"
	"fmt"
	"time"

	rpt "github.com/ringlog/ringlog/report"
)

func init() {
	register(command{name: "export", summary: "write the per-mode damping table and Rayleigh coefficients with provenance (csv or json)", run: runExport})
}

func runExport(ctx context.Context, e *env, args []string) error {
	fs := newFlags("export", "--db PATH --prototype P [--revision R] [--bay B] [--mode L] [--since DATE] [--until DATE] [--with-flagged] --format csv|json [--config FILE]", e.stderr)
	q := addQueryFlags(fs)
	fs.Lookup("revision").Usage = "only this revision; repeat it for several (default: every revision)"
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
	src, err := q.open(ctx)
	if err != nil {
		return err
	}
	defer src.Close()
	hits, err := src.hits(ctx)
	if err != nil {
		return err
	}
	if len(hits) == 0 {
		noHits(e.stderr, src.prototype, q.revisions...)
		return nil
	}
	id := rpt.Identify(hits, src.identify)
	if !knownLabels(e, id, q.modes) {
		return nil
	}
	all := rpt.Stats(id)
	keepModes(all, q.modes)
	opt := rpt.ExportOptions{Tool: versionString(), GeneratedAt: time.Now().UTC().Truncate(time.Second)}
	var exs []rpt.Export
	for _, rs := range all {
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
