package sampleset

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	goaudio "github.com/go-audio/wav"

	"sinter/synth/manifest"
	"sinter/synth/wav"
)

// Verify reads the set in dir back and checks every file against
// manifest.json: that it exists, its SHA-256, its format and length, and its
// smpl (root key, loop) and inst (key and velocity range) metadata; that the mapping file exists (a shard has none until merged); and that no WAV file
// is there that the manifest does not list. The format is read twice, by
// sinter's own parser and by go-audio/wav's decoder, an independent reader.
// It returns one line per problem; none means the set is complete.
func Verify(dir string) ([]string, error) {
	m, err := manifest.Read(filepath.Join(dir, manifest.FileName))
	if err != nil {
		return nil, err
	}
	var problems []string
	report := func(format string, args ...any) { problems = append(problems, fmt.Sprintf(format, args...)) }
	if _, err := os.Stat(filepath.Join(dir, filepath.FromSlash(m.Mapping))); err != nil && m.Shard == nil {
		report("%s: the mapping file is missing", m.Mapping)
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
