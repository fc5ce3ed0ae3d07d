package sampleset

import (
	"path/filepath"

	"sinter/patch"
	"sinter/synth/manifest"
	"sinter/synth/mapping"
)

// manifestPatch identifies the plan's patch for the manifest: its hash,
// the files it included and, where scale files tuned it, those files with
// their hashes and every mapped key's frequency. The files a set was
// built from are recorded this way; the render keys notice an edit that
// changes a note, since a note's fundamental is part of it.
func manifestPatch(plan *patch.Plan) manifest.Patch {
	var list []manifest.Include
	for _, in := range plan.Includes {
		list = append(list, slashed(in))
	}
	mp := manifest.Patch{Name: plan.Name, SHA256: plan.PatchSHA256, Includes: list}
	if t := plan.Tuning; t != nil {
		mt := &manifest.Tuning{Scale: slashed(t.Scale)}
		if t.Keymap != nil {
			km := slashed(*t.Keymap)
			mt.Keymap = &km
		}
		for k, hz := range t.Hz {
			if t.Mapped(k) {
				mt.Keys = append(mt.Keys, manifest.Key{Key: k, Hz: hz})
			}
		}
		mp.Tuning = mt
	}
	return mp
}

// slashed is an input file for the manifest, with a '/'-separated path.
func slashed(in patch.Include) manifest.Include {
	return manifest.Include{Path: filepath.ToSlash(in.Path), SHA256: in.SHA256}
}

// sameTuning reports whether two manifests' patches were tuned by the same
// scale files.
func sameTuning(a, b manifest.Patch) bool {
	switch {
	case a.Tuning == nil || b.Tuning == nil:
		return a.Tuning == b.Tuning
	case a.Tuning.Keymap == nil || b.Tuning.Keymap == nil:
		return a.Tuning.Scale.SHA256 == b.Tuning.Scale.SHA256 && a.Tuning.Keymap == b.Tuning.Keymap
	}
	return a.Tuning.Scale.SHA256 == b.Tuning.Scale.SHA256 && a.Tuning.Keymap.SHA256 == b.Tuning.Keymap.SHA256
}

// fades are a note's velocity crossfades for its manifest entry.
func fades(n *patch.Note) (in, out *[2]int) {
	f := n.VelocityFade
	if f == nil {
		return nil, nil
	}
	if f.In != [2]int{} {
		in = &f.In
	}
	if f.Out != [2]int{} {
		out = &f.Out
	}
	return in, out
}

// noteRegions are the regions that play note n's file: one over its key
// range where 12-TET repitching from the root plays every key in tune
// (no scale, or a scale that is 12-TET on every key); else one per key of
// the range that the scale maps, each offset by what the scale's interval
// from the root differs from 12-TET's, so a sampler plays the key at the
// scale's frequency (within the half cent the whole cents of tune may
// miss by), and an unmapped key plays nothing.
func noteRegions(n *patch.Note, t *patch.Tuning, r mapping.Region) []mapping.Region {
	if f := n.VelocityFade; f != nil {
		r.FadeIn, r.FadeOut = f.In, f.Out
	}
	if t == nil || t.TwelveTone {
		return []mapping.Region{r}
	}
	var out []mapping.Region
	for k := n.KeyLow; k <= n.KeyHigh; k++ {
		if !t.Mapped(k) {
			continue
		}
		key := r
		key.LowKey, key.HighKey = k, k
		key.Transpose, key.Tune = mapping.PitchOffset(t.Offset(n.Key, k))
		out = append(out, key)
	}
	return out
}
