//go:build !(linux || darwin || freebsd)

package sampleset

// tryLock takes the lock beside an output folder by creating its file
// exclusively: there is no flock here, or none this package uses.
func tryLock(path string) (*lock, Owner, bool, error) { return tryExclusive(path) }

// freeSpace cannot be read here; the room check is skipped.
func freeSpace(string) (int64, bool) { return 0, false }
