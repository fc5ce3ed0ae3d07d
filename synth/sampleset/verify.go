package sampleset

import (
	"bytes"
	"cmp"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"math"
	"os"
	"path"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	goaudio "github.com/go-audio/wav"

	"sinter/synth/manifest"
	"sinter/synth/mapping"
	"sinter/synth/wav"
)

// Verify reads the set in dir back and checks every file against
// manifest.json: that it exists, its SHA-256, its format and length, and its
// smpl (root key, loop) and inst (key and velocity range) metadata; that
// the mapping plays the set (see checkMapping; a shard has no mapping
// until merged); and that no WAV file is there that the manifest does not
// list. The format is read twice, by
// sinter's own parser and by go-audio/wav's decoder, an independent reader.
// It returns one line per problem; none means the set is complete.
func Verify(dir string) ([]string, error) {
	m, err := manifest.Read(filepath.Join(dir, manifest.FileName))
	if err != nil {
		return nil, err
	}
	var problems []string
	report := func(format string, args ...any) { problems = append(problems, fmt.Sprintf(format, args...)) }
	if m.Shard == nil {
		problems = append(problems, checkMapping(dir, m)...)
	}
	listed := map[string]bool{}
	for _, f := range m.Files {
		listed[f.Path] = true
		data, err := os.ReadFile(filepath.Join(dir, filepath.FromSlash(f.Path)))
		if err != nil {
			report("%s: cannot read: %v", f.Path, err)
			continue
		}
		sum := sha256.Sum256(data)
		if got := hex.EncodeToString(sum[:]); got != f.SHA256 {
			report("%s: SHA-256 is %s, the manifest says %s", f.Path, got, f.SHA256)
		}
		for _, p := range checkFile(data, f) {
			report("%s: %s", f.Path, p)
		}
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		return nil, err
	}
	for _, e := range entries {
		if strings.EqualFold(filepath.Ext(e.Name()), ".wav") && !listed[e.Name()] {
			report("%s: not listed in the manifest", e.Name())
		}
	}
	return problems, nil
}

func checkFile(data []byte, f manifest.File) []string {
	var problems []string
	mismatch := func(what string, got, want any) {
		if got != want {
			problems = append(problems, fmt.Sprintf("%s is %v, the manifest says %v", what, got, want))
		}
	}
	info, err := wav.Inspect(data)
	if err != nil {
		return []string{err.Error()}
	}
	mismatch("sample rate", info.SampleRate, f.SampleRate)
	mismatch("bit depth", info.BitDepth, f.BitDepth)
	mismatch("channels", info.Channels, f.Channels)
	mismatch("frames", info.Frames, f.Frames)
	if info.Sampler == nil {
		problems = append(problems, "has no smpl chunk")
	} else {
		mismatch("smpl unity note", int(info.Sampler.UnityNote), f.Key)
		var got, want []wav.Loop
		got = info.Sampler.Loops
		if f.Loop != nil {
			want = []wav.Loop{{Start: uint32(f.Loop.Start), End: uint32(f.Loop.End)}}
		}
		mismatch("smpl loops", fmt.Sprint(got), fmt.Sprint(want))
	}
	if info.Instrument == nil {
		problems = append(problems, "has no inst chunk")
	} else {
		in := info.Instrument
		mismatch("inst key range", [2]int{int(in.LowNote), int(in.HighNote)}, f.KeyRange)
		mismatch("inst velocity range", [2]int{int(in.LowVelocity), int(in.HighVelocity)}, f.VelocityRange)
	}

	dec := goaudio.NewDecoder(bytes.NewReader(data))
	dec.ReadInfo()
	if !dec.IsValidFile() {
		return append(problems, "go-audio/wav does not read it as a valid WAV file")
	}
	mismatch("sample rate (go-audio/wav)", int(dec.SampleRate), f.SampleRate)
	mismatch("channels (go-audio/wav)", int(dec.NumChans), f.Channels)
	mismatch("bit depth (go-audio/wav)", int(dec.BitDepth), f.BitDepth)
	dec.ReadMetadata()
	if dec.Metadata == nil || dec.Metadata.SamplerInfo == nil {
		problems = append(problems, "go-audio/wav finds no smpl chunk")
	} else {
		mismatch("smpl unity note (go-audio/wav)", int(dec.Metadata.SamplerInfo.MIDIUnityNote), f.Key)
	}
	return problems
}

// checkMapping reads the set's SFZ mapping as a sampler would and reports
// each region whose sample is missing, lies outside the set's folder or
// is not in the manifest, naming the region by its place in the mapping,
// and each file of the manifest that no region plays. A region of a file
// in the manifest is held to the file's velocity range and crossfades
// (checkVelocities) and, in a set scale files tuned, to the frequencies of
// the keys it plays (keyCheck).
func checkMapping(dir string, m *manifest.Manifest) []string {
	file := filepath.Join(dir, filepath.FromSlash(m.Mapping))
	f, err := os.Open(file)
	if err != nil {
		return []string{fmt.Sprintf("%s: the mapping file is missing", m.Mapping)}
	}
	defer f.Close()
	regions, err := mapping.ReadSFZ(f)
	var place *mapping.ReadError
	switch {
	case errors.As(err, &place):
		return []string{fmt.Sprintf("%s:%d:%d: %s", m.Mapping, place.Line, place.Column, place.Msg)}
	case err != nil:
		return []string{fmt.Sprintf("%s: cannot read: %v", m.Mapping, err)}
	}
	listed := map[string]bool{}
	entry := map[string]*manifest.File{}
	for i, f := range m.Files {
		listed[f.Path] = true
		entry[f.Path] = &m.Files[i]
	}
	played := map[string]bool{}
	keys := newKeyCheck(m)
	var problems []string
	for _, r := range regions {
		at := fmt.Sprintf("%s:%d:%d: <region>", m.Mapping, r.Line, r.Column)
		if r.Sample == "" {
			problems = append(problems, at+" has no sample")
			continue
		}
		// SFZ paths are relative to the mapping's folder, with '/' or '\'
		// between folders (sfzformat.com, "sample").
		sample := strings.ReplaceAll(r.Sample, "\\", "/")
		rel := path.Clean(path.Join(path.Dir(m.Mapping), sample))
		if strings.HasPrefix(sample, "/") || drive(sample) || rel == ".." || strings.HasPrefix(rel, "../") {
			problems = append(problems, fmt.Sprintf("%s plays %s, outside the set's folder", at, r.Sample))
			continue
		}
		played[rel] = true
		var why []string
		if _, err := os.Stat(filepath.Join(dir, filepath.FromSlash(rel))); err != nil {
			why = append(why, "which does not exist")
		}
		if !listed[rel] {
			why = append(why, "which the manifest does not list")
		}
		if why != nil {
			problems = append(problems, fmt.Sprintf("%s plays %s, %s", at, r.Sample, strings.Join(why, " and ")))
		}
		if f := entry[rel]; f != nil {
			problems = append(problems, checkVelocities(at, r, f)...)
			problems = append(problems, keys.region(at, r, f)...)
		}
	}
	problems = append(problems, keys.unplayed(m)...)
	for _, f := range m.Files {
		if !played[f.Path] {
			problems = append(problems, fmt.Sprintf("%s: no region of %s plays it", f.Path, m.Mapping))
		}
	}
	return problems
}

// drive reports whether a path starts with a Windows drive, such as C:.
func drive(p string) bool {
	return len(p) >= 2 && p[1] == ':' && (p[0]|0x20 >= 'a' && p[0]|0x20 <= 'z')
}

// opcode reads a whole-number opcode of a region, or def where it is not
// set; ok is false, with a problem, where its value is not a whole number.
func opcode(at string, r mapping.PlacedRegion, name string, def int) (v int, ok bool, problem string) {
	text, set := r.Opcodes[name]
	if !set {
		return def, true, ""
	}
	v, err := strconv.Atoi(text)
	if err != nil {
		return 0, false, fmt.Sprintf("%s has %s=%s, not a whole number", at, name, text)
	}
	return v, true, ""
}

// span reads a pair of opcodes that give a velocity range; nil where
// neither is set.
func span(at string, r mapping.PlacedRegion, lo, hi string) (*[2]int, []string) {
	_, hasLo := r.Opcodes[lo]
	_, hasHi := r.Opcodes[hi]
	if !hasLo && !hasHi {
		return nil, nil
	}
	a, okA, pa := opcode(at, r, lo, 0)
	b, okB, pb := opcode(at, r, hi, 127)
	if !okA || !okB {
		return nil, slices.DeleteFunc([]string{pa, pb}, func(s string) bool { return s == "" })
	}
	return &[2]int{a, b}, nil
}

// checkVelocities holds a region's velocities to its file's entry in the
// manifest: lovel/hivel to the velocity range (SFZ's defaults 0 and 127
// where unset, standards sheet §3), and the crossfade opcodes
// xfin_lovel/xfin_hivel and xfout_lovel/xfout_hivel to the fades, with the
// equal-power curve (xf_velcurve=power) the fades are planned for.
func checkVelocities(at string, r mapping.PlacedRegion, f *manifest.File) []string {
	var problems []string
	vel, bad := span(at, r, "lovel", "hivel")
	problems = append(problems, bad...)
	if vel == nil && bad == nil {
		vel = &[2]int{0, 127}
	}
	if vel != nil && *vel != f.VelocityRange {
		problems = append(problems, fmt.Sprintf("%s plays %s at velocities %d–%d, the manifest says %d–%d", at, r.Sample, vel[0], vel[1], f.VelocityRange[0], f.VelocityRange[1]))
	}
	for _, side := range []struct {
		lo, hi, what string
		want         *[2]int
	}{
		{"xfin_lovel", "xfin_hivel", "fades in", f.VelocityFadeIn},
		{"xfout_lovel", "xfout_hivel", "fades out", f.VelocityFadeOut},
	} {
		got, bad := span(at, r, side.lo, side.hi)
		problems = append(problems, bad...)
		if bad != nil {
			continue
		}
		switch {
		case got == nil && side.want != nil:
			problems = append(problems, fmt.Sprintf("%s plays %s with no %s/%s; the manifest says it %s over velocities %d–%d", at, r.Sample, side.lo, side.hi, side.what, side.want[0], side.want[1]))
		case got != nil && side.want == nil:
			problems = append(problems, fmt.Sprintf("%s plays %s with %s=%d %s=%d; the manifest says it does not cross-fade there", at, r.Sample, side.lo, got[0], side.hi, got[1]))
		case got != nil && *got != *side.want:
			problems = append(problems, fmt.Sprintf("%s %s over velocities %d–%d, the manifest says %d–%d", at, side.what, got[0], got[1], side.want[0], side.want[1]))
		}
	}
	if (f.VelocityFadeIn != nil || f.VelocityFadeOut != nil) && r.Opcodes["xf_velcurve"] != "power" {
		problems = append(problems, fmt.Sprintf("%s cross-fades with xf_velcurve=%s; the fades are planned for power", at, cmp.Or(r.Opcodes["xf_velcurve"], "unset (gain)")))
	}
	return problems
}

// maxTuneCents is how far from the scale a key may play: what whole cents
// of tune can miss by.
const maxTuneCents = 0.5

// keyCheck holds a tuned set's mapping to the frequencies the manifest
// records: each key a region plays must be mapped and sound within
// maxTuneCents of its frequency, and each mapped key of a file's key range
// must be played by a region of that file.
type keyCheck struct {
	hz     map[int]float64 // nil for a set no scale tuned
	played map[string]map[int]bool
}

func newKeyCheck(m *manifest.Manifest) *keyCheck {
	c := &keyCheck{played: map[string]map[int]bool{}}
	if t := m.Patch.Tuning; t != nil {
		c.hz = map[int]float64{}
		for _, k := range t.Keys {
			c.hz[k.Key] = k.Hz
		}
	}
	return c
}

// region checks the keys one region plays. The pitch is SFZ's: the file
// repitched from pitch_keycenter by pitch_keytrack cents a key, plus
// transpose semitones and tune cents (sfzformat.com; defaults 60, 100, 0
// and 0), with the file's root sounding at its key's recorded frequency.
func (c *keyCheck) region(at string, r mapping.PlacedRegion, f *manifest.File) []string {
	if c.hz == nil {
		return nil
	}
	var problems []string
	values := map[string]int{}
	for _, o := range []struct {
		name string
		def  int
	}{{"lokey", 0}, {"hikey", 127}, {"pitch_keycenter", 60}, {"pitch_keytrack", 100}, {"transpose", 0}, {"tune", 0}} {
		v, ok, problem := opcode(at, r, o.name, o.def)
		if !ok {
			problems = append(problems, problem)
			continue
		}
		values[o.name] = v
	}
	if problems != nil {
		return problems
	}
	if c.played[f.Path] == nil {
		c.played[f.Path] = map[int]bool{}
	}
	root := c.hz[f.Key]
	for k := max(values["lokey"], 0); k <= min(values["hikey"], 127); k++ {
		want, mapped := c.hz[k]
		if !mapped {
			problems = append(problems, fmt.Sprintf("%s plays key %d, which the scale leaves unmapped", at, k))
			continue
		}
		c.played[f.Path][k] = true
		cents := float64((k-values["pitch_keycenter"])*values["pitch_keytrack"] + 100*values["transpose"] + values["tune"])
		got := root * math.Exp2(cents/1200)
		if off := 1200 * math.Log2(got/want); !(math.Abs(off) <= maxTuneCents) {
			problems = append(problems, fmt.Sprintf("%s plays key %d at %.4f Hz, %+.3f cents from the scale's %.4f Hz", at, k, got, off, want))
		}
	}
	return problems
}

// unplayed lists the mapped keys of each file's key range that no region
// of that file plays.
func (c *keyCheck) unplayed(m *manifest.Manifest) []string {
	if c.hz == nil {
		return nil
	}
	var problems []string
	for _, f := range m.Files {
		for k := f.KeyRange[0]; k <= f.KeyRange[1]; k++ {
			if _, mapped := c.hz[k]; mapped && !c.played[f.Path][k] {
				problems = append(problems, fmt.Sprintf("%s: no region of %s plays it at key %d, which its key range holds and the scale maps", f.Path, m.Mapping, k))
			}
		}
	}
	return problems
}
