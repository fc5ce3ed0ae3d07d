package sampleset_test

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	goaudio "github.com/go-audio/wav"
	mewflac "github.com/mewkiz/flac"

	"sinter/synth/manifest"
	"sinter/synth/mapping"
	"sinter/synth/sampleset"
)

// flacSource is the test patch, looped, with round robins, written as
// format.
func flacSource(bitDepth, channels int, format string) string {
	return patchSource(bitDepth, channels, "loop: {length: 0.05, crossfade: 0.01}\nround_robin: 2\noutput: {format: "+format+"}")
}

// intSamples decodes a file's integer samples, interleaved: a WAV file by
// go-audio/wav, a FLAC file by mewkiz/flac, both independent decoders.
func intSamples(t *testing.T, path string, want int) []int {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if strings.HasSuffix(path, ".wav") {
		buf, err := goaudio.NewDecoder(bytes.NewReader(data)).FullPCMBuffer()
		if err != nil {
			t.Fatal(err)
		}
		// go-audio/wav reads a data chunk's pad byte as a sample
		// (shared/reference/libraries.md); want leaves it out.
		return buf.Data[:want]
	}
	stream, err := mewflac.New(bytes.NewReader(data))
	if err != nil {
		t.Fatal(err)
	}
	var out []int
	for {
		f, err := stream.ParseNext()
		if errors.Is(err, io.EOF) {
			return out
		}
		if err != nil {
			t.Fatalf("%s: %v", path, err)
		}
		for i := range f.Subframes[0].NSamples {
			for _, sub := range f.Subframes {
				out = append(out, int(sub.Samples[i]))
			}
		}
	}
}

// TestFLACSetIsTheWAVSet: a patch with format flac writes .flac files
// that decode to every integer sample of the WAV files the same patch
// makes as wav; the mapping and the manifest point at the .flac files
// with the same loops and keys; verify passes.
func TestFLACSetIsTheWAVSet(t *testing.T) {
	for _, c := range []struct{ bits, channels int }{{16, 2}, {24, 1}} {
		t.Run(fmt.Sprintf("%d-bit/%dch", c.bits, c.channels), func(t *testing.T) {
			root := t.TempDir()
			wavDir, flacDir := filepath.Join(root, "wav"), filepath.Join(root, "flac")
			build(t, newPlan(t, flacSource(c.bits, c.channels, "wav"), wavDir), 2)
			build(t, newPlan(t, flacSource(c.bits, c.channels, "flac"), flacDir), 2)
			mw, err := manifest.Read(filepath.Join(wavDir, manifest.FileName))
			if err != nil {
				t.Fatal(err)
			}
			mf, err := manifest.Read(filepath.Join(flacDir, manifest.FileName))
			if err != nil {
				t.Fatal(err)
			}
			if len(mf.Files) != 8 || len(mw.Files) != len(mf.Files) {
				t.Fatalf("%d FLAC files, %d WAV files; want 8", len(mf.Files), len(mw.Files))
			}
			for i, f := range mf.Files {
				w := mw.Files[i]
				if strings.TrimSuffix(f.Path, ".flac") != strings.TrimSuffix(w.Path, ".wav") || !strings.HasSuffix(f.Path, ".flac") {
					t.Fatalf("FLAC file %s for WAV file %s", f.Path, w.Path)
				}
				if f.Loop == nil || w.Loop == nil {
					t.Fatalf("%s or %s has no loop", f.Path, w.Path)
				}
				if f.Key != w.Key || f.Loop.Start != w.Loop.Start || f.Loop.End != w.Loop.End || f.Frames != w.Frames {
					t.Errorf("%s: key %d, loop %+v, %d frames; the WAV's %d, %+v, %d", f.Path, f.Key, *f.Loop, f.Frames, w.Key, *w.Loop, w.Frames)
				}
				n := f.Frames * c.channels
				got, want := intSamples(t, filepath.Join(flacDir, f.Path), n), intSamples(t, filepath.Join(wavDir, w.Path), n)
				if len(got) != n {
					t.Fatalf("%s decodes to %d samples, want %d", f.Path, len(got), n)
				}
				for j := range want {
					if got[j] != want[j] {
						t.Fatalf("%s: sample %d is %d, the WAV's %d", f.Path, j, got[j], want[j])
					}
				}
			}
			sfz, err := os.Open(filepath.Join(flacDir, mf.Mapping))
			if err != nil {
				t.Fatal(err)
			}
			defer sfz.Close()
			regions, err := mapping.ReadSFZ(sfz)
			if err != nil {
				t.Fatal(err)
			}
			for i, r := range regions {
				f := mf.Files[i]
				if r.Sample != f.Path || r.Opcodes["pitch_keycenter"] != fmt.Sprint(f.Key) ||
					r.Opcodes["loop_start"] != fmt.Sprint(f.Loop.Start) || r.Opcodes["loop_end"] != fmt.Sprint(f.Loop.End) {
					t.Errorf("region %d plays %s from key %s, loop %s-%s; the manifest has %s, %d, %+v", i, r.Sample, r.Opcodes["pitch_keycenter"],
						r.Opcodes["loop_start"], r.Opcodes["loop_end"], f.Path, f.Key, f.Loop)
				}
			}
			if problems, err := sampleset.Verify(flacDir); err != nil || len(problems) > 0 {
				t.Errorf("verify: %v %v", err, problems)
			}
		})
	}
}

// TestVerifyDecodesFLAC: a FLAC file whose audio is damaged but whose
// SHA-256 the manifest was made to agree with is still caught, by the
// decoder's CRCs or the MD5 of the decoded samples.
func TestVerifyDecodesFLAC(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "set")
	build(t, newPlan(t, flacSource(24, 1, "flac"), dir), 1)
	m, err := manifest.Read(filepath.Join(dir, manifest.FileName))
	if err != nil {
		t.Fatal(err)
	}
	victim := &m.Files[3]
	path := filepath.Join(dir, victim.Path)
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	data[len(data)-40] ^= 0x04
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
	victim.SHA256 = sha(data)
	out, err := json.Marshal(m)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, manifest.FileName), out, 0o644); err != nil {
		t.Fatal(err)
	}
	problems, err := sampleset.Verify(dir)
	if err != nil {
		t.Fatal(err)
	}
	if len(problems) != 1 || !strings.HasPrefix(problems[0], victim.Path+": ") ||
		!strings.Contains(problems[0], "mewkiz/flac cannot decode") && !strings.Contains(problems[0], "MD5") {
		t.Errorf("verify says %q", problems)
	}
}

// TestFLACShardsMerge: shards of a FLAC set merge into the single render,
// byte for byte.
func TestFLACShardsMerge(t *testing.T) {
	root := t.TempDir()
	src := flacSource(16, 2, "flac")
	single := filepath.Join(root, "single")
	build(t, newPlan(t, src, single), 2)
	var shards []string
	for k := 1; k <= 2; k++ {
		dir := filepath.Join(root, fmt.Sprintf("shard%d", k))
		if _, err := sampleset.Build(context.Background(), newPlan(t, src, dir), sampleset.Options{Jobs: 2, Version: "test", Shard: sampleset.Shard{Index: k, Count: 2}}); err != nil {
			t.Fatal(err)
		}
		shards = append(shards, dir)
	}
	merged := filepath.Join(root, "merged")
	if err := sampleset.Merge(context.Background(), newPlan(t, src, merged), merged, shards, sampleset.Options{Version: "test"}); err != nil {
		t.Fatal(err)
	}
	a, b := snapshot(t, single), snapshot(t, merged)
	if len(a) != 10 || len(b) != len(a) {
		t.Fatalf("single render %d files, merged %d; want 10", len(a), len(b))
	}
	for f, sum := range a {
		if b[f] != sum {
			t.Errorf("%s differs between the single render and the merged shards", f)
		}
	}
	if problems, err := sampleset.Verify(merged); err != nil || len(problems) > 0 {
		t.Errorf("verify: %v %v", err, problems)
	}
}
