package sampleset

import (
	"context"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"sinter/patch"
)

// TestMappingCoversKeyboard renders a looped set with layers and round
// robins and reads its SFZ file back: every region's sample exists, every
// key from the lowest root to the highest is covered exactly once for each
// velocity and round-robin position, and the loop points equal the smpl
// loops in the manifest. Opcode meanings are those of the SFZ format
// (sfzformat.com: lokey/hikey, lovel/hivel, seq_length/seq_position,
// loop_start/loop_end inclusive).
func TestMappingCoversKeyboard(t *testing.T) {
	src := `name: cover-test
sample_rate: 8000
bit_depth: 16
keys: [60, 63, 67]
velocities: [40, 100]
round_robin: 2
hold: 0.4
tail: 0.1
loop: {length: 0.2, crossfade: 0.01}
partials:
  - harmonics: 3
    envelope: {attack: 0.01, decay: 0.05, sustain: 0.5, release: 0.05}
`
	dir := t.TempDir()
	p, err := patch.Parse(filepath.Join(dir, "p.yaml"), []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	plan, err := p.Expand(patch.ExpandOptions{})
	if err != nil {
		t.Fatal(err)
	}
	res, err := Build(context.Background(), plan, Options{Jobs: 2})
	if err != nil {
		t.Fatal(err)
	}
	text, err := os.ReadFile(filepath.Join(res.Dir, "cover-test.sfz"))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(text), "<group> ampeg_release=0.05") {
		t.Errorf("the group does not carry the longest release:\n%s", text)
	}
	loops := map[string][2]int{}
	for _, f := range res.Manifest.Files {
		if f.Loop == nil {
			t.Fatalf("%s has no loop", f.Path)
		}
		loops[f.Path] = [2]int{f.Loop.Start, f.Loop.End}
	}
	covered := map[[3]int]int{} // key, velocity, seq position → regions
	regions := 0
	for _, line := range strings.Split(string(text), "\n") {
		if !strings.HasPrefix(line, "<region>") {
			continue
		}
		regions++
		op := map[string]string{}
		for _, field := range strings.Fields(line)[1:] {
			k, v, _ := strings.Cut(field, "=")
			op[k] = v
		}
		num := func(k string) int {
			v, err := strconv.Atoi(op[k])
			if err != nil {
				t.Fatalf("%s=%q in %q", k, op[k], line)
			}
			return v
		}
		if _, err := os.Stat(filepath.Join(res.Dir, op["sample"])); err != nil {
			t.Errorf("region names a missing sample: %v", err)
		}
		if op["loop_mode"] != "loop_sustain" || [2]int{num("loop_start"), num("loop_end")} != loops[op["sample"]] {
			t.Errorf("%s: loop %s %s..%s, manifest %v", op["sample"], op["loop_mode"], op["loop_start"], op["loop_end"], loops[op["sample"]])
		}
		if num("seq_length") != 2 {
			t.Errorf("%s: seq_length %d", op["sample"], num("seq_length"))
		}
		for k := num("lokey"); k <= num("hikey"); k++ {
			for v := num("lovel"); v <= num("hivel"); v++ {
				covered[[3]int{k, v, num("seq_position")}]++
			}
		}
	}
	if regions != 3*2*2 {
		t.Fatalf("%d regions, want 12", regions)
	}
	for k := 60; k <= 67; k++ {
		for v := 1; v <= 127; v++ {
			for seq := 1; seq <= 2; seq++ {
				if n := covered[[3]int{k, v, seq}]; n != 1 {
					t.Fatalf("key %d velocity %d position %d is covered %d times", k, v, seq, n)
				}
			}
		}
	}
}
