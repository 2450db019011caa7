package watch

import (
	"path/filepath"
	"strings"
)

// tempSuffixes are endings of names that writers use for files in
// progress or for backups (compared in lower case).
var tempSuffixes = []string{".tmp", ".temp", ".part", ".partial", ".crdownload", ".swp", "~"}

// skipName reports whether a file or folder name is hidden (leading dot) or
// a typical temporary name: ~*, *~, *.tmp, *.temp, *.part, *.partial,
// *.crdownload, *.swp, and office lock files .~lock* (hidden anyway).
func skipName(name string) bool {
	if name == "" || strings.HasPrefix(name, ".") || strings.HasPrefix(name, "~") {
		return true
	}
	lower := strings.ToLower(name)
	for _, s := range tempSuffixes {
		if strings.HasSuffix(lower, s) {
			return true
		}
	}
	return false
}

// matchAny reports whether name matches one of the lower-case patterns,
// without regard to case. The patterns were checked by New.
func matchAny(patterns []string, name string) bool {
	lower := strings.ToLower(name)
	for _, p := range patterns {
		if ok, _ := filepath.Match(p, lower); ok {
			return true
		}
	}
	return false
}
