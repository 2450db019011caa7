//go:build !(linux || darwin || freebsd || netbsd || openbsd || dragonfly || windows)

package db

import (
	"fmt"
	"os"
	"runtime"
)

func tryLock(*os.File) error {
	return fmt.Errorf("writer lock not supported on %s", runtime.GOOS)
}

func unlock(*os.File) error { return nil }
