//go:build !linux

package sampleset

import "time"

// exchange cannot swap two paths in one step here, so swap renames twice.
func exchange(a, b string) error { return errNoExchange }

// processStart cannot read another process's start time here; owners are
// then told apart by their process id alone.
func processStart(pid int) (time.Time, bool) { return time.Time{}, false }
