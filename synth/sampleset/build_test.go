package sampleset_test

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	goaudio "github.com/go-audio/wav"

	"sinter/patch"
	"sinter/synth"
	"sinter/synth/kernel"
	"sinter/synth/sampleset"
)

// patchSource is a small set: 2 keys × 2 velocity layers, 0.3 s each. At
// 22050 Hz that is 6615 frames, an odd count, so 24-bit mono files have an
// odd-sized data chunk and its pad byte (RIFF 1.0, standards §1.1).
func patchSource(bitDepth, channels int, extra string) string {
	return fmt.Sprintf(`name: tiny
sample_rate: 22050
bit_depth: %d
channels: %d
keys: [60, 68]
velocities: [64, 127]
hold: 0.2
tail: 0.1
%s
partials:
  - harmonics: 8
    amplitude: "0.2 * vel / n"
    envelope: {attack: 0.01, decay: 0.05, sustain: 0.7, release: 0.08}
`, bitDepth, channels, extra)
}

const frames = 6615 // round(0.3 s · 22050 Hz)

// newPlan parses and expands src and points it at dir.
func newPlan(t *testing.T, src, dir string) *patch.Plan {
	t.Helper()
	p, err := patch.Parse("tiny.yaml", []byte(src))
	if err != nil {
		t.Fatalf("Parse: %v", err)
	}
	plan, err := p.Expand(patch.ExpandOptions{})
	if err != nil {
		t.Fatalf("Expand: %v", err)
	}
	plan.OutputDir = dir
	return plan
}

func build(t *testing.T, plan *patch.Plan, jobs int) {
	t.Helper()
	if _, err := sampleset.Build(context.Background(), plan, sampleset.Options{Jobs: jobs, Version: "test"}); err != nil {
		t.Fatalf("Build: %v", err)
	}
}

// manifestFile is manifest.json as documented, read with encoding/json
// into the field names the file is meant to carry.
type manifestFile struct {
	Levelling string          `json:"levelling"`
	Mapping   string          `json:"mapping"`
	Files     []manifestEntry `json:"files"`
}

type manifestEntry struct {
	Path          string   `json:"path"`
	Key           int      `json:"key"`
	Velocity      int      `json:"velocity"`
	KeyRange      [2]int   `json:"key_range"`
	VelocityRange [2]int   `json:"velocity_range"`
	SampleRate    int      `json:"sample_rate"`
	BitDepth      int      `json:"bit_depth"`
	Channels      int      `json:"channels"`
	Frames        int      `json:"frames"`
	PeakDBFS      float64  `json:"peak_dbfs"`
	GainDB        *float64 `json:"gain_db"`
	SHA256        string   `json:"sha256"`
}

func readManifest(t *testing.T, dir string) manifestFile {
	t.Helper()
	data, err := os.ReadFile(filepath.Join(dir, "manifest.json"))
	if err != nil {
		t.Fatal(err)
	}
	var m manifestFile
	if err := json.Unmarshal(data, &m); err != nil {
		t.Fatalf("manifest.json: %v", err)
	}
	for _, f := range m.Files {
		if f.GainDB == nil {
			t.Fatalf("manifest.json: %s has no gain_db", f.Path)
		}
	}
	return m
}

// sha is the file's SHA-256 (FIPS 180-4, Go's crypto/sha256) in hex.
func sha(data []byte) string {
	s := sha256.Sum256(data)
	return hex.EncodeToString(s[:])
}

// snapshot maps every entry of dir to its SHA-256.
func snapshot(t *testing.T, dir string) map[string]string {
	t.Helper()
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]string{}
	for _, e := range entries {
		data, err := os.ReadFile(filepath.Join(dir, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		out[e.Name()] = sha(data)
	}
	return out
}

// noStaging fails if a hidden (staging or parking) folder is left in parent.
func noStaging(t *testing.T, parent string) {
	t.Helper()
	entries, err := os.ReadDir(parent)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		if strings.HasPrefix(e.Name(), ".") {
			t.Errorf("%s is left in %s", e.Name(), parent)
		}
	}
}

// decoded is one WAV file as go-audio/wav reads it.
type decoded struct {
	rate, channels, bitDepth int
	samples                  []float64 // full scale ±1
	unityNote                int
}

// decode reads a WAV with go-audio/wav, the independent reader
// (libraries.md §1): FullPCMBuffer on a bytes.Reader, truncated to the
// expected frames × channels because the decoder counts the data chunk's
// pad byte as a sample; integer codes scaled by 2^-(bits−1), and 32-bit
// values, which the decoder returns as raw bit patterns, read as float32.
func decode(t *testing.T, data []byte, wantSamples int) decoded {
	t.Helper()
	dec := goaudio.NewDecoder(bytes.NewReader(data))
	buf, err := dec.FullPCMBuffer()
	if err != nil {
		t.Fatalf("go-audio/wav: %v", err)
	}
	d := decoded{rate: int(dec.SampleRate), channels: int(dec.NumChans), bitDepth: int(dec.BitDepth)}
	if len(buf.Data) < wantSamples {
		t.Fatalf("go-audio/wav reads %d samples, want %d", len(buf.Data), wantSamples)
	}
	for _, v := range buf.Data[:wantSamples] {
		if d.bitDepth == 32 {
			d.samples = append(d.samples, float64(math.Float32frombits(uint32(v))))
		} else {
			d.samples = append(d.samples, float64(v)/math.Ldexp(1, d.bitDepth-1))
		}
	}
	meta := goaudio.NewDecoder(bytes.NewReader(data))
	meta.ReadMetadata()
	if meta.Err() != nil {
		t.Fatalf("go-audio/wav metadata: %v", meta.Err())
	}
	if meta.Metadata == nil || meta.Metadata.SamplerInfo == nil {
		t.Fatal("go-audio/wav finds no smpl chunk")
	}
	d.unityNote = int(meta.Metadata.SamplerInfo.MIDIUnityNote)
	return d
}

// TestBuildRoundTrip builds the set at every bit depth and channel count and
// reads every file back with go-audio/wav.
func TestBuildRoundTrip(t *testing.T) {
	type variant struct {
		bitDepth, channels   int
		normalizeOff, dither bool
	}
	var cases []variant
	for _, bitDepth := range []int{16, 24, 32} {
		for _, channels := range []int{1, 2} {
			cases = append(cases, variant{bitDepth, channels, false, false}, variant{bitDepth, channels, true, false})
		}
		cases = append(cases, variant{bitDepth, 1, false, true})
	}
	for _, c := range cases {
		name := fmt.Sprintf("%dbit-%dch", c.bitDepth, c.channels)
		if c.normalizeOff {
			name += "-normalize-off"
		}
		if c.dither {
			name += "-dither"
		}
		t.Run(name, func(t *testing.T) { roundTrip(t, c.bitDepth, c.channels, c.normalizeOff, c.dither) })
	}
}

func roundTrip(t *testing.T, bitDepth, channels int, normalizeOff, dither bool) {
	var extra []string
	if normalizeOff {
		extra = append(extra, "normalize: off")
	}
	if !dither {
		extra = append(extra, "dither: off")
	}
	dir := filepath.Join(t.TempDir(), "set")
	plan := newPlan(t, patchSource(bitDepth, channels, strings.Join(extra, "\n")), dir)
	if len(plan.Notes) != 4 {
		t.Fatalf("plan has %d notes, want 2 keys × 2 layers", len(plan.Notes))
	}
	build(t, plan, 2)
	m := readManifest(t, dir)

	// What the files should hold: each note as synth.Renderer renders it,
	// times the set's gain. The default levelling is "the loudest sample
	// of the set lands at −1 dBFS" with one gain for the set; off is
	// unity gain.
	var r synth.Renderer
	rendered := make([][]float64, len(plan.Notes))
	renderPeak := 0.0
	for i := range plan.Notes {
		rendered[i] = make([]float64, synth.Frames(&plan.Notes[i]))
		r.Render(rendered[i], &plan.Notes[i])
		for _, v := range rendered[i] {
			renderPeak = max(renderPeak, math.Abs(v))
		}
	}
	gain := 1.0
	if !normalizeOff {
		gain = math.Pow(10, -1.0/20) / renderPeak
	}

	// manifest.json lists exactly the plan's files, and exactly the WAV
	// files in the folder.
	var listed, planned, onDisk []string
	for _, f := range m.Files {
		listed = append(listed, f.Path)
	}
	for _, n := range plan.Notes {
		planned = append(planned, n.File)
	}
	entries, _ := os.ReadDir(dir)
	for _, e := range entries {
		if strings.EqualFold(filepath.Ext(e.Name()), ".wav") {
			onDisk = append(onDisk, e.Name())
		}
	}
	slices.Sort(listed)
	slices.Sort(planned)
	if !slices.Equal(listed, planned) || !slices.Equal(listed, onDisk) {
		t.Fatalf("manifest lists %v; the plan has %v; the folder holds %v", listed, planned, onDisk)
	}

	setPeak := 0.0
	for ni, n := range plan.Notes {
		mf := m.Files[slices.IndexFunc(m.Files, func(f manifestEntry) bool { return f.Path == n.File })]
		data, err := os.ReadFile(filepath.Join(dir, n.File))
		if err != nil {
			t.Fatal(err)
		}
		if got := sha(data); got != mf.SHA256 {
			t.Errorf("%s: SHA-256 %s, manifest says %s", n.File, got, mf.SHA256)
		}
		if mf.Key != n.Key || mf.Velocity != n.Velocity || mf.Frames != frames || mf.Channels != channels || mf.BitDepth != bitDepth || mf.SampleRate != 22050 {
			t.Errorf("%s: manifest entry %+v does not describe key %d, velocity %d, %d frames, %d ch, %d bit, 22050 Hz",
				n.File, mf, n.Key, n.Velocity, frames, channels, bitDepth)
		}
		// The manifest writes gains to 0.001 dB.
		if normalizeOff && *mf.GainDB != 0 {
			t.Errorf("%s: normalize off, but gain_db is %v", n.File, *mf.GainDB)
		}
		if want := 20 * math.Log10(gain); math.Abs(*mf.GainDB-want) > 0.0005+1e-9 {
			t.Errorf("%s: manifest gain_db %v, the set's gain is %.6f dB", n.File, *mf.GainDB, want)
		}

		d := decode(t, data, frames*channels)
		if d.rate != 22050 || d.channels != channels || d.bitDepth != bitDepth {
			t.Errorf("%s: go-audio/wav reads %d Hz, %d ch, %d bit", n.File, d.rate, d.channels, d.bitDepth)
		}
		if d.unityNote != n.Key {
			t.Errorf("%s: smpl MIDIUnityNote %d, want the key %d", n.File, d.unityNote, n.Key)
		}

		// Tolerance: integer PCM is rounded to the nearest code, so within
		// half an LSB (1 LSB = 2^-(N−1) of full scale, standards §6); TPDF
		// dither adds at most ±1 LSB before that (standards §6). Float is
		// float32(x), within float32's unit roundoff 2^-24 relative
		// (IEEE 754 binary32), and never dithered.
		lsb := math.Ldexp(1, -(bitDepth - 1))
		limit := lsb/2 + 1e-6*lsb
		if dither {
			limit = 1.5*lsb + 1e-6*lsb
		}
		filePeak, pastHalf := 0.0, 0
		for j, got := range d.samples {
			w := rendered[ni][j] * gain
			tol := limit
			if bitDepth == 32 {
				tol = math.Abs(w)*0x1p-24 + 1e-300
			}
			if math.Abs(got-w) > tol {
				t.Fatalf("%s sample %d: file holds %.10g, rendered × gain is %.10g (allowed ±%.3g)", n.File, j, got, w, tol)
			}
			if math.Abs(got-w) > lsb/2+1e-6*lsb {
				pastHalf++
			}
			filePeak = max(filePeak, math.Abs(got))
		}
		if dither && bitDepth != 32 && pastHalf < len(d.samples)/20 {
			t.Errorf("%s: dither is on, but only %d of %d samples are more than ½ LSB from the undithered value", n.File, pastHalf, len(d.samples))
		}
		setPeak = max(setPeak, filePeak)
		if math.Abs(mf.PeakDBFS-20*math.Log10(filePeak)) > 0.01 {
			t.Errorf("%s: manifest peak %.3f dBFS, file peaks at %.4f dBFS", n.File, mf.PeakDBFS, 20*math.Log10(filePeak))
		}
	}
	// Default normalize: the loudest sample of the set lands at −1 dBFS.
	if !normalizeOff {
		if peakDB := 20 * math.Log10(setPeak); math.Abs(peakDB+1) > 0.01 {
			t.Errorf("set peak is %.4f dBFS, want −1 ± 0.01 dBFS", peakDB)
		}
	}

	checkSFZ(t, dir, m, plan)

	problems, err := sampleset.Verify(dir)
	if err != nil {
		t.Fatalf("Verify: %v", err)
	}
	if len(problems) != 0 {
		t.Errorf("Verify reports problems in a fresh set: %q", problems)
	}
}

// checkSFZ reads the mapping: one <region> per file, with the file's key as
// pitch_keycenter, the plan's key and velocity ranges, and a keyboard where
// every key between the roots and every velocity 1–127 reaches exactly one
// region (SFZ opcodes, standards §3).
func checkSFZ(t *testing.T, dir string, m manifestFile, plan *patch.Plan) {
	t.Helper()
	if m.Mapping != plan.Name+".sfz" {
		t.Errorf("manifest names the mapping %q, want %q", m.Mapping, plan.Name+".sfz")
	}
	data, err := os.ReadFile(filepath.Join(dir, m.Mapping))
	if err != nil {
		t.Fatal(err)
	}
	var regions []map[string]string
	for line := range strings.Lines(string(data)) {
		fields := strings.Fields(line)
		if len(fields) == 0 || fields[0] != "<region>" {
			continue
		}
		op := map[string]string{}
		for _, f := range fields[1:] {
			k, v, ok := strings.Cut(f, "=")
			if !ok {
				t.Fatalf("SFZ: %q is not an opcode=value pair in %q", f, line)
			}
			op[k] = v
		}
		regions = append(regions, op)
	}
	if len(regions) != len(plan.Notes) {
		t.Fatalf("SFZ has %d regions, the set %d files", len(regions), len(plan.Notes))
	}
	num := func(op map[string]string, k string) int {
		v, err := strconv.Atoi(op[k])
		if err != nil {
			t.Fatalf("SFZ region %v: %s is %q, not a number", op, k, op[k])
		}
		return v
	}
	// The ranges this patch must get (keys [60, 68], velocities [64, 127]):
	// keys between roots are split half and half with the odd middle key,
	// 64, going to the upper root; each layer reaches up to its own velocity
	// and the top layer to 127.
	wantKeys := map[int][2]int{60: {60, 63}, 68: {64, 68}}
	wantVels := map[int][2]int{64: {1, 64}, 127: {65, 127}}
	seen := map[string]bool{}
	for _, n := range plan.Notes {
		i := slices.IndexFunc(regions, func(op map[string]string) bool { return op["sample"] == n.File })
		if i < 0 {
			t.Errorf("SFZ has no region for %s", n.File)
			continue
		}
		if seen[n.File] {
			t.Errorf("SFZ maps %s twice", n.File)
		}
		seen[n.File] = true
		op := regions[i]
		got := [5]int{num(op, "pitch_keycenter"), num(op, "lokey"), num(op, "hikey"), num(op, "lovel"), num(op, "hivel")}
		if want := [5]int{n.Key, n.KeyLow, n.KeyHigh, n.VelLow, n.VelHigh}; got != want {
			t.Errorf("%s: SFZ pitch_keycenter, lokey, hikey, lovel, hivel = %v, the plan says %v", n.File, got, want)
		}
		if k, v := wantKeys[n.Key], wantVels[n.Velocity]; [4]int{got[1], got[2], got[3], got[4]} != [4]int{k[0], k[1], v[0], v[1]} {
			t.Errorf("%s: key range %d–%d, velocities %d–%d; want %d–%d, %d–%d", n.File, got[1], got[2], got[3], got[4], k[0], k[1], v[0], v[1])
		}
	}
	for key := 60; key <= 68; key++ {
		for vel := 1; vel <= 127; vel++ {
			hits := 0
			for _, op := range regions {
				if num(op, "lokey") <= key && key <= num(op, "hikey") && num(op, "lovel") <= vel && vel <= num(op, "hivel") {
					hits++
				}
			}
			if hits != 1 {
				t.Fatalf("key %d velocity %d reaches %d regions, want exactly 1", key, vel, hits)
			}
		}
	}
}

// TestVerifyFindsCorruption flips one byte of one file's samples: Verify
// must report that file and no other.
func TestVerifyFindsCorruption(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "set")
	plan := newPlan(t, patchSource(24, 1, ""), dir)
	build(t, plan, 1)
	victim := plan.Notes[2].File
	path := filepath.Join(dir, victim)
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	data[len(data)/2] ^= 0x01 // inside the data chunk: 6615·3 sample bytes of ~19.9 kB
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
	problems, err := sampleset.Verify(dir)
	if err != nil {
		t.Fatalf("Verify: %v", err)
	}
	if len(problems) == 0 {
		t.Fatalf("Verify finds nothing wrong after %s was corrupted", victim)
	}
	for _, p := range problems {
		if !strings.HasPrefix(p, victim+":") {
			t.Errorf("Verify reports %q, which is not about %s", p, victim)
		}
	}
}

// noiseSource is a small stereo set with round robins whose notes hold
// noise bands beside their partials, looped by crossfade.
const noiseSource = `name: breath
sample_rate: 22050
channels: 2
keys: [55, 67]
velocities: [80, 127]
round_robin: 2
hold: 0.8
tail: 0.2
loop: {length: 0.3, crossfade: 0.03}
partials:
  - ratios: [1, 2.76]
    amplitude: "0.2 * vel"
    envelope: {attack: 0.01, decay: 0.05, sustain: 0.7, release: 0.08}
  - noise: {low: 1.5, high: 6, slope: -3, width: 0.7}
    amplitude: -18 dB
    pan: 0.3
    envelope: {attack: 0.04, decay: 0.1, sustain: 0.5, release: 0.1}
  - noise: {low: 2000 Hz, high: 9000 Hz}
    amplitude: -30 dB
`

// TestBuildJobsBitIdentical: the number of jobs changes nothing in the
// output, byte for byte, for a set of partials and one with noise bands.
func TestBuildJobsBitIdentical(t *testing.T) {
	root := t.TempDir()
	for si, src := range []string{patchSource(24, 2, ""), noiseSource} {
		var first map[string]string
		for _, jobs := range []int{1, 2, 8} {
			dir := filepath.Join(root, strconv.Itoa(si), strconv.Itoa(jobs))
			build(t, newPlan(t, src, dir), jobs)
			set := snapshot(t, dir)
			if len(set) == 0 {
				t.Fatal("empty set")
			}
			if first == nil {
				first = set
				continue
			}
			if len(set) != len(first) {
				t.Fatalf("Jobs 1 wrote %d files, Jobs %d wrote %d", len(first), jobs, len(set))
			}
			for name, sum := range first {
				if set[name] != sum {
					t.Errorf("%s differs between Jobs 1 and Jobs %d", name, jobs)
				}
			}
		}
	}
}

// TestNoiseSetVerifies builds the noise set, levelled as a whole, and
// holds it to what a looped set must be: it verifies against its manifest
// and mapping, and every loop's seam steps no further than its inside does
// (seam_ratio ≤ 1), read again from the files with go-audio/wav.
func TestNoiseSetVerifies(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "set")
	build(t, newPlan(t, noiseSource, dir), 2)
	problems, err := sampleset.Verify(dir)
	if err != nil || len(problems) > 0 {
		t.Fatalf("Verify: %v %v", err, problems)
	}
	data, err := os.ReadFile(filepath.Join(dir, "manifest.json"))
	if err != nil {
		t.Fatal(err)
	}
	var m struct {
		Files []struct {
			Path   string `json:"path"`
			Frames int    `json:"frames"`
			Loop   *struct {
				Start     int     `json:"start"`
				End       int     `json:"end"`
				SeamRatio float64 `json:"seam_ratio"`
			} `json:"loop"`
		} `json:"files"`
	}
	if err := json.Unmarshal(data, &m); err != nil {
		t.Fatal(err)
	}
	for _, f := range m.Files {
		if f.Loop == nil || f.Loop.SeamRatio > 1 {
			t.Errorf("%s: loop %+v; want one whose seam ratio is at most 1", f.Path, f.Loop)
			continue
		}
		wav, err := os.ReadFile(filepath.Join(dir, f.Path))
		if err != nil {
			t.Fatal(err)
		}
		x := decode(t, wav, 2*f.Frames).samples
		if seam, inside := synth.SeamStep(x, 2, synth.Loop{Start: f.Loop.Start, End: f.Loop.End}); seam > inside {
			t.Errorf("%s: read back, the seam steps %.4g, the loop's inside at most %.4g", f.Path, seam, inside)
		}
	}
}

// TestBuildEveryKernelBitIdentical: every set of kernels this processor
// runs writes the same files, byte for byte, for a stereo, dithered set
// with moving partials and a noise band, levelled by true peak and by loudness, so the
// meters' kernels decide the gains too.
func TestBuildEveryKernelBitIdentical(t *testing.T) {
	root := t.TempDir()
	for _, measure := range []string{"{true_peak: -1 dBTP}", "{loudness: -20 LUFS}"} {
		src := `name: kernels
sample_rate: 44100
channels: 2
keys: [40, 76]
velocities: [90]
hold: 0.4
tail: 0.2
normalize: ` + measure + `
partials:
  - harmonics: 24
    amplitude: "1/n"
    pan: {rule: alternate, width: 0.6}
    envelope: {attack: 0.01, decay: 0.1, sustain: 0.6, release: 0.15}
  - ratios: [2.76, 5.4]
    vibrato: {rate: 5, depth: 30}
    envelope: {attack: 0.05, decay: 0.2, sustain: 0.5, release: 0.1}
  - noise: {low: 1, high: 8, slope: -3, width: 0.6}
    amplitude: -20 dB
    pan: -0.4
`
		var first map[string]string
		for _, isa := range kernel.Supported() {
			previous := kernel.Use(isa)
			dir := filepath.Join(root, isa.String()+strconv.Itoa(len(measure)))
			build(t, newPlan(t, src, dir), 2)
			kernel.Use(previous)
			set := snapshot(t, dir)
			if first == nil {
				first = set
				continue
			}
			for name, sum := range first {
				if set[name] != sum {
					t.Errorf("normalize %s: %s differs between the plain and %s kernels", measure, name, isa)
				}
			}
		}
	}
}

// TestFailedBuildKeepsPreviousSet: a build that fails leaves the previous
// set exactly as it was and no staging folder behind.
func TestFailedBuildKeepsPreviousSet(t *testing.T) {
	cases := []struct {
		name   string
		cancel func(opts *sampleset.Options) context.Context
	}{
		{"cancelled-before", func(*sampleset.Options) context.Context {
			ctx, cancel := context.WithCancel(context.Background())
			cancel()
			return ctx
		}},
		{"cancelled-after-first-file", func(opts *sampleset.Options) context.Context {
			ctx, cancel := context.WithCancel(context.Background())
			opts.Progress = func(done, total int, file string) {
				if done == 1 {
					cancel()
				}
			}
			return ctx
		}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			parent := t.TempDir()
			dir := filepath.Join(parent, "set")
			build(t, newPlan(t, patchSource(16, 1, ""), dir), 2)
			before := snapshot(t, dir)

			// A different set, so that a swap would show.
			plan := newPlan(t, patchSource(24, 2, "normalize: off"), dir)
			opts := sampleset.Options{Jobs: 1, Version: "test"}
			ctx := c.cancel(&opts)
			res, err := sampleset.Build(ctx, plan, opts)
			if !errors.Is(err, context.Canceled) {
				t.Fatalf("Build with a cancelled context returned (%v, %v), want context.Canceled", res, err)
			}
			after := snapshot(t, dir)
			if len(after) != len(before) {
				t.Errorf("the folder held %d files before the failed build and %d after", len(before), len(after))
			}
			for name, sum := range before {
				if after[name] != sum {
					t.Errorf("%s changed in the failed build", name)
				}
			}
			noStaging(t, parent)
		})
	}
}

// TestBuildRefusesForeignFolder: a non-empty folder without manifest.json is
// not a set sinter wrote, so Build must not replace it.
func TestBuildRefusesForeignFolder(t *testing.T) {
	parent := t.TempDir()
	dir := filepath.Join(parent, "set")
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	keep := filepath.Join(dir, "notes.txt")
	if err := os.WriteFile(keep, []byte("my own file\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	before := snapshot(t, dir)
	_, err := sampleset.Build(context.Background(), newPlan(t, patchSource(16, 1, ""), dir), sampleset.Options{Jobs: 1})
	if err == nil {
		t.Fatal("Build replaced a non-empty folder that has no manifest.json")
	}
	after := snapshot(t, dir)
	if len(after) != 1 || after["notes.txt"] != before["notes.txt"] {
		t.Errorf("the folder changed: before %v, after %v", before, after)
	}
	noStaging(t, parent)
}

// TestManifestListsIncludes: the manifest names every file the patch
// included, with its SHA-256 (FIPS 180-4, crypto/sha256).
func TestManifestListsIncludes(t *testing.T) {
	dir := t.TempDir()
	shared := "partials:\n  - {harmonics: 3, amplitude: \"0.3/n\"}\n"
	if err := os.WriteFile(filepath.Join(dir, "strings.yaml"), []byte(shared), 0o644); err != nil {
		t.Fatal(err)
	}
	main := filepath.Join(dir, "p.yaml")
	if err := os.WriteFile(main, []byte("name: inc\nsample_rate: 8000\nhold: 0.1\ntail: 0.05\npartials:\n  - include: strings.yaml\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	p, err := patch.Load(main)
	if err != nil {
		t.Fatal(err)
	}
	plan, err := p.Expand(patch.ExpandOptions{})
	if err != nil {
		t.Fatal(err)
	}
	plan.OutputDir = filepath.Join(dir, "set")
	build(t, plan, 1)
	data, err := os.ReadFile(filepath.Join(dir, "set", "manifest.json"))
	if err != nil {
		t.Fatal(err)
	}
	var m struct {
		Patch struct {
			Includes []struct {
				Path   string `json:"path"`
				SHA256 string `json:"sha256"`
			} `json:"includes"`
		} `json:"patch"`
	}
	if err := json.Unmarshal(data, &m); err != nil {
		t.Fatal(err)
	}
	sum := sha256.Sum256([]byte(shared))
	inc := m.Patch.Includes
	if len(inc) != 1 || inc[0].Path != filepath.ToSlash(filepath.Join(dir, "strings.yaml")) || inc[0].SHA256 != hex.EncodeToString(sum[:]) {
		t.Errorf("manifest includes %+v; want strings.yaml with sha256 %x", inc, sum)
	}
}

// TestBuildRefusesBeyondLimits: a plan past a limit fails before anything
// is written, with an error naming the limit.
func TestBuildRefusesBeyondLimits(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "set")
	plan := newPlan(t, patchSource(24, 1, ""), dir)
	est := sampleset.EstimatePlan(plan)
	if est.Files != 4 || est.PartialSamples != 4*8*frames {
		t.Fatalf("estimate %+v; want 4 files of 8 partials × %d frames", est, frames)
	}
	for _, limits := range []sampleset.Limits{{Files: 3}, {Bytes: est.Bytes - 1}, {PartialSamples: est.PartialSamples - 1}} {
		_, err := sampleset.Build(context.Background(), plan, sampleset.Options{Jobs: 1, Limits: limits})
		var limit *sampleset.LimitError
		if !errors.As(err, &limit) || !strings.Contains(err.Error(), "more than the limit") {
			t.Errorf("limits %+v: error %v; want a LimitError", limits, err)
		}
		if entries, _ := os.ReadDir(filepath.Dir(dir)); len(entries) != 0 {
			t.Fatalf("limits %+v: %d entries written beside the set", limits, len(entries))
		}
	}
	if _, err := sampleset.Build(context.Background(), plan, sampleset.Options{Jobs: 1, Limits: sampleset.Limits{Files: 4, Bytes: est.Bytes, PartialSamples: est.PartialSamples}}); err != nil {
		t.Errorf("a plan exactly at its limits: %v", err)
	}
}

// TestIncrementalBuild counts renders: a second build of an unchanged
// patch renders nothing and leaves the set byte for byte as it was; a new
// key renders its notes and those of the neighbour whose key range it
// splits, keeps the rest and removes nothing else; a key taken away leaves
// with its files; Force renders everything. After each step the set is
// byte for byte what a fresh build into an empty folder makes.
func TestIncrementalBuild(t *testing.T) {
	root := t.TempDir()
	dir := filepath.Join(root, "set")
	src := func(keys, normalize string) string {
		return strings.Replace(patchSource(24, 1, "normalize: "+normalize), "keys: [60, 68]", "keys: "+keys, 1)
	}
	fresh := 0
	step := func(name, keys, normalize string, force bool, rendered, reused int) {
		t.Helper()
		res, err := sampleset.Build(context.Background(), newPlan(t, src(keys, normalize), dir), sampleset.Options{Jobs: 2, Version: "test", Force: force})
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if res.Rendered != rendered || res.Reused != reused {
			t.Errorf("%s: rendered %d and kept %d; want %d and %d", name, res.Rendered, res.Reused, rendered, reused)
		}
		fresh++
		other := filepath.Join(root, fmt.Sprintf("fresh%d", fresh))
		build(t, newPlan(t, src(keys, normalize), other), 1)
		a, b := snapshot(t, dir), snapshot(t, other)
		if len(a) != len(b) {
			t.Errorf("%s: %d files, a fresh build has %d", name, len(a), len(b))
		}
		for f, sum := range b {
			if a[f] != sum {
				t.Errorf("%s: %s differs from a fresh build's", name, f)
			}
		}
	}
	step("first", "[60, 68]", "{peak: -1 dBFS, scope: file}", false, 4, 0)
	step("unchanged", "[60, 68]", "{peak: -1 dBFS, scope: file}", false, 0, 4)
	step("key added", "[60, 68, 72]", "{peak: -1 dBFS, scope: file}", false, 4, 2)
	step("key removed", "[60, 68]", "{peak: -1 dBFS, scope: file}", false, 2, 2)
	step("forced", "[60, 68]", "{peak: -1 dBFS, scope: file}", true, 4, 0)
	// With one gain for the set, the loudest file keeps the gain it had on
	// its own, so it is kept; the others render. An unchanged set renders
	// nothing: the measurements come from the manifest.
	step("set gain", "[60, 68]", "{peak: -1 dBFS}", false, 3, 1)
	step("set gain unchanged", "[60, 68]", "{peak: -1 dBFS}", false, 0, 4)
	step("normalize off", "[60, 68]", "off", false, 4, 0)
	step("normalize off unchanged", "[60, 68]", "off", false, 0, 4)
}

// TestShardsMergeToASingleRender renders a set in 3 shards and merges
// them: the merged set is byte for byte a single render, with one gain for
// the set (each shard measures the whole set) and with one per key.
// Merging refuses a missing shard, a shard of another patch, and a set.
func TestShardsMergeToASingleRender(t *testing.T) {
	for _, normalize := range []string{"{peak: -1 dBFS}", "{peak: -1 dBFS, scope: key}"} {
		t.Run(normalize, func(t *testing.T) {
			root := t.TempDir()
			src := strings.Replace(patchSource(24, 1, "normalize: "+normalize+"\nround_robin: 2"), "keys: [60, 68]", "keys: [48, 52, 55, 60, 64, 67, 72]", 1)
			single := filepath.Join(root, "single")
			build(t, newPlan(t, src, single), 2)
			var shards []string
			for k := 1; k <= 3; k++ {
				dir := filepath.Join(root, fmt.Sprintf("shard%d", k))
				if _, err := sampleset.Build(context.Background(), newPlan(t, src, dir), sampleset.Options{Jobs: 2, Version: "test", Shard: sampleset.Shard{Index: k, Count: 3}}); err != nil {
					t.Fatal(err)
				}
				if problems, err := sampleset.Verify(dir); err != nil || len(problems) > 0 {
					t.Fatalf("shard %d does not verify: %v %v", k, err, problems)
				}
				shards = append(shards, dir)
			}
			merged := filepath.Join(root, "merged")
			if err := sampleset.Merge(context.Background(), newPlan(t, src, merged), merged, shards, sampleset.Options{Version: "test"}); err != nil {
				t.Fatal(err)
			}
			a, b := snapshot(t, single), snapshot(t, merged)
			if len(a) != len(b) || len(a) != 7*2*2+2 {
				t.Fatalf("single render %d files, merged %d; want 30", len(a), len(b))
			}
			for f, sum := range a {
				if b[f] != sum {
					t.Errorf("%s differs between the single render and the merged shards", f)
				}
			}
			plan := newPlan(t, src, filepath.Join(root, "again"))
			if err := sampleset.Merge(context.Background(), plan, plan.OutputDir, shards[:2], sampleset.Options{Version: "test"}); err == nil || !strings.Contains(err.Error(), "2 of the 3 shards") {
				t.Errorf("merging 2 of 3 shards: %v", err)
			}
			other := newPlan(t, strings.Replace(src, "0.2 * vel", "0.3 * vel", 1), plan.OutputDir)
			if err := sampleset.Merge(context.Background(), other, plan.OutputDir, shards, sampleset.Options{Version: "test"}); err == nil || !strings.Contains(err.Error(), "another patch") {
				t.Errorf("merging shards of another patch: %v", err)
			}
			if err := sampleset.Merge(context.Background(), plan, plan.OutputDir, []string{single}, sampleset.Options{Version: "test"}); err == nil || !strings.Contains(err.Error(), "not a shard") {
				t.Errorf("merging a whole set: %v", err)
			}
		})
	}
}

// TestVerifyChecksMapping edits a fresh set's mapping one way per case, as
// a person or a tool might, and expects Verify to report exactly what a
// sampler opening it would miss: regions whose sample is missing, outside
// the set's folder or not in the manifest, by their line in the mapping,
// and files no region plays. Sample paths are relative to the mapping's
// folder, with '/' or '\' between folders (sfzformat.com, "sample").
func TestVerifyChecksMapping(t *testing.T) {
	const first = "sample=tiny_060_C4_v064.wav"
	unplayed := "tiny_060_C4_v064.wav: no region of tiny.sfz plays it"
	cases := []struct {
		name  string
		edit  func(sfz, dir string) string
		wants []string
	}{
		{"unchanged", func(sfz, _ string) string { return sfz }, nil},
		{"folders written the Windows way", func(sfz, _ string) string {
			return strings.Replace(sfz, first, `sample=.\tiny_060_C4_v064.wav`, 1)
		}, nil},
		{"a sample that does not exist", func(sfz, _ string) string {
			return strings.Replace(sfz, first, "sample=tiny_060_C4_v065.wav", 1)
		}, []string{"tiny.sfz:3:1: <region> plays tiny_060_C4_v065.wav, which does not exist and which the manifest does not list", unplayed}},
		{"a sample outside the folder", func(sfz, _ string) string {
			return strings.Replace(sfz, first, "sample=../set/tiny_060_C4_v064.wav", 1)
		}, []string{"tiny.sfz:3:1: <region> plays ../set/tiny_060_C4_v064.wav, outside the set's folder", unplayed}},
		{"an absolute path", func(sfz, _ string) string {
			return strings.Replace(sfz, first, "sample=/tmp/tiny_060_C4_v064.wav", 1)
		}, []string{"tiny.sfz:3:1: <region> plays /tmp/tiny_060_C4_v064.wav, outside the set's folder", unplayed}},
		{"a drive", func(sfz, _ string) string {
			return strings.Replace(sfz, first, `sample=C:\set\tiny_060_C4_v064.wav`, 1)
		}, []string{`tiny.sfz:3:1: <region> plays C:\set\tiny_060_C4_v064.wav, outside the set's folder`, unplayed}},
		{"a sample the manifest does not list", func(sfz, dir string) string {
			os.Mkdir(filepath.Join(dir, "more"), 0o755)
			os.WriteFile(filepath.Join(dir, "more", "x.wav"), []byte("RIFF"), 0o644)
			return strings.Replace(sfz, first, "sample=more/x.wav", 1)
		}, []string{"tiny.sfz:3:1: <region> plays more/x.wav, which the manifest does not list", unplayed}},
		{"a region without a sample", func(sfz, _ string) string {
			return strings.Replace(sfz, first+" ", "", 1)
		}, []string{"tiny.sfz:3:1: <region> has no sample", unplayed}},
		{"a region taken out", func(sfz, _ string) string {
			lines := strings.Split(sfz, "\n")
			return strings.Join(append(lines[:5:5], lines[6:]...), "\n")
		}, []string{"tiny_068_Gs4_v127.wav: no region of tiny.sfz plays it"}},
		{"a mapping verify cannot read", func(sfz, _ string) string {
			return sfz + "#include \"more.sfz\"\n"
		}, []string{`tiny.sfz:7:1: the preprocessor line "#include \"more.sfz\"" cannot be checked; write the mapping out without it`}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := filepath.Join(t.TempDir(), "set")
			build(t, newPlan(t, patchSource(16, 1, ""), dir), 2)
			file := filepath.Join(dir, "tiny.sfz")
			sfz, err := os.ReadFile(file)
			if err != nil {
				t.Fatal(err)
			}
			if !strings.Contains(string(sfz), first+" ") || !strings.HasPrefix(strings.Split(string(sfz), "\n")[2], "<region> "+first) {
				t.Fatalf("the mapping is not laid out as the cases expect:\n%s", sfz)
			}
			if err := os.WriteFile(file, []byte(c.edit(string(sfz), dir)), 0o644); err != nil {
				t.Fatal(err)
			}
			problems, err := sampleset.Verify(dir)
			if err != nil {
				t.Fatal(err)
			}
			if !slices.Equal(problems, c.wants) {
				t.Errorf("Verify reports\n  %q\nwant\n  %q", problems, c.wants)
			}
		})
	}
}

// TestGainMatchesBuild: Gain, which renders and measures only a note's
// scope, gives each note the gain Build wrote into the manifest, for each
// measure and scope and when the ceiling lowers the gain.
func TestGainMatchesBuild(t *testing.T) {
	for _, extra := range []string{
		"normalize: off",
		"normalize: {peak: -1 dBFS}",
		"normalize: {peak: -1 dBFS, scope: key}",
		"normalize: {loudness: -14 LUFS, scope: file}",
		"normalize: {loudness: -6 LUFS, ceiling: -3 dBTP}", // the ceiling lowers the set's gain
	} {
		t.Run(extra, func(t *testing.T) {
			dir := filepath.Join(t.TempDir(), "set")
			plan := newPlan(t, patchSource(24, 1, extra), dir)
			res, err := sampleset.Build(context.Background(), plan, sampleset.Options{Jobs: 2, Version: "test"})
			if err != nil {
				t.Fatal(err)
			}
			if strings.Contains(extra, "ceiling") && len(res.Warnings) == 0 {
				t.Errorf("the ceiling does not lower the gain; the case tests nothing")
			}
			for i, f := range res.Manifest.Files {
				gain, err := sampleset.Gain(context.Background(), plan, i, 2)
				if err != nil {
					t.Fatal(err)
				}
				if got := 20 * math.Log10(gain); math.Abs(got-f.GainDB) > 1e-9 {
					t.Errorf("%s: Gain says %.12f dB, Build applied %.12f dB", f.Path, got, f.GainDB)
				}
			}
		})
	}
}
