package main

import (
	"context"
	"fmt"
	"strings"

	"github.com/ringlog/ringlog/pipeline/check"
)

func init() {
	register(command{name: "rules", summary: "list the quality rules, their reason codes and default thresholds", run: runRules})
}

func runRules(ctx context.Context, e *env, args []string) error {
	fs := newFlags("rules", "[--json]", e.stderr)
	asJSON := fs.Bool("json", false, "one JSON object per reason code")
	rest, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return usagef("unexpected argument %q", rest[0])
	}
	for _, r := range check.Describe() {
		if *asJSON {
			writeJSONLine(e.stdout, r)
			continue
		}
		fmt.Fprintf(e.stdout, "%-20s %-7s %s\n", r.Code, r.Severity, r.Summary)
		if len(r.Thresholds) > 0 {
			fmt.Fprintf(e.stdout, "%-28s thresholds: %s\n", "", strings.Join(r.Thresholds, ", "))
		}
	}
	return nil
}
