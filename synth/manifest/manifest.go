// Package manifest reads and writes manifest.json, the record of a rendered
// sample set: which patch made it, and for every file its key, layer,
// format, length, level and SHA-256, so a pipeline can confirm a set on disk.
package manifest

import (
	"encoding/json"
	"fmt"
	"io"
	"os"
)

// FileName is the manifest's name at the root of a set's folder.
const FileName = "manifest.json"

// Manifest describes one sample set.
type Manifest struct {
	Sinter    string `json:"sinter"` // version of sinter that rendered the set
	Patch     Patch  `json:"patch"`
	Levelling string `json:"levelling"` // what the gains were set by, e.g. "peak -1 dBFS per key"
	Mapping   string `json:"mapping"`   // the SFZ file, relative to the folder
	Files     []File `json:"files"`
	// Shard is set in the folder of one shard of a set, which holds only
	// that shard's files and no mapping until the shards are merged.
	Shard *Shard `json:"shard,omitempty"`
}

// Shard says which slice of a set a folder holds.
type Shard struct {
	Index int   `json:"index"` // 1-based
	Count int   `json:"count"`
	Notes []int `json:"notes"` // each file's place in the whole set, as Files
}

// Patch identifies the patch a set was rendered from, and the files it
// included.
type Patch struct {
	Name     string    `json:"name"`
	SHA256   string    `json:"sha256"`
	Includes []Include `json:"includes,omitempty"`
	// Tuning is set when scale files tuned the keyboard.
	Tuning *Tuning `json:"tuning,omitempty"`
}

// Tuning records the scale files that tuned a set, and the frequency of
// every key they map, which verify holds the mapping to.
type Tuning struct {
	Scale  Include  `json:"scale"`
	Keymap *Include `json:"keymap,omitempty"`
	Keys   []Key    `json:"keys"` // every mapped key, ascending
}

// Key is one key of a tuned keyboard.
type Key struct {
	Key int     `json:"key"`
	Hz  float64 `json:"hz"`
}

// Include is a file the patch pulled partial groups from.
type Include struct {
	Path   string `json:"path"` // as the patch named it, joined to the including file's folder
	SHA256 string `json:"sha256"`
}

// File describes one WAV file of the set.
type File struct {
	Path          string  `json:"path"` // relative to the folder, '/'-separated
	Key           int     `json:"key"`
	Note          string  `json:"note"`
	Velocity      int     `json:"velocity"`
	KeyRange      [2]int  `json:"key_range"`
	VelocityRange [2]int  `json:"velocity_range"`
	SampleRate    int     `json:"sample_rate"`
	BitDepth      int     `json:"bit_depth"`
	Channels      int     `json:"channels"`
	Frames        int     `json:"frames"`
	Variation     int     `json:"variation"` // round-robin position, 1-based
	Variations    int     `json:"variations"`
	PeakDBFS      float64 `json:"peak_dbfs"`
	TruePeakDBTP  float64 `json:"true_peak_dbtp"`
	LoudnessLUFS  float64 `json:"loudness_lufs"`
	CrestFactorDB float64 `json:"crest_factor_db"` // peak over RMS; 0 for silence
	GainDB        float64 `json:"gain_db"`         // levelling gain applied to this file
	Partials      int     `json:"partials"`
	Loop          *Loop   `json:"loop,omitempty"`
	SHA256        string  `json:"sha256"`
	// RenderKey is a hash of everything that decides the file apart from
	// its gain; a later render of the same folder keeps a file whose key
	// and gain are unchanged.
	RenderKey string `json:"render_key,omitempty"`
	// Measured holds the levels levelling read before the gain, at full
	// precision, so a later render can level without rendering again.
	Measured *Measured `json:"measured,omitempty"`
	// VelocityFadeIn and VelocityFadeOut are where the file's layer
	// cross-fades with the layers below and above it: silent at the first
	// velocity and full at the second for a fade in, the other way round
	// for a fade out; nil where it does not.
	VelocityFadeIn  *[2]int `json:"velocity_fade_in,omitempty"`
	VelocityFadeOut *[2]int `json:"velocity_fade_out,omitempty"`
}

// Measured are a file's levels before its gain: sample and true peak as
// linear values, loudness in LUFS; nil where not measured (or silent).
type Measured struct {
	Peak     float64  `json:"peak"`
	TruePeak *float64 `json:"true_peak,omitempty"`
	Loudness *float64 `json:"loudness_lufs,omitempty"`
}

// Loop is a file's sustain loop.
type Loop struct {
	Start int `json:"start"` // first frame of the loop
	End   int `json:"end"`   // last frame of the loop, inclusive
	// Crossfade is the length in frames of the crossfade baked into the
	// loop's end; 0 for a loop of whole cycles.
	Crossfade int `json:"crossfade"`
	// PitchErrorCents is how far the repeated loop sounds from the note's
	// pitch; RetuneCents how far the note was retuned to loop exactly.
	PitchErrorCents float64 `json:"pitch_error_cents"`
	RetuneCents     float64 `json:"retune_cents"`
	// SeamRatio is the step across the seam over the largest step inside
	// the loop: at most 1 for a seamless loop.
	SeamRatio float64 `json:"seam_ratio"`
}

// Write encodes m as indented JSON.
func Write(w io.Writer, m *Manifest) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(m)
}

// Read decodes the manifest at path.
func Read(path string) (*Manifest, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var m Manifest
	if err := json.Unmarshal(data, &m); err != nil {
		return nil, fmt.Errorf("%s: not a sinter manifest: %v", path, err)
	}
	return &m, nil
}
