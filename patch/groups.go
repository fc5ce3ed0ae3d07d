package patch

import (
	"fmt"
	"regexp"
	"slices"
	"strconv"
	"strings"

	"gopkg.in/yaml.v3"
)

var groupKeys = []string{"harmonics", "ratio", "ratios", "modes", "spectrum", "cluster", "noise",
	"count", "amplitude", "amplitudes", "phase", "envelope", "stiffness", "tilt", "detune", "unison", "pan",
	"pitch", "vibrato", "drift"}

// groupKinds are the keys of which a group has exactly one.
var groupKinds = []string{"harmonics", "ratio", "ratios", "modes", "spectrum", "cluster", "noise"}

// partialKinds are the group kinds that make partials; the keys that shape
// partials one by one apply to them alone, not to a noise band.
var partialKinds = []GroupKind{KindSeries, KindRatio, KindRatios, KindModes, KindSpectrum, KindCluster}

var envelopeKeys = []string{"attack", "decay", "sustain", "release", "curve", "points", "stretch"}

// Limits on groups.
const (
	MaxUnison   = 16
	maxSpread   = 1200 // cents
	maxListLen  = MaxSeries
	defaultSpec = 32 // partials of a spectrum group without a count
)

// GroupKind is what a group's partials are.
type GroupKind int

// The group kinds.
const (
	KindSeries   GroupKind = iota // harmonics: a series of harmonic numbers
	KindRatio                     // ratio: one partial
	KindRatios                    // ratios: a list of ratios
	KindModes                     // modes: a table of vibration modes
	KindSpectrum                  // spectrum: a waveform's Fourier series
	KindCluster                   // cluster: seeded random ratios in a range
	KindNoise                     // noise: a band of noise
)

// PhaseRule says how a group's phases are set.
type PhaseRule int

// The phase rules.
const (
	PhaseValue     PhaseRule = iota // the phase value, in degrees
	PhaseRandom                     // uniform, from the note's seed
	PhaseSchroeder                  // Schroeder's low-peak-factor phases
)

// PanRule says how a group's partials are placed in a stereo field.
type PanRule int

// The pan rules.
const (
	PanValue     PanRule = iota // the pan value, −1 (left) to 1 (right)
	PanAlternate                // −width, +width, −width, … in partial order
	PanRandom                   // uniform in ±width, from the patch seed
	PanRatio                    // from −width at the lowest ratio to +width at the highest, in log ratio
)

// Unison sets the copies of each partial: Voices copies detuned evenly
// across Spread cents, centred on the partial, and in stereo fanned across
// ±Width around its pan position.
type Unison struct {
	Voices int
	Spread float64 // cents between the outermost copies
	Width  float64 // 0..1
}

// Cluster sets a cluster group: Count partials at ratios drawn uniformly in
// log frequency between From and To.
type Cluster struct {
	Count    int
	From, To float64
}

// NoiseSpec sets a noise group: a band of noise from Low to High whose
// power spectral density is tilted by Slope dB per octave, and whose two
// channels in stereo are Width apart: 1 independent, 0 the same.
type NoiseSpec struct {
	// File, Line and Column are where the band was written: the patch or
	// a file it includes.
	File         string
	Line, Column int
	Low, High    Edge
	Slope        float64
	Width        float64
}

// Edge is one edge of a noise band: a ratio to the fundamental, or a
// frequency in hertz.
type Edge struct {
	Value float64
	Hz    bool // Value is a frequency in hertz rather than a ratio
}

// At returns the edge's frequency in Hz for a note whose fundamental is
// f0.
func (e Edge) At(f0 float64) float64 {
	if e.Hz {
		return e.Value
	}
	return e.Value * f0
}

// String writes the edge as a patch does: "1.5" or "800 Hz".
func (e Edge) String() string {
	if e.Hz {
		return fmt.Sprintf("%g Hz", e.Value)
	}
	return fmt.Sprintf("%g", e.Value)
}

// defaultEnvelope is a short click-free attack into full sustain with a
// tenth of a second release.
func defaultEnvelope() EnvelopeSpec {
	return EnvelopeSpec{Attack: constValue(0.005), Decay: constValue(0), Sustain: constValue(1), Release: constValue(0.1), Stretch: constValue(1)}
}

func (d *decoder) groups(n *yaml.Node, path string, defaults EnvelopeSpec) []Group {
	n = d.resolve(n)
	if n.Kind != yaml.SequenceNode {
		d.errorf(n, path, "expected a list of partial groups, found %s", describe(n))
		return nil
	}
	if len(n.Content) < partialsRule.MinItems {
		d.errorf(n, path, "the partials list is empty; add a group such as {harmonics: 8}")
	}
	groups := make([]Group, 0, len(n.Content))
	for i, item := range n.Content {
		if d.overBudget() {
			return groups
		}
		item, sub := d.resolve(item), fmt.Sprintf("%s[%d]", path, i)
		if target := d.includeTarget(item, sub); target != nil {
			groups = append(groups, d.include(target, joinPath(sub, "include"), defaults)...)
			continue
		}
		groups = append(groups, d.group(item, sub, defaults))
	}
	return groups
}

func (d *decoder) group(item *yaml.Node, path string, defaults EnvelopeSpec) Group {
	g := Group{Line: item.Line, Column: item.Column, Amplitude: constValue(1), Phase: constValue(0), Envelope: defaults,
		Stiffness: constValue(0), Tilt: constValue(0), Detune: constValue(0), Pan: constValue(0),
		Unison: Unison{Voices: 1, Width: 1}}
	var kinds []string
	nodes := map[string]*yaml.Node{}
	d.fields(item, path, groupKeys, func(key string, v *yaml.Node, path string) {
		nodes[key] = v
		switch key {
		case "harmonics":
			d.series(v, path, &g)
		case "ratio":
			g.Kind = KindRatio
			g.Ratio, _ = d.ranged(v, path, ratioRule)
		case "ratios":
			g.Kind = KindRatios
			for i, r := range d.list(v, path, ratiosRule) {
				x, _ := d.ranged(r, fmt.Sprintf("%s[%d]", path, i), ratiosItemRule)
				g.Ratios = append(g.Ratios, x)
			}
		case "modes":
			g.Kind = KindModes
			g.Table = d.word(v, path, modesRule)
		case "spectrum":
			g.Kind = KindSpectrum
			g.Spectrum = d.word(v, path, spectrumRule)
		case "cluster":
			g.Kind = KindCluster
			d.cluster(v, path, &g)
		case "noise":
			g.Kind = KindNoise
			d.noise(v, path, &g)
		case "count":
			g.Count, _ = d.integer(v, path, countRule)
		case "amplitude":
			g.Amplitude, _ = d.value(v, path, true)
		case "amplitudes":
			for i, a := range d.list(v, path, amplitudesRule) {
				x, _ := d.value(a, fmt.Sprintf("%s[%d]", path, i), true)
				g.Amplitudes = append(g.Amplitudes, x)
			}
		case "phase":
			g.PhaseRule, g.Phase = d.phase(v, path)
		case "envelope":
			g.Envelope = d.envelope(v, path, defaults)
		case "stiffness":
			g.Stiffness, _ = d.value(v, path, false)
		case "tilt":
			g.Tilt, _ = d.value(v, path, false)
		case "detune":
			g.Detune, _ = d.value(v, path, false)
		case "unison":
			d.unison(v, path, &g)
		case "pan":
			d.pan(v, path, &g)
		case "pitch":
			g.Pitch = d.pitch(v, path)
		case "vibrato":
			g.Vibrato = d.vibrato(v, path)
		case "drift":
			g.Drift = d.drift(v, path)
		}
		if slices.Contains(groupKinds, key) {
			kinds = append(kinds, key)
		}
	})
	if item.Kind != yaml.MappingNode {
		return g
	}
	if len(kinds) != 1 {
		d.errorf(item, path, "a group needs exactly one of %s; found %s", strings.Join(groupKinds, ", "), listOrNone(kinds))
		return g
	}
	only := func(key string, allowed ...GroupKind) {
		if v := nodes[key]; v != nil && !slices.Contains(allowed, g.Kind) {
			d.errorf(v, joinPath(path, key), "%s does not apply to a %s group", key, kinds[0])
		}
	}
	only("count", KindModes, KindSpectrum)
	only("amplitudes", KindRatios)
	only("stiffness", KindSeries, KindSpectrum)
	for _, key := range []string{"phase", "tilt", "detune", "unison", "pitch", "vibrato", "drift"} {
		only(key, partialKinds...)
	}
	switch g.Kind {
	case KindModes:
		table := modeTables[g.Table]
		if g.Count == 0 {
			g.Count = len(table)
		} else if g.Count > len(table) && g.Table != "" {
			d.errorf(nodes["count"], joinPath(path, "count"), "the %s table has %d modes; count may be at most that", g.Table, len(table))
		}
	case KindSpectrum:
		if g.Count == 0 {
			g.Count = defaultSpec
		}
	case KindRatios:
		if len(g.Amplitudes) > 0 && len(g.Amplitudes) != len(g.Ratios) {
			d.errorf(nodes["amplitudes"], joinPath(path, "amplitudes"), "%d amplitudes for %d ratios; give one per ratio, or use amplitude for a rule", len(g.Amplitudes), len(g.Ratios))
		}
	}
	return g
}

func listOrNone(keys []string) string {
	if len(keys) == 0 {
		return "none"
	}
	return strings.Join(keys, " and ")
}

// list reads a sequence of as many items as rule lr allows.
func (d *decoder) list(n *yaml.Node, path string, lr *Rule) []*yaml.Node {
	r := d.resolve(n)
	if r.Kind != yaml.SequenceNode {
		d.errorf(r, path, "expected a list such as [1, 2.756, 5.404], found %s", describe(r))
		return nil
	}
	switch {
	case lr.MaxItems > 0 && (len(r.Content) < lr.MinItems || len(r.Content) > lr.MaxItems):
		d.errorf(r, path, "expected %d to %d entries, found %d", lr.MinItems, lr.MaxItems, len(r.Content))
		return nil
	case len(r.Content) < lr.MinItems:
		d.errorf(r, path, "expected at least %d entries, found %d", lr.MinItems, len(r.Content))
		return nil
	}
	return d.items(r)
}

// phase reads a phase in degrees (number or expression) or a phase rule.
func (d *decoder) phase(n *yaml.Node, path string) (PhaseRule, Value) {
	if r := d.resolve(n); r.Kind == yaml.ScalarNode && r.ShortTag() == "!!str" {
		if i := slices.Index(phaseRule.Words, r.Value); i >= 0 {
			return PhaseRule(i + 1), constValue(0)
		}
	}
	v, _ := d.value(n, path, false)
	return PhaseValue, v
}

// series reads harmonics: COUNT or {count, first, step}.
func (d *decoder) series(n *yaml.Node, path string, g *Group) {
	g.Kind, g.First, g.Step = KindSeries, 1, 1
	if r := d.resolve(n); r.Kind == yaml.ScalarNode {
		g.Count, _ = d.integer(r, path, seriesRule)
		return
	}
	d.fields(n, path, []string{"count", "first", "step"}, func(key string, v *yaml.Node, path string) {
		switch key {
		case "count":
			g.Count, _ = d.integer(v, path, seriesRule)
		case "first":
			g.First, _ = d.integer(v, path, firstRule)
		case "step":
			g.Step, _ = d.integer(v, path, stepRule)
		}
	})
	if g.Count == 0 && !hasKey(d.resolve(n), "count") {
		d.errorf(d.resolve(n), path, "a harmonic series needs a count, such as {count: 30, first: 1, step: 2}")
	}
}

// cluster reads {count, from, to}.
func (d *decoder) cluster(n *yaml.Node, path string, g *Group) {
	c := Cluster{From: 1, To: 2}
	d.fields(n, path, []string{"count", "from", "to"}, func(key string, v *yaml.Node, path string) {
		switch key {
		case "count":
			c.Count, _ = d.integer(v, path, clusterRule)
		case "from":
			c.From, _ = d.ranged(v, path, clusterEndRule)
		case "to":
			c.To, _ = d.ranged(v, path, clusterEndRule)
		}
	})
	r := d.resolve(n)
	if r.Kind == yaml.MappingNode && !hasKey(r, "count") {
		d.errorf(r, path, "a cluster needs a count, such as {count: 12, from: 1, to: 4}")
	}
	if c.To < c.From {
		d.errorf(r, path, "the cluster's range runs from %g down to %g; give from below to", c.From, c.To)
	}
	g.Cluster = c
}

// hzPattern reads a frequency written as text, such as "800 Hz": a decimal
// number without an exponent, so that the schema can hold its range as a
// pattern, and the unit.
var hzPattern = regexp.MustCompile(`^\s*([+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+))\s*Hz\s*$`)

// noise reads {low, high, slope, width}.
func (d *decoder) noise(n *yaml.Node, path string, g *Group) {
	s := NoiseSpec{Width: 1}
	var low, high bool
	d.fields(n, path, []string{"low", "high", "slope", "width"}, func(key string, v *yaml.Node, path string) {
		switch key {
		case "low":
			s.Low, low = d.edge(v, path)
		case "high":
			s.High, high = d.edge(v, path)
		case "slope":
			s.Slope, _ = d.ranged(v, path, noiseSlopeRule)
		case "width":
			s.Width, _ = d.ranged(v, path, noiseWidthRule)
		}
	})
	r := d.resolve(n)
	s.File, s.Line, s.Column = d.file, r.Line, r.Column
	g.Noise = s
	if r.Kind != yaml.MappingNode {
		return
	}
	switch {
	case !hasKey(r, "low") || !hasKey(r, "high"):
		d.errorf(r, path, "a noise band needs low and high, such as {low: 1.5, high: 6} (ratios to the fundamental) or {low: 800 Hz, high: 4000 Hz}")
	case low && high && s.Low.Hz == s.High.Hz && s.Low.Value >= s.High.Value:
		// Edges in different units are compared at each key, by Expand.
		d.errorf(r, path, "the band runs from %s down to %s; give low below high", s.Low, s.High)
	}
}

// edge reads a band edge: a ratio to the fundamental, or a frequency in Hz
// written as text such as "800 Hz".
func (d *decoder) edge(n *yaml.Node, path string) (Edge, bool) {
	r := d.resolve(n)
	if r.Kind == yaml.ScalarNode && (r.ShortTag() == "!!int" || r.ShortTag() == "!!float") {
		v, ok := d.ranged(r, path, noiseRatioRule)
		return Edge{Value: v}, ok
	}
	m := hzPattern.FindStringSubmatch(r.Value)
	if r.Kind != yaml.ScalarNode || r.ShortTag() != "!!str" || m == nil {
		d.errorf(r, path, "expected a ratio to the fundamental such as 1.5, or a frequency such as \"800 Hz\", found %s", describe(r))
		return Edge{}, false
	}
	v, _ := strconv.ParseFloat(m[1], 64)
	if v < noiseHzRule.Min || v > noiseHzRule.Max {
		d.errorf(r, path, "%g Hz is out of range: expected %g..%g Hz", v, noiseHzRule.Min, noiseHzRule.Max)
		return Edge{}, false
	}
	return Edge{Value: v, Hz: true}, true
}

// unison reads {voices, spread}.
func (d *decoder) unison(n *yaml.Node, path string, g *Group) {
	u := Unison{Voices: 1, Spread: 10, Width: 1}
	d.fields(n, path, []string{"voices", "spread", "width"}, func(key string, v *yaml.Node, path string) {
		switch key {
		case "voices":
			u.Voices, _ = d.integer(v, path, voicesRule)
		case "spread":
			u.Spread, _ = d.ranged(v, path, spreadRule)
		case "width":
			u.Width, _ = d.ranged(v, path, widthRule)
		}
	})
	g.Unison = u
}

// pan reads a position −1..1 (number or expression) or {rule, width}.
func (d *decoder) pan(n *yaml.Node, path string, g *Group) {
	r := d.resolve(n)
	if r.Kind != yaml.MappingNode {
		g.Pan, _ = d.value(r, path, false)
		return
	}
	g.PanWidth = 1
	d.fields(r, path, []string{"rule", "width"}, func(key string, v *yaml.Node, path string) {
		switch key {
		case "rule":
			if i := slices.Index(panWordRule.Words, d.word(v, path, panWordRule)); i >= 0 {
				g.PanRule = PanRule(i + 1)
			}
		case "width":
			g.PanWidth, _ = d.ranged(v, path, panWidthRule)
		}
	})
	if !hasKey(r, "rule") {
		d.errorf(r, path, "a pan mapping needs a rule (%s); for one position write a number from -1 to 1", panWordRule.words())
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
		case "curve":
			env.Linear = d.word(v, path, curveRule) == "linear"
		case "points":
			env.Points = nil
			d.points(v, path, pointsRule, axis{"seconds", "time", 0.01, envTimeRule}, axis{"level", "level", 1, envLevelRule}, func(t, l float64) {
				env.Points = append(env.Points, EnvelopePoint{Time: t, Level: l})
			})
		case "stretch":
			env.Stretch, _ = d.value(v, path, false)
		}
	})
	if r := d.resolve(n); r.Kind == yaml.MappingNode && hasKey(r, "points") {
		for _, key := range []string{"attack", "decay", "sustain"} {
			if hasKey(r, key) {
				d.errorf(r, joinPath(path, key), "an envelope with points has no %s; the points give the whole shape up to note-off", key)
			}
		}
	}
	return env
}

// pitch reads a pitch envelope: [[seconds, cents], …] with rising times.
func (d *decoder) pitch(n *yaml.Node, path string) []PitchPoint {
	var points []PitchPoint
	d.points(n, path, pitchRule, axis{"seconds", "time", 0.1, pitchTimeRule}, axis{"cents", "pitch", -30, pitchCentsRule}, func(x, y float64) {
		points = append(points, PitchPoint{Time: x, Cents: y})
	})
	return points
}

// vibrato reads {rate, depth, delay, fade}.
func (d *decoder) vibrato(n *yaml.Node, path string) *VibratoSpec {
	v := &VibratoSpec{Rate: constValue(5), Depth: constValue(10), Delay: constValue(0), Fade: constValue(0)}
	d.valueFields(n, path, map[string]*Value{"rate": &v.Rate, "depth": &v.Depth, "delay": &v.Delay, "fade": &v.Fade})
	return v
}

// drift reads {rate, depth}.
func (d *decoder) drift(n *yaml.Node, path string) *DriftSpec {
	v := &DriftSpec{Rate: constValue(0.5), Depth: constValue(5)}
	d.valueFields(n, path, map[string]*Value{"rate": &v.Rate, "depth": &v.Depth})
	return v
}

// valueFields reads a mapping whose keys are all Values (numbers or
// expressions, no dB) into the fields given by name.
func (d *decoder) valueFields(n *yaml.Node, path string, fields map[string]*Value) {
	keys := make([]string, 0, len(fields))
	for k := range fields {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	d.fields(n, path, keys, func(key string, node *yaml.Node, path string) {
		*fields[key], _ = d.value(node, path, false)
	})
}
