package patch

import (
	"fmt"

	"gopkg.in/yaml.v3"
)

var groupKeys = []string{"harmonics", "ratio", "amplitude", "phase", "envelope"}

var envelopeKeys = []string{"attack", "decay", "sustain", "release"}

// defaultEnvelope is a short click-free attack into full sustain with a
// tenth of a second release.
func defaultEnvelope() EnvelopeSpec {
	return EnvelopeSpec{Attack: constValue(0.005), Decay: constValue(0), Sustain: constValue(1), Release: constValue(0.1)}
}

func (d *decoder) groups(n *yaml.Node, path string, defaults EnvelopeSpec) []Group {
	n = d.resolve(n)
	if n.Kind != yaml.SequenceNode {
		d.errorf(n, path, "expected a list of partial groups, found %s", describe(n))
		return nil
	}
	if len(n.Content) == 0 {
		d.errorf(n, path, "the partials list is empty; add a group such as {harmonics: 8}")
	}
	groups := make([]Group, 0, len(n.Content))
	for i, item := range n.Content {
		if d.overBudget() {
			return groups
		}
		item = d.resolve(item)
		sub := fmt.Sprintf("%s[%d]", path, i)
		g := Group{Line: item.Line, Column: item.Column, Amplitude: constValue(1), Phase: constValue(0), Envelope: defaults}
		kinds := 0
		d.fields(item, sub, groupKeys, func(key string, v *yaml.Node, path string) {
			switch key {
			case "harmonics":
				kinds++
				d.series(v, path, &g)
			case "ratio":
				kinds++
				g.Ratio, _ = d.ranged(v, path, 1e-6, 1e6, "")
			case "amplitude":
				g.Amplitude, _ = d.value(v, path, true)
			case "phase":
				g.Phase, _ = d.value(v, path, false)
			case "envelope":
				g.Envelope = d.envelope(v, path, defaults)
			}
		})
		if kinds != 1 && item.Kind == yaml.MappingNode {
			d.errorf(item, sub, "a group needs exactly one of harmonics (a series) or ratio (one partial)")
		}
		groups = append(groups, g)
	}
	return groups
}

// series reads harmonics: COUNT or {count, first, step}.
func (d *decoder) series(n *yaml.Node, path string, g *Group) {
	g.Series, g.First, g.Step = true, 1, 1
	if r := d.resolve(n); r.Kind == yaml.ScalarNode {
		g.Count, _ = d.integer(r, path, 1, MaxSeries)
		return
	}
	d.fields(n, path, []string{"count", "first", "step"}, func(key string, v *yaml.Node, path string) {
		switch key {
		case "count":
			g.Count, _ = d.integer(v, path, 1, MaxSeries)
		case "first":
			g.First, _ = d.integer(v, path, 1, 1_000_000)
		case "step":
			g.Step, _ = d.integer(v, path, 1, 1_000_000)
		}
	})
	if g.Count == 0 && !hasKey(d.resolve(n), "count") {
		d.errorf(d.resolve(n), path, "a harmonic series needs a count, such as {count: 30, first: 1, step: 2}")
	}
}

// envelope reads an ADSR mapping; keys it leaves out keep their defaults.
func (d *decoder) envelope(n *yaml.Node, path string, defaults EnvelopeSpec) EnvelopeSpec {
	env := defaults
	d.fields(n, path, envelopeKeys, func(key string, v *yaml.Node, path string) {
		switch key {
		case "attack":
			env.Attack, _ = d.value(v, path, false)
		case "decay":
			env.Decay, _ = d.value(v, path, false)
		case "sustain":
			env.Sustain, _ = d.value(v, path, true)
		case "release":
			env.Release, _ = d.value(v, path, false)
		}
	})
	return env
}
