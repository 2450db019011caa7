package main

import (
	"fmt"
	"runtime"
	"runtime/debug"

	"github.com/ringlog/ringlog/pipeline"
)

func versionString() string {
	rev := "devel"
	if bi, ok := debug.ReadBuildInfo(); ok {
		for _, s := range bi.Settings {
			if s.Key == "vcs.revision" && len(s.Value) >= 7 {
				rev = s.Value[:7]
			}
		}
	}
	return fmt.Sprintf("ringlog %s (analysis %s, %s %s/%s)", rev, pipeline.AnalysisVersion, runtime.Version(), runtime.GOOS, runtime.GOARCH)
}
