package sampleset

import (
	"context"
	"fmt"
	"io"
	"path/filepath"

	"sinter/synth/manifest"
)

// WriteFunc writes the file name, a base name in a set's folder, with
// fill, atomically: under a temporary name, synced, then renamed.
type WriteFunc func(name string, fill func(io.Writer) error) error

// Extras writes files beside a complete set in dir — the review page and
// its pictures — each through write. It only reads the set.
type Extras func(dir string, write WriteFunc) error

// writerIn is the WriteFunc of the folder dir.
func writerIn(dir string) WriteFunc {
	return func(name string, fill func(io.Writer) error) error {
		if name != filepath.Base(name) || name == "." || name == ".." {
			return fmt.Errorf("cannot write %q into %s: only a file of the folder itself", name, dir)
		}
		return writeAtomically(filepath.Join(dir, name), fill)
	}
}

// AddToSet runs extras on the set already in dir, writing into dir itself,
// while holding the folder's lock as a build does (opts.NoWait and
// opts.Notice apply), so no render replaces the set meanwhile. dir must
// hold a set: a manifest.json.
func AddToSet(ctx context.Context, dir string, opts Options, extras Extras) error {
	if _, err := manifest.Read(filepath.Join(dir, manifest.FileName)); err != nil {
		return fmt.Errorf("%s holds no set sinter rendered: %w", dir, err)
	}
	out, err := claim(ctx, dir, opts)
	if err != nil {
		return err
	}
	defer out.release()
	return extras(dir, writerIn(dir))
}
