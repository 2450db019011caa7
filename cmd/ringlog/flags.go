package main

import (
	"errors"
	"flag"
	"io"
	"strings"
)

// newFlags returns a flag set whose errors come back as usage errors.
func newFlags(name, synopsis string, stderr io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		io.WriteString(stderr, "usage: ringlog "+name+" "+synopsis+"\n\noptions:\n")
		fs.PrintDefaults()
	}
	return fs
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
