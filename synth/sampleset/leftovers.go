package sampleset

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"regexp"
	"strings"

	"sinter/synth/manifest"
)

// Leftover is a folder beside an output folder that a build of it left
// when it ended unfinished (killed, or its machine stopped): a staging
// folder, or, where the swap takes two renames, the previous set set
// aside. Builds and verify remove them (or put a previous set back where
// the output folder is missing).
type Leftover struct {
	Path string
	// Bytes is the space removing it freed: the files that had no other
	// name (a file kept by a later set is a second name of it).
	Bytes int64
	// Owner is the process that made it, where its lock file says.
	Owner *Owner
	// Restored says it was the previous set, set aside by a swap that
	// did not finish, and is the output folder again.
	Restored bool
}

// String says what was removed or put back, and what it freed.
func (l Leftover) String() string {
	name := filepath.Base(l.Path)
	if l.Restored {
		return fmt.Sprintf("put back %s as the output folder: a render that ended during its swap had set the previous set aside there", name)
	}
	by := "a render that is no longer running"
	if l.Owner != nil {
		by = l.Owner.String() + ", which has ended"
	}
	return fmt.Sprintf("removed %s, left by %s: freed %s", name, by, sizeText(l.Bytes))
}

// ownerFile is the lock file in a staging folder, naming the process that
// writes it.
const ownerFile = ".lock"

// leftoverName matches the folders builds of the output folder base make
// beside it: .BASE.staging-… and .BASE.previous-…, whose suffix has no dot
// (so those of an output named "BASE.staging-1" do not match "BASE").
func leftoverName(base string) *regexp.Regexp {
	return regexp.MustCompile(`^\.` + regexp.QuoteMeta(base) + `\.(staging|previous)-[0-9a-z]+$`)
}

// removeLeftovers removes the folders that builds of the output folder
// parent/base which have ended left beside it. held says this process
// holds the folder's lock, so no build of it is running: every such folder
// is a leftover, except one whose lock file names a process on another
// host, which cannot be checked (notice says so). Without the lock only
// those whose lock file names a process on this host that has ended are
// removed. When the output folder is missing and the lock is held, a
// previous set set aside by an unfinished swap is put back rather than
// removed.
func removeLeftovers(parent, base string, held bool, notice func(string)) []Leftover {
	entries, err := os.ReadDir(parent)
	if err != nil {
		return nil
	}
	match := leftoverName(base)
	dir := filepath.Join(parent, base)
	_, statErr := os.Stat(dir)
	missing := errors.Is(statErr, fs.ErrNotExist)
	var found []Leftover
	for _, e := range entries {
		name := e.Name()
		if !e.IsDir() || !match.MatchString(name) {
			continue
		}
		path := filepath.Join(parent, name)
		owner, named := readOwner(filepath.Join(path, ownerFile))
		switch {
		case named && owner.Host != self().Host && held:
			notice(fmt.Sprintf("kept %s: %s made it, which cannot be checked from here; remove it if that render is over", name, owner))
			continue
		case named && !owner.gone(), !named && !held:
			continue
		}
		if missing && held && strings.Contains(name, ".previous-") {
			if _, err := os.Stat(filepath.Join(path, manifest.FileName)); err == nil && os.Rename(path, dir) == nil {
				missing = false
				l := Leftover{Path: path, Restored: true}
				notice(l.String())
				found = append(found, l)
				continue
			}
		}
		l := Leftover{Path: path, Bytes: freed(path)}
		if named {
			l.Owner = &owner
		}
		if err := os.RemoveAll(path); err != nil {
			notice(fmt.Sprintf("cannot remove %s, left by a render that has ended: %v", name, err))
			continue
		}
		notice(l.String())
		found = append(found, l)
	}
	return found
}

// freed adds up the sizes of the files under path that have no other
// name, which removing them frees.
func freed(path string) int64 {
	var total int64
	filepath.WalkDir(path, func(_ string, d fs.DirEntry, err error) error {
		if err != nil || !d.Type().IsRegular() {
			return nil
		}
		if info, err := d.Info(); err == nil && linkCount(info) <= 1 {
			total += info.Size()
		}
		return nil
	})
	return total
}

// RemoveLeftovers removes the folders that builds of dir which have ended
// left beside it (see Leftover), telling notice of each, and returns them.
// When it can take dir's lock at once no build of dir is running, and
// every such folder goes; while a build holds it, only those whose lock
// file names a process on this host that has ended.
func RemoveLeftovers(dir string, notice func(string)) []Leftover {
	abs, err := filepath.Abs(dir)
	if err != nil {
		return nil
	}
	parent, base := filepath.Dir(abs), filepath.Base(abs)
	if notice == nil {
		notice = func(string) {}
	}
	l, err := takeLock(context.Background(), lockPath(parent, base), dir, true, nil)
	if err != nil {
		// Held by a build, or the folder beside the set is read-only.
		return removeLeftovers(parent, base, false, notice)
	}
	defer l.release()
	return removeLeftovers(parent, base, l.held(), notice)
}

// lockPath is the lock file of the output folder parent/base, beside it.
func lockPath(parent, base string) string {
	return filepath.Join(parent, "."+base+".lock")
}

// sizeText writes a number of bytes as people read it, in binary units as
// check prints them.
func sizeText(n int64) string {
	switch {
	case n >= 1<<40:
		return fmt.Sprintf("%.1f TiB", float64(n)/(1<<40))
	case n >= 1<<30:
		return fmt.Sprintf("%.1f GiB", float64(n)/(1<<30))
	case n >= 1<<20:
		return fmt.Sprintf("%.1f MiB", float64(n)/(1<<20))
	case n >= 1<<10:
		return fmt.Sprintf("%.1f KiB", float64(n)/(1<<10))
	}
	return fmt.Sprintf("%d bytes", n)
}
