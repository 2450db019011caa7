package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"strings"
)

// newFlags returns a flag set whose errors come back as usage errors.
func newFlags(name, synopsis string, stderr io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		io.WriteString(stderr, "usage: ringlog "+name+" "+synopsis+"\n\noptions:\n")
		printDefaults(stderr, fs)
	}
	return fs
}

// printDefaults is flag.PrintDefaults with the two dashes the README and
// the synopsis use ("--config FILE"); the flag package accepts both.
func printDefaults(w io.Writer, fs *flag.FlagSet) {
	fs.VisitAll(func(f *flag.Flag) {
		var b strings.Builder
		b.WriteString("  --")
		b.WriteString(f.Name)
		name, usage := flag.UnquoteUsage(f)
		if name != "" {
			b.WriteString(" ")
			b.WriteString(name)
		}
		b.WriteString("\n    \t")
		b.WriteString(strings.ReplaceAll(usage, "\n", "\n    \t"))
		if d := f.DefValue; d != "" && d != "false" && d != "0" && d != "[]" {
			if name == "string" {
				b.WriteString(fmt.Sprintf(" (default %q)", d))
			} else {
				b.WriteString(" (default " + d + ")")
			}
		}
		b.WriteString("\n")
		io.WriteString(w, b.String())
	})
}

// parseInterleaved parses flags that may appear before, between or after
// positional arguments ("analyze a.csv --json b.csv") and returns the
// positional ones. "--" ends flag parsing.
func parseInterleaved(fs *flag.FlagSet, args []string) ([]string, error) {
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				return nil, err
			}
			return nil, usagef("%v", err)
		}
		rest := fs.Args()
		if len(rest) == 0 {
			return pos, nil
		}
		// fs.Parse stops at the first non-flag or after "--".
		consumed := len(args) - len(rest)
		if consumed > 0 && args[consumed-1] == "--" {
			return append(pos, rest...), nil
		}
		pos = append(pos, rest[0])
		args = rest[1:]
		if len(args) > 0 && !strings.HasPrefix(args[0], "-") {
			continue
		}
	}
}

// stringList is a repeatable string flag.
type stringList []string

func (s *stringList) String() string     { return strings.Join(*s, ",") }
func (s *stringList) Set(v string) error { *s = append(*s, v); return nil }
