package sampleset

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"

	"sinter/patch"
	"sinter/synth"
	"sinter/synth/manifest"
)

// Shard is one slice of a set, for rendering a set on several machines:
// shard Index of Count (1-based) holds every Count-th root key, starting
// with key Index, with all its layers and round robins, so a gain per key
// or per file is worked out inside one shard. With one gain for the set
// every shard measures the whole set first (rendering every note, writing
// none of the others), so each arrives at the gains a single render
// would.
type Shard struct {
	Index, Count int
}

// slice returns the notes the shard writes and those it measures.
func (s Shard) slice(plan *patch.Plan) (own, measure []int) {
	keyIndex := -1
	for i := range plan.Notes {
		if i == 0 || plan.Notes[i].Key != plan.Notes[i-1].Key {
			keyIndex++
		}
		if s.Count <= 1 || keyIndex%s.Count == s.Index-1 {
			own = append(own, i)
		}
	}
	if plan.Normalize.Scope != patch.ScopeSet || s.Count <= 1 {
		return own, own
	}
	for i := range plan.Notes {
		measure = append(measure, i)
	}
	return own, measure
}

// shardManifest keeps the shard's own files in the manifest and records
// where they go in the whole set.
func (b *build) shardManifest() {
	m := b.manifest
	files := make([]manifest.File, 0, len(b.own))
	for _, i := range b.own {
		files = append(files, m.Files[i])
	}
	m.Files = files
	m.Shard = &manifest.Shard{Index: b.opts.Shard.Index, Count: b.opts.Shard.Count, Notes: slices.Clone(b.own)}
}

// Merge joins the shard folders of one set into dir: it checks they come
// from plan's patch and the sinter version opts.Version, are all the
// shards of one split and hold every file once with the bytes their
// manifests record, then writes the set — the files, the mapping and one
// manifest — exactly as a single render would, replacing dir as Build
// does, with its lock (opts.NoWait, opts.Notice).
func Merge(ctx context.Context, plan *patch.Plan, dir string, shards []string, opts Options) error {
	version := opts.Version
	notes := plan.Notes
	files := make([]manifest.File, len(notes))
	from := make([]string, len(notes))
	seen := map[int]string{}
	count := 0
	folders := make([]os.FileInfo, len(shards))
	for k, shardDir := range shards {
		// The same folder twice, however it is written, would read as a
		// doubled shard; say what happened instead.
		if info, err := os.Stat(shardDir); err == nil {
			for j, before := range folders[:k] {
				if before != nil && os.SameFile(before, info) {
					return fmt.Errorf("cannot merge %s: the folder was given twice (as %s and as %s)", shardDir, shards[j], shardDir)
				}
			}
			folders[k] = info
		}
		m, err := manifest.Read(filepath.Join(shardDir, manifest.FileName))
		if err != nil {
			return fmt.Errorf("cannot merge %s: %w", shardDir, err)
		}
		switch {
		case m.Shard == nil:
			return fmt.Errorf("cannot merge %s: it is a whole set, not a shard", shardDir)
		case m.Patch.SHA256 != plan.PatchSHA256:
			return fmt.Errorf("cannot merge %s: it was rendered from another patch (or another version of %s)", shardDir, plan.PatchFile)
		case !sameTuning(m.Patch, manifestPatch(plan)):
			return fmt.Errorf("cannot merge %s: it was rendered with other scale files than %s names now", shardDir, plan.PatchFile)
		case m.Sinter != version:
			return fmt.Errorf("cannot merge %s: it was rendered by sinter %s, this is %s", shardDir, m.Sinter, version)
		case count != 0 && m.Shard.Count != count:
			return fmt.Errorf("cannot merge %s: it is a shard of %d, the others of %d", shardDir, m.Shard.Count, count)
		case seen[m.Shard.Index] != "":
			return fmt.Errorf("cannot merge %s: it is shard %d, as %s is", shardDir, m.Shard.Index, seen[m.Shard.Index])
		case len(m.Shard.Notes) != len(m.Files):
			return fmt.Errorf("cannot merge %s: its manifest lists %d files but places %d", shardDir, len(m.Files), len(m.Shard.Notes))
		}
		count, seen[m.Shard.Index] = m.Shard.Count, shardDir
		for j, i := range m.Shard.Notes {
			if i < 0 || i >= len(notes) || from[i] != "" || m.Files[j].Path != notes[i].File {
				return fmt.Errorf("cannot merge %s: its file %s does not fit the set %s plans", shardDir, m.Files[j].Path, plan.Name)
			}
			files[i], from[i] = m.Files[j], shardDir
		}
	}
	if len(seen) != count {
		return fmt.Errorf("cannot merge: %d of the %d shards given", len(seen), count)
	}
	for i, n := range notes {
		if from[i] == "" {
			return fmt.Errorf("cannot merge: no shard holds %s", n.File)
		}
	}
	if err := checkReplaceable(dir); err != nil {
		return err
	}
	out, err := claim(ctx, dir, opts)
	if err != nil {
		return err
	}
	defer out.release()
	staging, err := out.newStaging()
	if err != nil {
		return err
	}
	defer os.RemoveAll(staging)
	for i := range notes {
		if err := ctx.Err(); err != nil {
			return err
		}
		if !intact(from[i], files[i]) {
			return fmt.Errorf("cannot merge %s: %s does not hold the bytes its manifest records", from[i], files[i].Path)
		}
		if err := (&previous{dir: from[i]}).reuse(files[i], staging); err != nil {
			return err
		}
	}
	loops := make([]synth.Loop, len(notes))
	looped := make([]bool, len(notes))
	for i := range notes {
		loops[i], looped[i] = synth.PlanLoop(&notes[i])
	}
	m := &manifest.Manifest{
		Sinter:    version,
		Patch:     manifestPatch(plan),
		Levelling: plan.Normalize.String(),
		Mapping:   plan.Name + ".sfz",
		Files:     files,
	}
	err = errors.Join(
		writeMapping(filepath.Join(staging, m.Mapping), plan, loops, looped),
		writeAtomically(filepath.Join(staging, manifest.FileName), func(w io.Writer) error { return manifest.Write(w, m) }))
	if err != nil {
		return err
	}
	return out.swap(staging)
}
