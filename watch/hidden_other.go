//go:build !windows

package watch

import "io/fs"

// hiddenAttr reports whether the file carries a hidden attribute. Outside
// Windows, hidden means a leading dot, which skipName already handles.
func hiddenAttr(fs.FileInfo) bool { return false }
