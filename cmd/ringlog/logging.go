package main

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/rs/zerolog"
	"golang.org/x/term"
)

// newLogger logs readable lines to the terminal (stderr) and, when file is
// set, JSON lines into that file. The returned close func closes the file.
func newLogger(stderr io.Writer, file, level string) (zerolog.Logger, func() error, error) {
	lvl := zerolog.InfoLevel
	if level != "" {
		l, err := zerolog.ParseLevel(strings.ToLower(level))
		if err != nil {
			return zerolog.Nop(), nil, fmt.Errorf("log level %q: %w", level, err)
		}
		lvl = l
	}
	noColor := true
	if f, ok := stderr.(*os.File); ok && term.IsTerminal(int(f.Fd())) {
		noColor = false
	}
	console := zerolog.ConsoleWriter{Out: stderr, TimeFormat: time.DateTime, NoColor: noColor}
	closeFn := func() error { return nil }
	var w io.Writer = console
	if file != "" {
		if err := os.MkdirAll(filepath.Dir(file), 0o755); err != nil {
			return zerolog.Nop(), nil, fmt.Errorf("log file %s: %w", file, err)
		}
		f, err := os.OpenFile(file, os.O_CREATE|os.O_APPEND|os.O_WRONLY, 0o644)
		if err != nil {
			return zerolog.Nop(), nil, fmt.Errorf("log file %s: %w", file, err)
		}
		w = zerolog.MultiLevelWriter(console, f)
		closeFn = f.Close
	}
	return zerolog.New(w).Level(lvl).With().Timestamp().Logger(), closeFn, nil
}
