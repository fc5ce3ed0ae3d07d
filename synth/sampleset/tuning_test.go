package sampleset_test

import (
	"context"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"

	"sinter/patch"
	"sinter/synth/sampleset"
)

// c4 is MIDI 60 in 12-TET from A4 = 440 Hz (standards sheet §4:
// 261.625565 Hz).
var c4 = 440 * math.Exp2(-9.0/12)

// justScale is 5-limit just intonation over seven degrees; whiteKeys maps
// them to the white keys from middle C at c4, the black keys unmapped.
const (
	justScale = "! just.scl\n5-limit just major\n 7\n 9/8\n 5/4\n 4/3\n 3/2\n 5/3\n 15/8\n 2/1\n"
	whiteKeys = "! white.kbm\n12\n0\n127\n60\n60\n261.6255653005986\n7\n0\nx\n1\nx\n2\n3\nx\n4\nx\n5\nx\n6\n"
)

// justHz is the frequency of key k under justScale and whiteKeys, from the
// ratios themselves; 0 for a black key.
func justHz(k int) float64 {
	ratio := map[int]float64{0: 1, 2: 9.0 / 8, 4: 5.0 / 4, 5: 4.0 / 3, 7: 3.0 / 2, 9: 5.0 / 3, 11: 15.0 / 8}
	octave := int(math.Floor(float64(k-60) / 12))
	r, ok := ratio[k-60-12*octave]
	if !ok {
		return 0
	}
	return c4 * r * math.Exp2(float64(octave))
}

// equalCents writes a scale of n equal steps of period (its cents, and
// the text its last line holds), cents to 5 decimals as archives write
// them.
func equalCents(n int, cents float64, period string) string {
	s := fmt.Sprintf("%d equal steps\n%d\n", n, n)
	for i := 1; i < n; i++ {
		s += strconv.FormatFloat(cents*float64(i)/float64(n), 'f', 5, 64) + "\n"
	}
	return s + period + "\n"
}

// loadTuned writes files into a new folder and loads p.yaml there,
// rendering into set/.
func loadTuned(t *testing.T, files map[string]string) (*patch.Plan, string) {
	t.Helper()
	dir := t.TempDir()
	for name, text := range files {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return loadIn(t, dir, "set"), dir
}

// loadIn loads dir/p.yaml, rendering into dir/out.
func loadIn(t *testing.T, dir, out string) *patch.Plan {
	t.Helper()
	p, err := patch.Load(filepath.Join(dir, "p.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	plan, err := p.Expand(patch.ExpandOptions{})
	if err != nil {
		t.Fatal(err)
	}
	plan.OutputDir = filepath.Join(dir, out)
	return plan
}

// sfzRegion is one <region> line of a mapping, read field by field as
// TestMappingCoversKeyboard reads them (sinter's sample names hold no
// spaces), apart from the package's own reader.
type sfzRegion map[string]string

func (r sfzRegion) num(t *testing.T, k string, def int) int {
	t.Helper()
	v, ok := r[k]
	if !ok {
		return def
	}
	n, err := strconv.Atoi(v)
	if err != nil {
		// Many players read tune and transpose as whole numbers only.
		t.Fatalf("%s=%q is not a whole number", k, v)
	}
	return n
}

func readRegions(t *testing.T, dir, name string) (group sfzRegion, regions []sfzRegion) {
	t.Helper()
	text, err := os.ReadFile(filepath.Join(dir, name+".sfz"))
	if err != nil {
		t.Fatal(err)
	}
	for _, line := range strings.Split(string(text), "\n") {
		fields := strings.Fields(line)
		if len(fields) == 0 || !strings.HasPrefix(fields[0], "<") {
			continue
		}
		op := sfzRegion{}
		for _, f := range fields[1:] {
			k, v, _ := strings.Cut(f, "=")
			op[k] = v
		}
		if fields[0] == "<group>" {
			group = op
		} else {
			regions = append(regions, op)
		}
	}
	return group, regions
}

// measuredHz is the frequency of a sine from its rising zero crossings
// between from and to (in samples), each placed by linear interpolation.
func measuredHz(samples []float64, rate float64, from, to int) float64 {
	var first, last float64
	count := 0
	for i := from; i+1 < to; i++ {
		if samples[i] < 0 && samples[i+1] >= 0 {
			at := float64(i) + samples[i]/(samples[i]-samples[i+1])
			if count == 0 {
				first = at
			}
			last = at
			count++
		}
	}
	return float64(count-1) * rate / (last - first)
}

// TestTunedMappingPlaysTheScale renders sets tuned by scale files and
// reads back what a sampler plays: each root file sounds at the scale's
// frequency within 0.01 cent (measured from its zero crossings), and the
// mapping plays every mapped key from the lowest root to the highest at
// the scale's frequency within 0.5 cent — SFZ's pitch: the sample
// repitched from pitch_keycenter by 100 cents a key, plus transpose
// semitones and tune cents (sfzformat.com) — once for each layer and
// round robin, and no unmapped key at all. The expected frequencies come
// from the scales' definitions: 5-limit ratios on the white keys, 13 equal
// steps of 3/1 (Bohlen–Pierce), 19 equal steps of 2/1.
func TestTunedMappingPlaysTheScale(t *testing.T) {
	cases := []struct {
		name, tuning, keys string
		files              map[string]string
		hz                 func(k int) float64
	}{
		{"just on the white keys", "{scale: just.scl, keymap: white.kbm}", "[C3, G3, D4, A4]",
			map[string]string{"just.scl": justScale, "white.kbm": whiteKeys}, justHz},
		{"Bohlen-Pierce", "{scale: bp.scl}", "{from: 52, to: 72, step: 4}",
			map[string]string{"bp.scl": equalCents(13, 1200*math.Log2(3), "3/1")},
			func(k int) float64 { return c4 * math.Pow(3, float64(k-60)/13) }},
		{"19 equal", "{scale: 19.scl}", "[55, 60, 66]",
			map[string]string{"19.scl": equalCents(19, 1200, "2/1")},
			func(k int) float64 { return c4 * math.Exp2(float64(k-60)/19) }},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			c.files["p.yaml"] = "name: tuned\nsample_rate: 48000\nbit_depth: 32\ndither: off\nnormalize: off\nhold: 0.3\ntail: 0.02\n" +
				"tuning: " + c.tuning + "\nkeys: " + c.keys + "\nvelocities: [60, 120]\nround_robin: 2\n" +
				"partials: [{ratio: 1, amplitude: 0.5, envelope: {attack: 0.01, release: 0.01}}]\n"
			plan, _ := loadTuned(t, c.files)
			build(t, plan, 2)
			dir := plan.OutputDir
			if problems, err := sampleset.Verify(dir); err != nil || len(problems) > 0 {
				t.Fatalf("verify: %v %q", err, problems)
			}
			roots := map[int]bool{}
			for _, n := range plan.Notes {
				roots[n.Key] = true
				if n.Velocity != 60 || n.Variation != 0 {
					continue
				}
				data, err := os.ReadFile(filepath.Join(dir, n.File))
				if err != nil {
					t.Fatal(err)
				}
				d := decode(t, data, n.Frames)
				got := measuredHz(d.samples, 48000, 2400, n.NoteOff)
				if off := 1200 * math.Log2(got/c.hz(n.Key)); math.Abs(off) > 0.01 {
					t.Errorf("root %d sounds at %.6f Hz, %.5f cents from the scale's %.6f", n.Key, got, off, c.hz(n.Key))
				}
			}
			_, regions := readRegions(t, dir, "tuned")
			covered := map[[3]int]int{}
			for _, r := range regions {
				root := -1
				if m := regexp.MustCompile(`_(\d{3})_`).FindStringSubmatch(r["sample"]); m != nil {
					root, _ = strconv.Atoi(m[1])
				}
				if !roots[root] {
					t.Fatalf("region plays %s, no root's file", r["sample"])
				}
				for k := r.num(t, "lokey", 0); k <= r.num(t, "hikey", 127); k++ {
					want := c.hz(k)
					if want == 0 {
						t.Errorf("%s is played at key %d, which the scale leaves unmapped", r["sample"], k)
						continue
					}
					cents := float64((k-r.num(t, "pitch_keycenter", 60))*100 + 100*r.num(t, "transpose", 0) + r.num(t, "tune", 0))
					if off := 1200 * math.Log2(c.hz(root)*math.Exp2(cents/1200)/want); math.Abs(off) > 0.5 {
						t.Errorf("key %d plays %s %.3f cents from the scale", k, r["sample"], off)
					}
					for v := r.num(t, "lovel", 0); v <= r.num(t, "hivel", 127); v++ {
						covered[[3]int{k, v, r.num(t, "seq_position", 1)}]++
					}
				}
			}
			keys := slices.Sorted(func(yield func(int) bool) {
				for k := range roots {
					if !yield(k) {
						return
					}
				}
			})
			for k := keys[0]; k <= keys[len(keys)-1]; k++ {
				want := 1
				if c.hz(k) == 0 {
					want = 0
				}
				for v := 1; v <= 127; v++ {
					for seq := 1; seq <= 2; seq++ {
						if n := covered[[3]int{k, v, seq}]; n != want {
							t.Fatalf("key %d velocity %d position %d is played %d times, want %d", k, v, seq, n, want)
						}
					}
				}
			}
		})
	}
}

// twelve is 12-TET as a scale file: 12 steps of 100 cents.
const twelve = "twelve\n12\n100.0\n200.0\n300.0\n400.0\n500.0\n600.0\n700.0\n800.0\n900.0\n1000.0\n1100.0\n2/1\n"

// TestTwelveToneScaleBitIdentical: a 12-TET scale renders a set whose
// files — every WAV file and the mapping — are byte for byte those of the
// same patch without it; a keymap putting A4 at 432 Hz gives those of
// a4: 432. Only the manifest differs, recording the scale.
func TestTwelveToneScaleBitIdentical(t *testing.T) {
	body := "sample_rate: 22050\nbit_depth: 24\nkeys: [55, 60, 67]\nvelocities: [50, 110]\nlayer_crossfade: 10\nround_robin: 2\nhold: 0.3\ntail: 0.1\nloop: auto\n" +
		"partials:\n  - {harmonics: 6, amplitude: \"0.3 * vel / n\", envelope: {attack: 0.01, decay: 0.05, sustain: 0.6, release: 0.05}}\n"
	kbm := "12\n0\n127\n60\n69\n432.0\n12\n0\n1\n2\n3\n4\n5\n6\n7\n8\n9\n10\n11\n"
	for _, c := range []struct{ name, scaled, plain string }{
		{"no keymap", "tuning: {scale: 12.scl}\n", ""},
		{"A4 at 432", "tuning: {scale: 12.scl, keymap: 432.kbm}\n", "tuning: {a4: 432}\n"},
	} {
		t.Run(c.name, func(t *testing.T) {
			scaled, _ := loadTuned(t, map[string]string{"p.yaml": "name: s\n" + c.scaled + body, "12.scl": twelve, "432.kbm": kbm})
			plain, _ := loadTuned(t, map[string]string{"p.yaml": "name: s\n" + c.plain + body})
			build(t, scaled, 2)
			build(t, plain, 2)
			a, b := snapshot(t, scaled.OutputDir), snapshot(t, plain.OutputDir)
			if len(a) != len(b) || len(a) != 3*2*2+2 {
				t.Fatalf("%d and %d files", len(a), len(b))
			}
			for name, sum := range b {
				if name != "manifest.json" && a[name] != sum {
					t.Errorf("%s differs from the set without a scale", name)
				}
			}
			m, err := os.ReadFile(filepath.Join(scaled.OutputDir, "manifest.json"))
			if err != nil {
				t.Fatal(err)
			}
			if !strings.Contains(string(m), `"tuning"`) || !strings.Contains(string(m), sha([]byte(twelve))) {
				t.Errorf("the manifest does not record the scale and its SHA-256:\n%s", m)
			}
		})
	}
}

// crossfadeGain is a region's gain at velocity v by SFZ's xf_velcurve=power
// (sfzformat.com, xf_velcurve: an equal-power crossfade; the curve, from
// memory of that page and the format's open players: at position x of v
// in the fade's range, √x for xfin and √(1 − x) for xfout, 0 below an
// xfin range and above an xfout range).
func crossfadeGain(t *testing.T, r sfzRegion, v int) float64 {
	g := 1.0
	if _, ok := r["xfin_lovel"]; ok {
		lo, hi := r.num(t, "xfin_lovel", 0), r.num(t, "xfin_hivel", 0)
		switch {
		case v <= lo:
			g = 0
		case v < hi:
			g *= math.Sqrt(float64(v-lo) / float64(hi-lo))
		}
	}
	if _, ok := r["xfout_lovel"]; ok {
		lo, hi := r.num(t, "xfout_lovel", 0), r.num(t, "xfout_hivel", 0)
		switch {
		case v >= hi:
			g = 0
		case v > lo:
			g *= math.Sqrt(1 - float64(v-lo)/float64(hi-lo))
		}
	}
	return g
}

// TestCrossfadeMapping renders a set whose layers cross-fade and reads
// the mapping as a sampler would: every key, velocity 1..127 and round
// robin sounds at constant power (the sum of the squared gains of the
// regions that play it within 0.1 dB of 1) under the power curve the
// group names, and verify passes. Edited fades and a missing curve are
// reported, against the manifest.
func TestCrossfadeMapping(t *testing.T) {
	src := strings.Replace(patchSource(16, 1, "layer_crossfade: 16\nround_robin: 2"), "velocities: [64, 127]", "velocities: [40, 90, 127]", 1)
	dir := filepath.Join(t.TempDir(), "set")
	build(t, newPlan(t, src, dir), 2)
	group, regions := readRegions(t, dir, "tiny")
	if group["xf_velcurve"] != "power" {
		t.Fatalf("the group does not name the power curve: %v", group)
	}
	fading := 0
	for k := 60; k <= 68; k++ {
		for v := 1; v <= 127; v++ {
			for seq := 1; seq <= 2; seq++ {
				power, sounding := 0.0, 0
				for _, r := range regions {
					if k < r.num(t, "lokey", 0) || k > r.num(t, "hikey", 127) || v < r.num(t, "lovel", 0) || v > r.num(t, "hivel", 127) || r.num(t, "seq_position", 1) != seq {
						continue
					}
					g := crossfadeGain(t, r, v)
					power += g * g
					sounding++
				}
				if db := 10 * math.Log10(power); math.Abs(db) > 0.1 {
					t.Fatalf("key %d velocity %d position %d sounds at %.3f dB", k, v, seq, db)
				}
				if sounding > 1 {
					fading++
				}
			}
		}
	}
	// 2 overlaps of 16 velocities, on 9 keys, in 2 positions.
	if fading != 2*16*9*2 {
		t.Errorf("%d key, velocity and position triples sound two layers, want %d", fading, 2*16*9*2)
	}
	if problems, err := sampleset.Verify(dir); err != nil || len(problems) > 0 {
		t.Fatalf("verify: %v %q", err, problems)
	}
	sfz := filepath.Join(dir, "tiny.sfz")
	text, err := os.ReadFile(sfz)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct{ name, from, to, want string }{
		{"a fade moved", "xfin_lovel=32 xfin_hivel=49", "xfin_lovel=32 xfin_hivel=50", "fades in over velocities 32–50, the manifest says 32–49"},
		{"a fade taken out", " xfout_lovel=82 xfout_hivel=99", "", "with no xfout_lovel/xfout_hivel; the manifest says it fades out over velocities 82–99"},
		{"the curve taken out", " xf_velcurve=power", "", "cross-fades with xf_velcurve=unset (gain); the fades are planned for power"},
		{"a layer widened", "lovel=33 hivel=98", "lovel=30 hivel=98", "at velocities 30–98, the manifest says 33–98"},
	} {
		edited := strings.Replace(string(text), c.from, c.to, 1)
		if edited == string(text) {
			t.Fatalf("%s: %q is not in the mapping:\n%s", c.name, c.from, text)
		}
		if err := os.WriteFile(sfz, []byte(edited), 0o644); err != nil {
			t.Fatal(err)
		}
		problems, err := sampleset.Verify(dir)
		if err != nil || len(problems) == 0 || !strings.Contains(strings.Join(problems, "\n"), c.want) {
			t.Errorf("%s: verify reports %q, want …%s…", c.name, problems, c.want)
		}
	}
}

// TestEditedScaleRendersWhatChanged renders a tuned set into the same
// folder after each edit of its scale file: an edit that moves only a key
// between roots renders nothing but rewrites the mapping; one that moves
// a root renders that root's files and keeps the others; every time the
// manifest records the scale's new SHA-256 and the set equals a fresh
// render.
func TestEditedScaleRendersWhatChanged(t *testing.T) {
	root := t.TempDir()
	src := "name: edit\nsample_rate: 8000\nhold: 0.2\ntail: 0.05\nvelocities: [60, 120]\nnormalize: {peak: -1 dBFS, scope: file}\n" +
		"tuning: {scale: just.scl, keymap: white.kbm}\nkeys: [C4, E4, G4]\npartials: [{harmonics: 3, amplitude: \"0.3/n\"}]\n"
	dir := filepath.Join(root, "set")
	fresh := 0
	step := func(name, scale string, rendered, kept int) string {
		t.Helper()
		files := map[string]string{"p.yaml": src, "just.scl": scale, "white.kbm": whiteKeys}
		plan, _ := loadTuned(t, files)
		plan.OutputDir = dir
		res, err := sampleset.Build(context.Background(), plan, sampleset.Options{Jobs: 2, Version: "test"})
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if res.Rendered != rendered || res.Reused != kept {
			t.Errorf("%s: rendered %d and kept %d; want %d and %d", name, res.Rendered, res.Reused, rendered, kept)
		}
		if got := res.Manifest.Patch.Tuning.Scale.SHA256; got != sha([]byte(scale)) {
			t.Errorf("%s: the manifest records the scale as %s", name, got)
		}
		fresh++
		other, _ := loadTuned(t, files)
		other.OutputDir = filepath.Join(root, fmt.Sprintf("fresh%d", fresh))
		build(t, other, 1)
		a, b := snapshot(t, dir), snapshot(t, other.OutputDir)
		for f, sum := range b {
			if a[f] != sum && f != "manifest.json" {
				t.Errorf("%s: %s differs from a fresh build's", name, f)
			}
		}
		return a["edit.sfz"]
	}
	first := step("first", justScale, 6, 0)
	// D4 (9/8) lies between the roots C4 and E4: only the mapping changes.
	second := step("key between roots", strings.Replace(justScale, "9/8", "10/9", 1), 0, 6)
	if second == first {
		t.Errorf("the mapping did not change with D4's pitch")
	}
	// E4 (5/4) is a root: its two layers render again.
	step("root", strings.Replace(strings.Replace(justScale, "9/8", "10/9", 1), "5/4", "81/64", 1), 2, 4)
}

// TestVerifyChecksTuning edits a tuned set's mapping one way per case:
// verify reports a key played off the scale, a region reaching an
// unmapped key and a mapped key no region plays, against the frequencies
// the manifest records.
func TestVerifyChecksTuning(t *testing.T) {
	files := map[string]string{"just.scl": justScale, "white.kbm": whiteKeys,
		"p.yaml": "name: v\nsample_rate: 8000\nhold: 0.1\ntail: 0.05\ntuning: {scale: just.scl, keymap: white.kbm}\nkeys: [C4, G4]\npartials: [{ratio: 1}]\n"}
	cases := []struct{ name, from, to, want string }{
		// D4 is 9/8 above C4, 203.91 cents: 12-TET's 200 and tune=4; tune=6
		// plays it 2.09 cents sharp.
		{"tune changed", "lokey=62 hikey=62 tune=4", "lokey=62 hikey=62 tune=6", "plays key 62 at 294.6843 Hz, +2.090 cents from the scale's 294.3288 Hz"},
		{"reaching an unmapped key", "lokey=62 hikey=62", "lokey=61 hikey=62", "plays key 61, which the scale leaves unmapped"},
		{"a key left out", "lokey=65 hikey=65", "lokey=64 hikey=64", "no region of v.sfz plays it at key 65"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			plan, _ := loadTuned(t, files)
			build(t, plan, 1)
			sfz := filepath.Join(plan.OutputDir, "v.sfz")
			text, err := os.ReadFile(sfz)
			if err != nil {
				t.Fatal(err)
			}
			if problems, err := sampleset.Verify(plan.OutputDir); err != nil || len(problems) > 0 {
				t.Fatalf("verify: %v %q", err, problems)
			}
			edited := strings.Replace(string(text), c.from, c.to, 1)
			if edited == string(text) {
				t.Fatalf("%q is not in the mapping:\n%s", c.from, text)
			}
			if err := os.WriteFile(sfz, []byte(edited), 0o644); err != nil {
				t.Fatal(err)
			}
			problems, err := sampleset.Verify(plan.OutputDir)
			if err != nil || !strings.Contains(strings.Join(problems, "\n"), c.want) {
				t.Errorf("verify reports %q, want …%s…", problems, c.want)
			}
		})
	}
}

// TestTunedShardsMerge: a tuned set rendered in two shards merges into
// the set a single render makes, byte for byte; shards rendered before
// the scale file was edited are refused.
func TestTunedShardsMerge(t *testing.T) {
	single, dir := loadTuned(t, map[string]string{"just.scl": justScale, "white.kbm": whiteKeys,
		"p.yaml": "name: m\nsample_rate: 8000\nhold: 0.1\ntail: 0.05\ntuning: {scale: just.scl, keymap: white.kbm}\nkeys: [C4, E4, G4, C5]\nvelocities: [60, 120]\nlayer_crossfade: 8\npartials: [{harmonics: 2}]\n"})
	build(t, single, 2)
	var shards []string
	for k := 1; k <= 2; k++ {
		plan := loadIn(t, dir, fmt.Sprintf("shard%d", k))
		if _, err := sampleset.Build(context.Background(), plan, sampleset.Options{Jobs: 2, Version: "test", Shard: sampleset.Shard{Index: k, Count: 2}}); err != nil {
			t.Fatal(err)
		}
		shards = append(shards, plan.OutputDir)
	}
	merged := loadIn(t, dir, "merged")
	if err := sampleset.Merge(context.Background(), merged, merged.OutputDir, shards, sampleset.Options{Version: "test"}); err != nil {
		t.Fatal(err)
	}
	a, b := snapshot(t, single.OutputDir), snapshot(t, merged.OutputDir)
	if len(a) != len(b) {
		t.Fatalf("%d files and %d", len(a), len(b))
	}
	for f, sum := range a {
		if b[f] != sum {
			t.Errorf("%s differs between the single render and the merged shards", f)
		}
	}
	if err := os.WriteFile(filepath.Join(dir, "just.scl"), []byte(strings.Replace(justScale, "5/4", "81/64", 1)), 0o644); err != nil {
		t.Fatal(err)
	}
	edited := loadIn(t, dir, "again")
	if err := sampleset.Merge(context.Background(), edited, edited.OutputDir, shards, sampleset.Options{Version: "test"}); err == nil || !strings.Contains(err.Error(), "other scale files") {
		t.Errorf("merging shards of the scale before its edit: %v", err)
	}
}
