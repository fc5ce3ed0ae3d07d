package sampleset

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"

	"sinter/synth/manifest"
)

// output is a build's hold on its output folder: the lock beside it, held
// until release, and where the folder is.
type output struct {
	dir          string // as the plan names it, for messages
	parent, base string // of its absolute path
	lock         *lock
	reached      func(Stage)
	removed      []Leftover
}

// claim takes the output folder dir for a build: it creates the folder's
// parent, takes the lock beside it — waiting, and saying so, while
// another process holds it, or failing with a *BusyError if opts.NoWait —
// and removes what builds of it that have ended left beside it.
func claim(ctx context.Context, dir string, opts Options) (*output, error) {
	abs, err := filepath.Abs(dir)
	if err != nil {
		return nil, fmt.Errorf("cannot find the output folder %s: %w", dir, err)
	}
	o := &output{dir: dir, parent: filepath.Dir(abs), base: filepath.Base(abs), reached: opts.Reached}
	notice := opts.Notice
	if notice == nil {
		notice = func(string) {}
	}
	// 0777 less the umask, as any tool makes a folder.
	if err := os.MkdirAll(o.parent, 0o777); err != nil {
		return nil, fmt.Errorf("cannot create the output folder's parent: %w", err)
	}
	waiting := func(b *BusyError) {
		notice(fmt.Sprintf("waiting for %s, which %s is writing (--no-wait fails at once instead)", dir, b.holder()))
	}
	o.lock, err = takeLock(ctx, lockPath(o.parent, o.base), dir, opts.NoWait, waiting)
	if err != nil {
		return nil, err
	}
	if o.lock.warning != "" {
		notice(o.lock.warning)
	}
	if o.lock.tookOver != nil {
		notice(fmt.Sprintf("took over the lock of %s from %s, which ended without releasing it", dir, *o.lock.tookOver))
	}
	o.removed = removeLeftovers(o.parent, o.base, o.lock.held(), notice)
	return o, nil
}

// release lets the output folder go.
func (o *output) release() { o.lock.release() }

// stage tells the build's Reached hook, if any, that it reached s.
func (o *output) stage(s Stage) {
	if o.reached != nil {
		o.reached(s)
	}
}

// newStaging makes the folder a set is written into before it is swapped
// in: beside the output folder, so the swap is a rename, and holding a
// lock file that names this process, so a later build can tell whether it
// is a leftover.
func (o *output) newStaging() (string, error) {
	for {
		path := filepath.Join(o.parent, "."+o.base+".staging-"+strconv.FormatUint(rand.Uint64(), 36))
		// 0777 less the umask: this folder becomes the output folder.
		err := os.Mkdir(path, 0o777)
		if errors.Is(err, fs.ErrExist) {
			continue
		}
		if err != nil {
			return "", fmt.Errorf("cannot create a staging folder beside %s: %w", o.dir, err)
		}
		if err := os.WriteFile(filepath.Join(path, ownerFile), self().encode(), 0o666); err != nil {
			os.RemoveAll(path)
			return "", fmt.Errorf("cannot write the lock file of the staging folder %s: %w", path, err)
		}
		return path, nil
	}
}

// checkReplaceable refuses to replace a folder that sinter did not make:
// one that exists, is not empty and has no manifest.
func checkReplaceable(dir string) error {
	info, err := os.Stat(dir)
	if errors.Is(err, os.ErrNotExist) {
		return nil
	}
	if err != nil {
		return fmt.Errorf("cannot read the output folder: %w", err)
	}
	if !info.IsDir() {
		return fmt.Errorf("the output path %s is a file, not a folder", dir)
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		return fmt.Errorf("cannot read the output folder: %w", err)
	}
	if len(entries) == 0 {
		return nil
	}
	if _, err := os.Stat(filepath.Join(dir, manifest.FileName)); err != nil {
		return fmt.Errorf("refusing to replace %s: it is not empty and holds no %s, so it is not a sample set sinter wrote; choose another output folder", dir, manifest.FileName)
	}
	return nil
}

// swap replaces the output folder with the finished staging folder, whose
// files are each synced already. Syncing the staging folder puts their
// names on disk before the swap, and syncing the parent after it makes
// the swap itself last, so after a power loss the folder holds the old
// set or the whole new one. Where the system can, the two folders are
// exchanged in one step; elsewhere the old set is set aside first, and a
// later build puts it back if the swap is cut short between the renames.
func (o *output) swap(staging string) error {
	dir := filepath.Join(o.parent, o.base)
	if err := checkReplaceable(dir); err != nil {
		return err
	}
	if err := os.Remove(filepath.Join(staging, ownerFile)); err != nil {
		return fmt.Errorf("cannot remove the lock file of %s: %w", staging, err)
	}
	if err := disk.SyncDir(staging); err != nil {
		return fmt.Errorf("cannot sync %s: %w", staging, err)
	}
	o.stage(Swapping)
	old, err := o.replace(staging, dir)
	if err != nil {
		return err
	}
	if err := disk.SyncDir(o.parent); err != nil {
		return fmt.Errorf("the new set is in %s, but its folder %s cannot be synced: %w", o.dir, o.parent, err)
	}
	o.stage(Swapped)
	if old != "" {
		os.RemoveAll(old)
	}
	return nil
}

// replace puts staging in dir's place and returns where the old set is
// now, if there was one.
func (o *output) replace(staging, dir string) (old string, err error) {
	if _, err := os.Stat(dir); errors.Is(err, fs.ErrNotExist) {
		if err := disk.Rename(staging, dir); err != nil {
			return "", fmt.Errorf("cannot move the new set into %s: %w", o.dir, err)
		}
		return "", nil
	}
	err = disk.Exchange(staging, dir)
	if err == nil {
		return staging, nil
	}
	if !errors.Is(err, errNoExchange) {
		return "", fmt.Errorf("cannot swap the new set into %s: %w", o.dir, err)
	}
	parking := filepath.Join(o.parent, "."+o.base+".previous-"+strconv.FormatUint(rand.Uint64(), 36))
	if err := disk.Rename(dir, parking); err != nil {
		return "", fmt.Errorf("cannot set the previous set aside: %w", err)
	}
	if err := disk.Rename(staging, dir); err != nil {
		os.Rename(parking, dir)
		return "", fmt.Errorf("cannot move the new set into %s: %w", o.dir, err)
	}
	return parking, nil
}
