package patch

import (
	"bytes"
	"strconv"
	"strings"

	"gopkg.in/yaml.v3"
)

// Draft is a patch as a program writes one, such as the analysis of a
// recording: the part of the language a measured tone needs, each setting
// already a number or an expression in the language's own syntax, and the
// comments that go with it. YAML writes it out; Parse reads that back.
type Draft struct {
	Comment    []string // lines at the top of the file, without the "# "
	Name       string
	SampleRate int
	BitDepth   int
	Keys       KeyRange
	Hold, Tail float64
	// BandLimit and BandFade, when BandLimit is above 0, replace the
	// defaults: a recording can hold partials up to its Nyquist frequency.
	BandLimit, BandFade float64
	Groups              []DraftGroup
}

// KeyRange is keys: {from, to, step}.
type KeyRange struct{ From, To, Step int }

// DraftGroup is one partial group of a Draft. Exactly one of Harmonics
// and Ratios is set; Ratios of one entry is written as ratio.
type DraftGroup struct {
	Comment    []string
	Harmonics  *Series
	Ratios     []float64
	Stiffness  float64  // written where above 0
	Detune     float64  // cents, written where not 0
	Phase      float64  // degrees, written where not 0
	Tilt       float64  // dB per octave of ratio, written where not 0
	Amplitude  string   // a number, a level such as "-6.02 dB" or an expression; "" for 1
	Amplitudes []string // one per ratio, for a ratios group
	Envelope   DraftEnvelope
}

// Series is harmonics: {count, first, step}.
type Series struct{ Count, First, Step int }

// DraftEnvelope is a group's envelope: attack, decay, sustain and release
// as numbers or expressions, or breakpoints and a release.
type DraftEnvelope struct {
	Attack, Decay, Sustain, Release string
	Points                          [][2]float64 // seconds, level
}

// YAML writes the draft as a patch file, keys in the order the README
// lists them, the envelopes and lists in flow style so each group stays a
// few lines.
func (d *Draft) YAML() []byte {
	root := &yaml.Node{Kind: yaml.MappingNode}
	add := func(m *yaml.Node, key string, v *yaml.Node) *yaml.Node {
		k := &yaml.Node{Kind: yaml.ScalarNode, Tag: "!!str", Value: key}
		m.Content = append(m.Content, k, v)
		return k
	}
	name := add(root, "name", text(d.Name))
	name.HeadComment = comment(d.Comment)
	add(root, "sample_rate", integer(d.SampleRate))
	add(root, "bit_depth", integer(d.BitDepth))
	keys := flowMap()
	add(keys, "from", text(NoteName(d.Keys.From)))
	add(keys, "to", text(NoteName(d.Keys.To)))
	add(keys, "step", integer(d.Keys.Step))
	add(root, "keys", keys)
	add(root, "hold", number(d.Hold, 4))
	add(root, "tail", number(d.Tail, 4))
	if d.BandLimit > 0 {
		add(root, "band_limit", number(d.BandLimit, 6))
		add(root, "band_fade", number(d.BandFade, 6))
	}
	groups := &yaml.Node{Kind: yaml.SequenceNode}
	for _, g := range d.Groups {
		m := &yaml.Node{Kind: yaml.MappingNode}
		switch {
		case g.Harmonics != nil:
			s := flowMap()
			add(s, "count", integer(g.Harmonics.Count))
			add(s, "first", integer(g.Harmonics.First))
			add(s, "step", integer(g.Harmonics.Step))
			add(m, "harmonics", s)
		case len(g.Ratios) == 1:
			add(m, "ratio", number(g.Ratios[0], 9))
		default:
			list := flowSeq()
			for _, r := range g.Ratios {
				list.Content = append(list.Content, number(r, 9))
			}
			add(m, "ratios", list)
		}
		m.HeadComment = comment(g.Comment)
		if g.Stiffness > 0 {
			add(m, "stiffness", number(g.Stiffness, 6))
		}
		if g.Detune != 0 {
			add(m, "detune", number(g.Detune, 6))
		}
		if g.Phase != 0 {
			add(m, "phase", number(g.Phase, 4))
		}
		if g.Tilt != 0 {
			add(m, "tilt", number(g.Tilt, 5))
		}
		if g.Amplitude != "" {
			add(m, "amplitude", value(g.Amplitude))
		}
		if len(g.Amplitudes) > 0 {
			list := flowSeq()
			for _, a := range g.Amplitudes {
				list.Content = append(list.Content, value(a))
			}
			add(m, "amplitudes", list)
		}
		env := flowMap()
		e := g.Envelope
		if len(e.Points) > 0 {
			pts := flowSeq()
			for _, p := range e.Points {
				pt := flowSeq()
				pt.Content = append(pt.Content, number(p[0], 5), number(p[1], 5))
				pts.Content = append(pts.Content, pt)
			}
			add(env, "points", pts)
		} else {
			add(env, "attack", value(e.Attack))
			add(env, "decay", value(e.Decay))
			add(env, "sustain", value(e.Sustain))
		}
		add(env, "release", value(e.Release))
		add(m, "envelope", env)
		groups.Content = append(groups.Content, m)
	}
	add(root, "partials", groups)
	var b bytes.Buffer
	enc := yaml.NewEncoder(&b)
	enc.SetIndent(2)
	// Encoding a tree of plain nodes cannot fail.
	_ = enc.Encode(&yaml.Node{Kind: yaml.DocumentNode, Content: []*yaml.Node{root}})
	return b.Bytes()
}

func comment(lines []string) string { return strings.Join(lines, "\n") }

func flowMap() *yaml.Node { return &yaml.Node{Kind: yaml.MappingNode, Style: yaml.FlowStyle} }
func flowSeq() *yaml.Node { return &yaml.Node{Kind: yaml.SequenceNode, Style: yaml.FlowStyle} }

func text(s string) *yaml.Node {
	return &yaml.Node{Kind: yaml.ScalarNode, Tag: "!!str", Value: s}
}

func integer(n int) *yaml.Node {
	return &yaml.Node{Kind: yaml.ScalarNode, Tag: "!!int", Value: strconv.Itoa(n)}
}

// number writes x to digits significant digits, the shortest way.
func number(x float64, digits int) *yaml.Node {
	v, _ := strconv.ParseFloat(strconv.FormatFloat(x, 'g', digits, 64), 64)
	return plainNumber(strconv.FormatFloat(v, 'g', -1, 64))
}

// plainNumber is a scalar node for a number's text, tagged as YAML
// resolves it, so the encoder writes it bare.
func plainNumber(s string) *yaml.Node {
	tag := "!!float"
	if _, err := strconv.Atoi(s); err == nil {
		tag = "!!int"
	}
	return &yaml.Node{Kind: yaml.ScalarNode, Tag: tag, Value: s}
}

// value writes a setting that is a plain number as one, anything else (a
// level in dB, an expression) as a quoted string.
func value(s string) *yaml.Node {
	if _, err := strconv.ParseFloat(s, 64); err == nil {
		return plainNumber(s)
	}
	return &yaml.Node{Kind: yaml.ScalarNode, Tag: "!!str", Value: s, Style: yaml.DoubleQuotedStyle}
}
