package sampleset

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"sync"
	"time"
)

// Owner is a process that writes an output folder: named in the lock file
// beside the folder and in each of its staging folders, so that another
// process can say who holds them and tell whether it is still running.
type Owner struct {
	PID     int       `json:"pid"`
	Host    string    `json:"host"`
	Started time.Time `json:"started"` // when the process started
}

// String names the process as messages do: its id, host and start.
func (o Owner) String() string {
	return fmt.Sprintf("process %d on %s, started %s", o.PID, o.Host, o.Started.Local().Format("2006-01-02 15:04:05 MST"))
}

// processBegan stands in for this process's start time where the system
// cannot tell it.
var processBegan = time.Now()

// self is this process as an Owner.
var self = sync.OnceValue(func() Owner {
	host, err := os.Hostname()
	if err != nil {
		host = "an unknown host"
	}
	started, ok := processStart(os.Getpid())
	if !ok {
		started = processBegan
	}
	return Owner{PID: os.Getpid(), Host: host, Started: started.UTC().Round(0)}
})

// startSlack is how far two readings of one process's start time may
// differ: the boot time they are counted from is a whole second, and moves
// when the clock is set.
const startSlack = 2 * time.Second

// gone reports whether o has ended: it ran on this host, and no process
// with its id runs now, or the one that does started at another time (the
// id was used again). A process on another host cannot be checked, and
// counts as running.
func (o Owner) gone() bool {
	if o.Host != self().Host || o.PID <= 0 {
		return false
	}
	if !processRunning(o.PID) {
		return true
	}
	started, ok := processStart(o.PID)
	if ok && o.Started.IsZero() {
		return false // no start time to compare with
	}
	if !ok {
		// Running by its id but unreadable: where start times can be read
		// at all, it has ended and waits to be reaped (a zombie);
		// elsewhere it counts as running.
		_, readable := processStart(os.Getpid())
		return readable
	}
	d := started.Sub(o.Started)
	return d > startSlack || d < -startSlack
}

// is reports whether o and p are the same process.
func (o Owner) is(p Owner) bool {
	return o.PID == p.PID && o.Host == p.Host && o.Started.Equal(p.Started)
}

// encode is o as its lock file holds it.
func (o Owner) encode() []byte {
	data, _ := json.Marshal(o) // a struct of plain fields cannot fail
	return append(data, '\n')
}

// parseOwner reads an Owner from a lock file's bytes; ok is false for a
// file being written, or one that is no lock file of ours.
func parseOwner(data []byte) (o Owner, ok bool) {
	return o, json.Unmarshal(data, &o) == nil && o.PID > 0
}

// readOwner reads the Owner in the lock file at path.
func readOwner(path string) (Owner, bool) {
	data, err := os.ReadFile(path)
	if err != nil {
		return Owner{}, false
	}
	return parseOwner(data)
}

var (
	// errHeld says another process holds a lock.
	errHeld = errors.New("held by another process")
	// errNoFlock says the file system takes no flock locks.
	errNoFlock = errors.New("the file system has no file locks")
)

// BusyError is an output folder another process is writing, for a build
// told not to wait (Options.NoWait).
type BusyError struct {
	Dir    string
	Holder Owner
	Known  bool // whether the lock file says who holds it
}

// Error says who writes the folder.
func (e *BusyError) Error() string {
	return fmt.Sprintf("%s is being written by %s", e.Dir, e.holder())
}

func (e *BusyError) holder() string {
	if !e.Known {
		return "another process (its lock file does not say which)"
	}
	return "another sinter (" + e.Holder.String() + ")"
}

// lock is an advisory lock on an output folder, held through a lock file
// beside it.
type lock struct {
	path string
	// f is the open lock file, whose flock the kernel holds for this
	// process, and drops when it ends however it ends; nil where the lock
	// is the file's existence (no flock here), or none could be taken.
	f *os.File
	// tookOver is the holder before, which ended without releasing the
	// lock; warning says why no lock could be taken.
	tookOver *Owner
	warning  string
}

// held reports whether the lock keeps other processes out.
func (l *lock) held() bool { return l.warning == "" }

// lockPoll is how often a waiting build tries the lock again. Polling,
// rather than a blocking flock, lets Ctrl-C end the wait.
const lockPoll = 100 * time.Millisecond

// takeLock takes the lock file at path for the output folder dir. While
// another process holds it, it returns a *BusyError if noWait, and else
// tells waiting once who holds it and tries again until it is free or ctx
// ends.
func takeLock(ctx context.Context, path, dir string, noWait bool, waiting func(*BusyError)) (*lock, error) {
	told := false
	for {
		l, holder, known, err := tryLock(path)
		if !errors.Is(err, errHeld) {
			return l, err
		}
		busy := &BusyError{Dir: dir, Holder: holder, Known: known}
		if noWait {
			return nil, busy
		}
		if !told && waiting != nil {
			waiting(busy)
			told = true
		}
		select {
		case <-ctx.Done():
			return nil, ctx.Err()
		case <-time.After(lockPoll):
		}
	}
}

// unnamedLockAge is how old a lock file that names no owner must be to be
// taken over where locks are exclusive files: a younger one may be one
// another process has just created and not yet written.
const unnamedLockAge = 10 * time.Second

// tryExclusive takes the lock by creating the file at path, which fails
// while it exists: for systems without flock. A file naming a process on
// this host that has ended is taken over; one naming a process elsewhere
// is held until removed.
func tryExclusive(path string) (l *lock, holder Owner, known bool, err error) {
	var tookOver *Owner
	for {
		f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o666)
		if err == nil {
			_, err = f.Write(self().encode())
			if cerr := f.Close(); err == nil {
				err = cerr
			}
			if err != nil {
				os.Remove(path)
				return nil, Owner{}, false, fmt.Errorf("cannot write the lock file %s: %w", path, err)
			}
			return &lock{path: path, tookOver: tookOver}, Owner{}, false, nil
		}
		if !errors.Is(err, fs.ErrExist) {
			return nil, Owner{}, false, fmt.Errorf("cannot create the lock file %s: %w", path, err)
		}
		holder, known = readOwner(path)
		stale := known && holder.gone()
		if info, err := os.Stat(path); !known && err == nil {
			stale = time.Since(info.ModTime()) > unnamedLockAge
		}
		if !stale {
			return nil, holder, known, errHeld
		}
		if err := os.Remove(path); err != nil && !errors.Is(err, fs.ErrNotExist) {
			return nil, Owner{}, false, fmt.Errorf("cannot take over the lock file %s: %w", path, err)
		}
		if known {
			gone := holder
			tookOver = &gone
		}
	}
}

// release removes the lock file and then lets the lock go, so a process
// waiting on the removed file tries again on a new one.
func (l *lock) release() {
	if l.path != "" {
		os.Remove(l.path)
	}
	if l.f != nil {
		l.f.Close()
	}
}
