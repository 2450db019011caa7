package main

import (
	"bytes"
	"context"
	"strings"
	"testing"
)

// TestSharedFilterFlags: every history command has the one filter of
// query_common.go, and keeps the flags its scripts use.
func TestSharedFilterFlags(t *testing.T) {
	shared := []string{"--db", "--config", "--prototype", "--revision", "--bay", "--mode", "--since", "--until"}
	for _, c := range []struct {
		cmd   []string
		extra []string
	}{
		{[]string{"history"}, []string{"--with-flagged", "--verdict", "--synthetic"}},
		{[]string{"stats"}, []string{"--with-flagged", "--csv"}},
		{[]string{"compare"}, []string{"--with-flagged"}},
		{[]string{"trend"}, []string{"--with-flagged"}},
		{[]string{"rayleigh"}, []string{"--with-flagged", "--modes"}},
		{[]string{"export"}, []string{"--with-flagged", "--format"}},
		{[]string{"report", "daily"}, []string{"--with-flagged", "--day"}},
		{[]string{"report", "compare"}, []string{"--with-flagged", "--out"}},
		{[]string{"reanalyze"}, []string{"--verdict"}},
	} {
		var o, e bytes.Buffer
		code := run(context.Background(), &env{stdout: &o, stderr: &e, stdin: strings.NewReader("")}, append(c.cmd, "-h"))
		if code != exitOK {
			t.Errorf("%v -h: exit %d", c.cmd, code)
		}
		for _, f := range append(shared, c.extra...) {
			if !strings.Contains(e.String(), "\n  "+f+" ") && !strings.Contains(e.String(), "\n  "+f+"\n") {
				t.Errorf("%v -h does not list %s:\n%s", c.cmd, f, e.String())
			}
		}
	}
}
