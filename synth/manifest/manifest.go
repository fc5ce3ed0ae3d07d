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
	Sinter  string  `json:"sinter"` // version of sinter that rendered the set
	Patch   Patch   `json:"patch"`
	GainDB  float64 `json:"gain_db"` // levelling gain applied to every file
	Mapping string  `json:"mapping"` // the SFZ file, relative to the folder
	Files   []File  `json:"files"`
}

// Patch identifies the patch a set was rendered from.
type Patch struct {
	Name   string `json:"name"`
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
	PeakDBFS      float64 `json:"peak_dbfs"`
	Partials      int     `json:"partials"`
	SHA256        string  `json:"sha256"`
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
