package main

import (
	"context"
	"encoding/json"
	"fmt"
	"reflect"
	"strconv"
	"strings"

	"github.com/ringlog/ringlog/pipeline/check"
)

func init() {
	register(command{name: "rules", summary: "list the quality rules, their reason codes and thresholds (default and, with --config, effective values)", run: runRules})
}

func runRules(ctx context.Context, e *env, args []string) error {
	fs := newFlags("rules", "[--config FILE] [--json]", e.stderr)
	asJSON := fs.Bool("json", false, "one JSON object per reason code")
	cfgPath := fs.String("config", "", "TOML configuration whose [thresholds] are shown beside the defaults")
	rest, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return usagef("unexpected argument %q", rest[0])
	}
	defaults := thresholdValues(check.DefaultThresholds())
	effective := defaults
	if *cfgPath != "" {
		cfg, err := loadConfig(*cfgPath)
		if err != nil {
			return err
		}
		effective = thresholdValues(cfg.Thresholds)
	}
	if !*asJSON {
		fmt.Fprintf(e.stdout, "%-20s %-7s %-8s %s\n", "code", "does", "effect", "meaning")
	}
	for _, r := range check.Describe() {
		if *asJSON {
			// The rule's own keys, plus "defaults" and "effective" (the
			// values in force: the configuration's, or the defaults).
			var obj map[string]any
			b, _ := json.Marshal(r)
			_ = json.Unmarshal(b, &obj)
			def, eff := map[string]any{}, map[string]any{}
			for _, n := range r.Thresholds {
				def[n], eff[n] = defaults[n], effective[n]
			}
			obj["defaults"], obj["effective"] = def, eff
			writeJSONLine(e.stdout, obj)
			continue
		}
		fmt.Fprintf(e.stdout, "%-20s %-7s %-8s %s\n", r.Code, r.Severity, r.Effect, r.Summary)
		for _, n := range r.Thresholds {
			d, eff := formatThreshold(defaults[n]), formatThreshold(effective[n])
			if *cfgPath != "" && eff != d {
				fmt.Fprintf(e.stdout, "%-37s %s = %s (default %s)\n", "", n, eff, d)
			} else {
				fmt.Fprintf(e.stdout, "%-37s %s = %s\n", "", n, d)
			}
		}
	}
	if !*asJSON {
		fmt.Fprintln(e.stdout, "\neffect: doubts = the history's statistics leave out the modes it names (every mode of the hit when it names none) unless --with-flagged; informs = side information, the values count")
	}
	return nil
}

// thresholdValues maps each threshold's TOML key to its value.
func thresholdValues(th check.Thresholds) map[string]any {
	out := map[string]any{}
	v := reflect.ValueOf(th)
	t := v.Type()
	for i := range t.NumField() {
		key, _, _ := strings.Cut(t.Field(i).Tag.Get("toml"), ",")
		if key == "" || key == "-" || !t.Field(i).IsExported() {
			continue
		}
		out[key] = v.Field(i).Interface()
	}
	return out
}

func formatThreshold(v any) string {
	switch x := v.(type) {
	case nil:
		return "(not set)"
	case float64:
		return strconv.FormatFloat(x, 'g', -1, 64)
	}
	return fmt.Sprint(v)
}
