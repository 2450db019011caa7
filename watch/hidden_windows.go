//go:build windows

package watch

import (
	"io/fs"
	"syscall"
)

// hiddenAttr reports whether the file carries the Windows hidden or system
// attribute (recorders and Explorer hide their scratch files this way).
func hiddenAttr(fi fs.FileInfo) bool {
	if d, ok := fi.Sys().(*syscall.Win32FileAttributeData); ok {
		return d.FileAttributes&(syscall.FILE_ATTRIBUTE_HIDDEN|syscall.FILE_ATTRIBUTE_SYSTEM) != 0
	}
	return false
}
