package patch

import (
	"reflect"
	"strings"
	"testing"
)

// TestRoundRobinVariations checks round-robin variations share every
// partial's frequency and amplitude but not its phase, are named _rrK, and
// are the same on every expansion (the reproducibility the README promises).
func TestRoundRobinVariations(t *testing.T) {
	src := "name: rr\nkeys: [C4]\nround_robin: 3\nseed: 11\npartials:\n  - harmonics: 4\n"
	expand := func(src string) *Plan {
		p, err := Parse("rr.yaml", []byte(src))
		if err != nil {
			t.Fatal(err)
		}
		plan, err := p.Expand(ExpandOptions{})
		if err != nil {
			t.Fatal(err)
		}
		return plan
	}
	plan := expand(src)
	if len(plan.Notes) != 3 {
		t.Fatalf("%d notes, want 3", len(plan.Notes))
	}
	for k, n := range plan.Notes {
		if want := []string{"rr_060_C4_v100_rr1.wav", "rr_060_C4_v100_rr2.wav", "rr_060_C4_v100_rr3.wav"}[k]; n.File != want {
			t.Errorf("file %q, want %q", n.File, want)
		}
		if n.Variation != k || n.Variations != 3 {
			t.Errorf("variation %d of %d", n.Variation, n.Variations)
		}
	}
	a, b := plan.Notes[0], plan.Notes[1]
	if a.Seed == b.Seed {
		t.Error("two variations share a seed")
	}
	for i := range a.Partials {
		pa, pb := a.Partials[i], b.Partials[i]
		if pa.Hz != pb.Hz || pa.Amplitude != pb.Amplitude {
			t.Errorf("partial %d differs in frequency or amplitude between variations", i)
		}
		if pa.Phase == pb.Phase {
			t.Errorf("partial %d has the same phase in two variations", i)
		}
	}
	if again := expand(src); !reflect.DeepEqual(again.Notes, plan.Notes) {
		t.Error("the same patch expanded twice gives different variations")
	}
	if other := expand(strings.Replace(src, "seed: 11", "seed: 12", 1)); other.Notes[0].Partials[0].Phase == a.Partials[0].Phase {
		t.Error("a different seed gives the same phases")
	}
}
