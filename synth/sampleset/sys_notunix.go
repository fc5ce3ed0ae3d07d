//go:build !unix

package sampleset

import (
	"io/fs"
	"os"
)

// dirSyncMatters: folders cannot be synced here (Windows cannot open one
// for it), and renames last without it.
const dirSyncMatters = false

// processRunning reports whether a process with id pid exists, where
// os.FindProcess can tell (Windows opens the process); elsewhere it is
// taken to be running.
func processRunning(pid int) bool {
	p, err := os.FindProcess(pid)
	if err != nil {
		return false
	}
	p.Release()
	return true
}

// linkCount cannot be read here; every file counts as its only name.
func linkCount(fs.FileInfo) uint64 { return 1 }
