//go:build linux || darwin || freebsd

package sampleset

import (
	"errors"
	"fmt"
	"io"
	"os"

	"golang.org/x/sys/unix"
)

// flock takes an exclusive flock(2) on f without waiting: errHeld if
// another open file holds it, errNoFlock if the file system has no locks
// (some network file systems). The kernel drops the lock when its holder
// ends, however it ends.
func flock(f *os.File) error {
	err := unix.Flock(int(f.Fd()), unix.LOCK_EX|unix.LOCK_NB)
	switch {
	case errors.Is(err, unix.EWOULDBLOCK):
		return errHeld
	case errors.Is(err, unix.ENOLCK) || errors.Is(err, unix.EOPNOTSUPP) || errors.Is(err, unix.ENOSYS):
		return errNoFlock
	}
	return err
}

// freeSpace returns the bytes an unprivileged user may still write to the
// file system that holds path.
func freeSpace(path string) (int64, bool) {
	var st unix.Statfs_t
	if unix.Statfs(path, &st) != nil {
		return 0, false
	}
	return int64(st.Bavail) * int64(st.Bsize), true
}

// tryLock takes the lock beside an output folder with flock(2) on the
// file at path, without waiting: errHeld and who holds it if another
// process does. A file left by a holder that ended is free, since the
// kernel dropped its lock; the holder it names is then taken over.
func tryLock(path string) (l *lock, holder Owner, known bool, err error) {
	for {
		f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o666)
		if err != nil {
			return nil, Owner{}, false, fmt.Errorf("cannot open the lock file %s: %w", path, err)
		}
		err = flock(f)
		if err != nil {
			data, _ := io.ReadAll(f)
			f.Close()
			switch {
			case errors.Is(err, errHeld):
				holder, known = parseOwner(data)
				return nil, holder, known, errHeld
			case errors.Is(err, errNoFlock):
				// Nothing else can keep two renders apart there.
				os.Remove(path)
				return &lock{warning: fmt.Sprintf("cannot lock %s (%v): renders of the folder at once are not kept apart there", path, err)}, Owner{}, false, nil
			}
			return nil, Owner{}, false, fmt.Errorf("cannot lock %s: %w", path, err)
		}
		// A holder removes the file as it releases the lock, perhaps
		// after this process opened it: the lock counts only on the file
		// that still has the name.
		opened, err1 := f.Stat()
		named, err2 := os.Stat(path)
		if err1 != nil || err2 != nil || !os.SameFile(opened, named) {
			f.Close()
			continue
		}
		l := &lock{path: path, f: f}
		data, _ := io.ReadAll(f)
		if before, ok := parseOwner(data); ok && !before.is(self()) {
			l.tookOver = &before
		}
		if err := writeOwner(f); err != nil {
			l.release()
			return nil, Owner{}, false, fmt.Errorf("cannot write the lock file %s: %w", path, err)
		}
		return l, Owner{}, false, nil
	}
}

// writeOwner replaces the lock file's contents with this process.
func writeOwner(f *os.File) error {
	if err := f.Truncate(0); err != nil {
		return err
	}
	_, err := f.WriteAt(self().encode(), 0)
	return err
}
