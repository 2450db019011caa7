package main

import (
	"context"
	"fmt"

	"github.com/ringlog/ringlog/db"
	"github.com/ringlog/ringlog/pipeline/process"
	"github.com/ringlog/ringlog/pipeline/read"
)

func init() {
	register(command{name: "reanalyze", summary: "re-run stored hits through the current analysis, keeping the old results as provenance", run: runReanalyze})
}

func runReanalyze(ctx context.Context, e *env, args []string) error {
	fl := newFlags("reanalyze", "--db PATH [--config FILE] [filters]", e.stderr)
	q := addQueryFlags(fl, withoutCounting)
	fl.Lookup("config").Usage = "TOML configuration: the database and the analysis settings (default: built-in defaults)"
	fl.Lookup("mode").Usage = "only hits with a mode stored under this label; repeat it for several"
	verdict := addVerdictFlag(fl)
	rest, err := parseInterleaved(fl, args)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return usagef("unexpected argument %q", rest[0])
	}
	f, err := q.storeFilter()
	if err != nil {
		return err
	}
	if err := verdictFilter(&f, *verdict); err != nil {
		return err
	}
	cfg, err := q.config()
	if err != nil {
		return err
	}
	if cfg == nil {
		cfg = defaultConfig()
	}
	store, err := q.openWrite(ctx)
	if err != nil {
		return err
	}
	defer store.Close()
	files, err := store.StoredFiles(ctx, f)
	if err != nil {
		return err
	}
	if len(files) == 0 {
		fmt.Fprintln(e.stderr, "no hits match these filters")
		return nil
	}
	kept, err := storedLabels(ctx, store, f)
	if err != nil {
		return err
	}
	opt := cfg.processOptions(nil)
	settings := settingsOf(cfg, nil)
	done, missing, failed := 0, 0, 0
	for _, sf := range files {
		if err := ctx.Err(); err != nil {
			return err
		}
		// The bytes may be found under the first path or any duplicate
		// path; the content hash must still match.
		var data []byte
		var used string
		for _, p := range append([]string{sf.Path}, sf.Others...) {
			b, err := read.ReadRegular(ctx, p, cfg.MaxFileSize)
			if err == nil && sha256Hex(b) == sf.SHA256 {
				data, used = b, p
				break
			}
		}
		if data == nil {
			missing++
			fmt.Fprintf(e.stderr, "hit %d: %s: file gone or changed since it was recorded; old result kept\n", sf.HitID, sf.Path)
			continue
		}
		res, err := process.Data(ctx, used, data, opt)
		if err != nil {
			failed++
			fmt.Fprintf(e.stderr, "hit %d: %v\n", sf.HitID, err)
			continue
		}
		// The configuration's labels, then the labels the old result
		// carried, each on the new mode nearest its old frequency.
		cfg.labelModes(sf.Meta.Prototype, res)
		labelNearest(res, kept[sf.HitID])
		if err := store.Supersede(ctx, sf.HitID, res, settings); err != nil {
			return err
		}
		done++
		fmt.Fprintf(e.stdout, "%s: %s, %d mode(s)\n", used, res.Verdict, len(res.Modes))
	}
	fmt.Fprintf(e.stdout, "%d hit(s) reanalysed, %d file(s) missing or changed, %d failed; old results kept as superseded\n", done, missing, failed)
	if failed > 0 || missing > 0 {
		return errReported
	}
	return nil
}

// storedLabels returns, per hit that f selects, the labelled modes of its
// current result as expected modes (label, frequency, 10 % tolerance).
func storedLabels(ctx context.Context, store *db.DB, f db.Filter) (map[int64][]ModeConfig, error) {
	hits, err := store.Hits(ctx, f)
	if err != nil {
		return nil, err
	}
	out := map[int64][]ModeConfig{}
	for _, h := range hits {
		for _, m := range h.Result.Modes {
			if m.Label != "" {
				out[h.ID] = append(out[h.ID], ModeConfig{Label: m.Label, FrequencyHz: m.FrequencyHz, Tolerance: 0.1})
			}
		}
	}
	return out, nil
}
