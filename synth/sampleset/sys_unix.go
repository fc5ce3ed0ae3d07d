//go:build unix

package sampleset

import (
	"errors"
	"io/fs"
	"syscall"
)

// dirSyncMatters: on Unix a rename lasts only once its folder is synced.
const dirSyncMatters = true

// processRunning reports whether a process with id pid exists: signal 0
// checks without sending anything, and EPERM means it exists but belongs
// to someone else.
func processRunning(pid int) bool {
	err := syscall.Kill(pid, 0)
	return err == nil || errors.Is(err, syscall.EPERM)
}

// linkCount is how many names a file has; removing one of several frees
// nothing.
func linkCount(info fs.FileInfo) uint64 {
	if st, ok := info.Sys().(*syscall.Stat_t); ok {
		return uint64(st.Nlink)
	}
	return 1
}
