package sampleset

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"testing"

	"sinter/patch"
)

// TestSpillMatchesRerender: a set levelled as a whole comes out byte for
// byte the same whether the second pass reads every note back from the
// spill files or renders every note again, and the Result counts the
// notes rendered twice.
func TestSpillMatchesRerender(t *testing.T) {
	src := []byte(`name: spill
sample_rate: 22050
keys: [48, 60, 72]
velocities: [90, 127]
round_robin: 2
hold: 0.2
tail: 0.1
normalize: {peak: -1 dBFS}
partials:
  - harmonics: 30
    amplitude: "vel / n"
    envelope: {attack: 0.01, decay: "0.05 + 0.1/n", sustain: 0.6, release: 0.08}
`)
	saved := spillPartials
	defer func() { spillPartials = saved }()
	root := t.TempDir()
	sets := map[string]map[string][]byte{}
	for _, c := range []struct {
		name       string
		threshold  int64
		rerendered int
	}{{"spill", 0, 0}, {"rerender", math.MaxInt64, 12}} {
		spillPartials = func() int64 { return c.threshold }
		p, err := patch.Parse("spill.yaml", src)
		if err != nil {
			t.Fatal(err)
		}
		plan, err := p.Expand(patch.ExpandOptions{})
		if err != nil {
			t.Fatal(err)
		}
		plan.OutputDir = filepath.Join(root, c.name)
		res, err := Build(context.Background(), plan, Options{Jobs: 2, Version: "test"})
		if err != nil {
			t.Fatal(err)
		}
		if res.Rerendered != c.rerendered {
			t.Errorf("%s: %d notes rendered twice, want %d", c.name, res.Rerendered, c.rerendered)
		}
		entries, err := os.ReadDir(plan.OutputDir)
		if err != nil {
			t.Fatal(err)
		}
		files := map[string][]byte{}
		for _, e := range entries {
			data, err := os.ReadFile(filepath.Join(plan.OutputDir, e.Name()))
			if err != nil {
				t.Fatal(err)
			}
			files[e.Name()] = data
		}
		sets[c.name] = files
	}
	spilled, rendered := sets["spill"], sets["rerender"]
	if len(spilled) != 12+2 || len(spilled) != len(rendered) {
		t.Fatalf("sets hold %d and %d files, want 14 each (12 WAV, mapping, manifest)", len(spilled), len(rendered))
	}
	for name, data := range spilled {
		if string(rendered[name]) != string(data) {
			t.Errorf("%s differs between the spilled and the re-rendered set", name)
		}
	}
	for name := range spilled {
		if filepath.Ext(name) == ".f64" {
			t.Errorf("spill file %s left in the set", name)
		}
	}
}
