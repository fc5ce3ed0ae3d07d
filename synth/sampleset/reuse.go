package sampleset

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"

	"sinter/patch"
	"sinter/synth/manifest"
)

// renderKey is a hash of everything that decides a note's file apart from
// its levelling gain: the sinter version (every set of kernels gives the
// same bits, so the one in use is not part of it), the output format and the note as
// the plan resolved it — key and velocity ranges, crossfades, fundamental,
// partials, envelopes, motion, seeds, loop request. The fundamental is
// what a scale file gives a root, so editing the scale renders again the
// roots it moves and no others. An empty key means the note cannot be
// keyed and is always rendered.
func renderKey(plan *patch.Plan, n *patch.Note, version string) string {
	h := sha256.New()
	err := json.NewEncoder(h).Encode(struct {
		Version  string
		BitDepth int
		Dither   bool
		Note     *patch.Note
	}{version, plan.BitDepth, plan.Dither, n})
	if err != nil {
		return ""
	}
	return hex.EncodeToString(h.Sum(nil))
}

// previous is what an earlier build left in the output folder: its
// manifest entries by render key.
type previous struct {
	dir   string
	files map[string]manifest.File
}

// loadPrevious reads the manifest of the set in dir; nil when there is
// none (or it cannot be read), so everything renders.
func loadPrevious(dir string) *previous {
	m, err := manifest.Read(filepath.Join(dir, manifest.FileName))
	if err != nil {
		return nil
	}
	p := &previous{dir: dir, files: map[string]manifest.File{}}
	for _, f := range m.Files {
		if f.RenderKey != "" {
			p.files[f.RenderKey] = f
		}
	}
	return p
}

// measured returns the earlier build's levels of the note with key, if it
// measured what levelling needs now.
func (p *previous) measured(key string, truePeak, loudness bool) (levels, bool) {
	if p == nil || key == "" {
		return levels{}, false
	}
	f, ok := p.files[key]
	if !ok || f.Measured == nil || (truePeak && f.Measured.TruePeak == nil) || (loudness && f.Measured.Loudness == nil) {
		return levels{}, false
	}
	lv := levels{peak: f.Measured.Peak, loudness: math.Inf(-1)}
	if f.Measured.TruePeak != nil {
		lv.truePeak = *f.Measured.TruePeak
	}
	if f.Measured.Loudness != nil {
		lv.loudness = *f.Measured.Loudness
	}
	return lv, true
}

// file returns the earlier build's entry for the note with key if its file
// was written at the same gain and still holds the bytes the manifest
// records.
func (p *previous) file(key string, gain float64) (manifest.File, bool) {
	if p == nil || key == "" {
		return manifest.File{}, false
	}
	f, ok := p.files[key]
	if !ok || f.GainDB != decibels(gain) || !intact(p.dir, f) {
		return manifest.File{}, false
	}
	return f, true
}

// intact reports whether f's file in dir holds the bytes f records.
func intact(dir string, f manifest.File) bool {
	data, err := os.Open(filepath.Join(dir, filepath.FromSlash(f.Path)))
	if err != nil {
		return false
	}
	defer data.Close()
	h := sha256.New()
	_, err = io.Copy(h, data)
	return err == nil && hex.EncodeToString(h.Sum(nil)) == f.SHA256
}

// reuse puts the earlier build's file into the staging folder: a hard link
// where the file system allows it, else a copy.
func (p *previous) reuse(f manifest.File, staging string) error {
	from, to := filepath.Join(p.dir, filepath.FromSlash(f.Path)), filepath.Join(staging, filepath.FromSlash(f.Path))
	if disk.Link(from, to) == nil {
		return nil
	}
	src, err := os.Open(from)
	if err != nil {
		return fmt.Errorf("cannot reuse %s: %w", from, err)
	}
	defer src.Close()
	return writeAtomically(to, func(w io.Writer) error {
		_, err := io.Copy(w, src)
		return err
	})
}

// measuredEntry records the levels levelling used, at full precision, so
// a later build can reuse them; −Inf loudness (silence) is left out.
func measuredEntry(lv levels, truePeak, loudness bool) *manifest.Measured {
	m := &manifest.Measured{Peak: lv.peak}
	if truePeak {
		m.TruePeak = &lv.truePeak
	}
	if loudness && !math.IsInf(lv.loudness, -1) {
		m.Loudness = &lv.loudness
	}
	return m
}
