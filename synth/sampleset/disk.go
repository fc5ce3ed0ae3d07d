package sampleset

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"sync"
)

// fileSystem is the few file-system calls whose order decides whether a
// set is on disk when a build says it is: creating a file (whose Sync
// puts its data on disk), renaming and linking it into place, syncing a
// folder so the names in it last, and swapping two folders. Builds go
// through disk; tests replace it to record the order of the calls or to
// make writes fail.
type fileSystem interface {
	Create(path string) (file, error)
	Rename(from, to string) error
	Link(from, to string) error
	// SyncDir puts a folder's entries (the names of the files created,
	// renamed or removed in it) on disk.
	SyncDir(path string) error
	// Exchange swaps two paths in one step; errNoExchange where the
	// system or the file system cannot.
	Exchange(a, b string) error
}

// file is a file being written.
type file interface {
	io.Writer
	Sync() error
	Close() error
}

// errNoExchange says that two paths cannot be swapped in one step here,
// so the swap takes two renames.
var errNoExchange = errors.New("no atomic exchange of two paths on this system")

// disk is the file system builds write through.
var disk fileSystem = osDisk{}

// osDisk is the operating system's file system.
type osDisk struct{}

func (osDisk) Create(path string) (file, error) { return os.Create(path) }
func (osDisk) Rename(from, to string) error     { return os.Rename(from, to) }
func (osDisk) Link(from, to string) error       { return os.Link(from, to) }
func (osDisk) Exchange(a, b string) error       { return exchange(a, b) }

func (osDisk) SyncDir(path string) error {
	d, err := os.Open(path)
	if err != nil {
		return err
	}
	err = d.Sync()
	if cerr := d.Close(); err == nil {
		err = cerr
	}
	if err != nil && !dirSyncMatters {
		// Folders cannot be opened for syncing on some systems (Windows),
		// whose renames are durable without it.
		return nil
	}
	return err
}

// writeAtomically writes a file under a temporary name, syncs it and
// renames it when complete, so no reader ever sees half a file under the
// final name, and after a power loss the name holds the whole file or
// none: a rename lasts over data only once that data is on disk.
func writeAtomically(path string, write func(io.Writer) error) error {
	commit, err := writeUnsynced(path, write)
	if err != nil {
		return err
	}
	return commit()
}

// writeUnsynced writes a file under a temporary name and returns commit,
// which syncs it, closes it and renames it, for the caller to run when it
// suits: writeAtomically at once, a build in the background.
func writeUnsynced(path string, write func(io.Writer) error) (commit func() error, err error) {
	tmp := path + ".partial"
	f, err := disk.Create(tmp)
	if err != nil {
		return nil, fmt.Errorf("cannot create %s: %w", tmp, err)
	}
	failed := func(err error) error {
		os.Remove(tmp)
		return fmt.Errorf("cannot write %s: %w", path, err)
	}
	bw := bufio.NewWriterSize(f, 256<<10)
	err = write(bw)
	if err == nil {
		err = bw.Flush()
	}
	if err != nil {
		f.Close()
		return nil, failed(err)
	}
	return func() error {
		err := f.Sync()
		if cerr := f.Close(); err == nil {
			err = cerr
		}
		if err == nil {
			err = disk.Rename(tmp, path)
		}
		if err != nil {
			return failed(err)
		}
		return nil
	}, nil
}

// commits syncs, closes and renames written files in the background: the
// worker that wrote a file goes on rendering while the disk catches up,
// so syncing costs little more than the last files' syncs. A few files
// per job are in flight at most; the first failure cancels the build.
type commits struct {
	wg    sync.WaitGroup
	slots chan struct{}
	fail  context.CancelCauseFunc
	mu    sync.Mutex
	err   error
}

// start runs commit in the background once a slot is free.
func (c *commits) start(commit func() error) {
	c.slots <- struct{}{}
	c.wg.Add(1)
	go func() {
		defer func() {
			<-c.slots
			c.wg.Done()
		}()
		if err := commit(); err != nil {
			c.mu.Lock()
			if c.err == nil {
				c.err = err
			}
			c.mu.Unlock()
			c.fail(err)
		}
	}()
}

// wait waits for every commit started and returns the first failure.
func (c *commits) wait() error {
	c.wg.Wait()
	return c.err
}
