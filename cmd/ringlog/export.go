package main

import (
	"context"
	"fmt"
	"io"
	"os"
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
	format := fs.String("format", "", "csv (one table) or json (one object per revision per line)")
	out := fs.String("out", "", "write the export to this file instead of standard output; with csv the provenance goes beside it, to FILE.provenance.txt")
	provenance := fs.String("provenance", "", "csv: write the provenance (tool, time, units, cautions, hits used) to this file")
	withProv := fs.Bool("with-provenance", false, "csv: put the provenance above the table as '# ' comment lines (a spreadsheet will not import them cleanly)")
	decimalComma := fs.Bool("decimal-comma", false, "csv: decimal comma and ';' between cells, for spreadsheets in such locales")
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
	if *format == "json" && (*provenance != "" || *withProv || *decimalComma) {
		return usagef("--provenance, --with-provenance and --decimal-comma are for --format csv (the JSON export carries its provenance)")
	}
	if *out != "" && *provenance == "" && *format == "csv" {
		*provenance = *out + ".provenance.txt"
	}
	src, err := q.open(ctx)
	if err != nil {
		return err
	}
	defer src.Close()
	limitQueryHeap()
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
	return writeExport(e, exs, *format, *out, *provenance, rpt.ExportCSVOptions{CSVOptions: rpt.CSVOptions{DecimalComma: *decimalComma}, WithProvenance: *withProv})
}

// writeExport writes the exports to standard output or the file out, and
// the provenance of a CSV export to the file provenance when named. A CSV
// export to standard output without its provenance prints the cautions on
// standard error, as every output of coefficients carries them.
func writeExport(e *env, exs []rpt.Export, format, out, provenance string, opt rpt.ExportCSVOptions) error {
	write := func(w io.Writer) error {
		if format == "json" {
			return rpt.WriteExportJSON(w, exs)
		}
		return rpt.WriteExportCSV(w, exs, opt)
	}
	if provenance != "" {
		if err := writeFileWith(provenance, func(w io.Writer) error { return rpt.WriteExportProvenance(w, exs) }); err != nil {
			return err
		}
	}
	if out != "" {
		return writeFileWith(out, write)
	}
	if format == "csv" && provenance == "" && !opt.WithProvenance {
		for _, c := range rpt.Cautions() {
			fmt.Fprintf(e.stderr, "caution: %s\n", c)
		}
		fmt.Fprintln(e.stderr, "(provenance: --provenance FILE, or --with-provenance for '# ' lines above the table)")
	}
	return write(e.stdout)
}

// writeFileWith creates path and fills it with write; an error names the
// file.
func writeFileWith(path string, write func(io.Writer) error) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	if err := write(f); err != nil {
		f.Close()
		return fmt.Errorf("%s: %w", path, err)
	}
	if err := f.Close(); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	return nil
}
