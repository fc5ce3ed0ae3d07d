package patch_test

import (
	"encoding/json"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/invopop/jsonschema"

	"sinter/patch"
)

// This file generates the patch language's JSON Schema, which
// TestSchemaIsUpToDate holds patch/sinter.schema.json (what `sinter
// schema` prints) to. The shape of the language — which keys a mapping
// has, which take a list — is written here; every range, choice and list
// length comes from patch.Rules, the table the decoder and the expander
// check values with, so the schema cannot drift from check.

// schemaBuilder hands out the rules by name and remembers which it used,
// so a test can tell that none was left out.
type schemaBuilder struct {
	t     *testing.T
	rules map[string]patch.Rule
	used  map[string]bool
}

func newSchemaBuilder(t *testing.T) *schemaBuilder {
	b := &schemaBuilder{t: t, rules: map[string]patch.Rule{}, used: map[string]bool{}}
	for _, r := range patch.Rules() {
		if _, dup := b.rules[r.At]; dup {
			t.Fatalf("two rules at %q", r.At)
		}
		b.rules[r.At] = r
	}
	return b
}

func (b *schemaBuilder) rule(at string) patch.Rule {
	b.t.Helper()
	r, ok := b.rules[at]
	if !ok {
		b.t.Fatalf("no rule at %q", at)
	}
	b.used[at] = true
	return r
}

// jsonNumber writes x as a JSON number, exactly: whole numbers in full
// (2^53 as 9007199254740992), others in the shortest form that reads
// back as the same float64.
func jsonNumber(x float64) json.Number {
	if x == math.Trunc(x) && math.Abs(x) < 1e21 {
		return json.Number(strconv.FormatFloat(x, 'f', -1, 64))
	}
	return json.Number(strconv.FormatFloat(x, 'g', -1, 64))
}

// ranged is a number or integer schema with the rule's bounds.
func ranged(typ string, r patch.Rule) *jsonschema.Schema {
	s := &jsonschema.Schema{Type: typ}
	if !math.IsInf(r.Min, 0) {
		s.Minimum = jsonNumber(r.Min)
	}
	if !math.IsInf(r.Max, 0) {
		s.Maximum = jsonNumber(r.Max)
	}
	return s
}

// words is an enum of a rule's words. YAML reads an unquoted true or
// false as a boolean, so those words are taken in both forms.
func words(ws []string) *jsonschema.Schema {
	var values []any
	for _, w := range ws {
		values = append(values, w)
		if w == "true" || w == "false" {
			values = append(values, w == "true")
		}
	}
	return &jsonschema.Schema{Enum: values}
}

func anyOf(alternatives ...*jsonschema.Schema) *jsonschema.Schema {
	return &jsonschema.Schema{AnyOf: alternatives}
}

func text(desc string) *jsonschema.Schema {
	return &jsonschema.Schema{Type: "string", Description: desc}
}

func ref(name string) *jsonschema.Schema { return &jsonschema.Schema{Ref: "#/$defs/" + name} }

// value is the schema of one value by the rule at at.
func (b *schemaBuilder) value(at string) *jsonschema.Schema {
	b.t.Helper()
	r := b.rule(at)
	var alts []*jsonschema.Schema
	switch r.Kind {
	case patch.ValueText:
		return &jsonschema.Schema{Type: "string", Pattern: r.Pattern}
	case patch.ValueWords:
		return words(r.Words)
	case patch.ValueNumber:
		alts = append(alts, ranged("number", r))
	case patch.ValueInteger:
		if r.Values != nil {
			values := make([]any, len(r.Values))
			for i, v := range r.Values {
				values[i] = v
			}
			return &jsonschema.Schema{Type: "integer", Enum: values}
		}
		return ranged("integer", r)
	case patch.ValueLevel:
		alts = append(alts, ranged("number", r), &jsonschema.Schema{Type: "string", Pattern: levelPattern(b.t, r),
			Description: fmt.Sprintf("A level such as \"%g %s\".", r.Max, r.Units[0])})
	case patch.ValueExpression:
		desc := "An expression of n, ratio, hz, f0, key and vel, checked for every partial."
		if r.Decibels {
			desc = "An expression of n, ratio, hz, f0, key and vel, or a level in dB such as \"-6 dB\", checked for every partial."
		}
		alts = append(alts, ranged("number", r), text(desc))
	case patch.ValueHertz:
		return &jsonschema.Schema{Type: "string", Pattern: hertzPattern(b.t, r),
			Description: fmt.Sprintf("A frequency such as \"%g Hz\".", 800.0)}
	case patch.ValueNote:
		alts = append(alts, ranged("integer", r), &jsonschema.Schema{Type: "string", Pattern: notePattern(b.t, r),
			Description: "A note name in scientific pitch notation (C4 = MIDI 60), or a MIDI number."})
	default:
		b.t.Fatalf("the rule at %q is not a single value", at)
	}
	if r.Words != nil {
		alts = append(alts, words(r.Words))
	}
	if len(alts) == 1 {
		return alts[0]
	}
	return anyOf(alts...)
}

// list is an array of items with the list rule at at's lengths.
func (b *schemaBuilder) list(at string, items *jsonschema.Schema) *jsonschema.Schema {
	b.t.Helper()
	r := b.rule(at)
	if r.Kind != patch.ValueList {
		b.t.Fatalf("the rule at %q is not a list", at)
	}
	s := &jsonschema.Schema{Type: "array", Items: items}
	if r.MinItems > 0 {
		n := uint64(r.MinItems)
		s.MinItems = &n
	}
	if r.MaxItems > 0 {
		n := uint64(r.MaxItems)
		s.MaxItems = &n
	}
	return s
}

// points is a list of [x, y] breakpoints.
func (b *schemaBuilder) points(at string) *jsonschema.Schema {
	two := uint64(2)
	pair := &jsonschema.Schema{Type: "array", PrefixItems: []*jsonschema.Schema{b.value(at + "[][0]"), b.value(at + "[][1]")},
		MinItems: &two, MaxItems: &two}
	return b.list(at, pair)
}

// object is a closed mapping of the given properties, in the order given
// as name, schema pairs.
func object(pairs ...any) *jsonschema.Schema {
	s := &jsonschema.Schema{Type: "object", Properties: jsonschema.NewProperties(), AdditionalProperties: jsonschema.FalseSchema}
	for i := 0; i+1 < len(pairs); i += 2 {
		s.Properties.Set(pairs[i].(string), pairs[i+1].(*jsonschema.Schema))
	}
	return s
}

func described(s *jsonschema.Schema, desc string) *jsonschema.Schema {
	s.Description = desc
	return s
}

// generateSchema builds the patch language's schema and checks it used
// every rule.
func generateSchema(t *testing.T) []byte {
	t.Helper()
	b := newSchemaBuilder(t)
	note := ref("note")
	onOff := ref("switch")
	top := object(
		"name", described(b.value("name"), "Set name; the start of every file name."),
		"sample_rate", b.value("sample_rate"),
		"bit_depth", b.value("bit_depth"),
		"channels", b.value("channels"),
		"tuning", object("a4", b.value("tuning.a4"),
			"scale", text("A scale file (.scl), relative to the patch's folder."),
			"keymap", text("A keyboard mapping file (.kbm), relative to the patch's folder.")),
		"keys", anyOf(note, b.list("keys", note), object("from", note, "to", note, "step", b.value("keys.step"))),
		"velocities", anyOf(b.value("velocities[]"), b.list("velocities", b.value("velocities[]"))),
		"layer_crossfade", described(b.value("layer_crossfade"), "Velocities over which neighbouring layers cross-fade; 0 for none."),
		"hold", described(b.value("hold"), "Seconds from note-on to note-off."),
		"tail", anyOf(append(b.value("tail").AnyOf, object("until", b.value("tail.until"), "max", b.value("tail.max")))...),
		"band_limit", b.value("band_limit"),
		"band_fade", b.value("band_fade"),
		"normalize", anyOf(b.value("normalize"), object(
			"peak", b.value("normalize.peak"), "true_peak", b.value("normalize.true_peak"), "loudness", b.value("normalize.loudness"),
			"scope", b.value("normalize.scope"), "ceiling", b.value("normalize.ceiling"), "strict", onOff)),
		"loop", anyOf(b.value("loop"), object(
			"start", b.value("loop.start"), "length", b.value("loop.length"), "crossfade", b.value("loop.crossfade"), "exact", onOff)),
		"round_robin", b.value("round_robin"),
		"seed", b.value("seed"),
		"dither", onOff,
		"envelope", ref("envelope"),
		"partials", b.list("partials", anyOf(ref("group"), include())),
		"body", described(b.points("body"), "Spectral envelope: [hz, dB] points with rising frequencies."),
		"output", object("dir", text("Relative to the patch's folder and inside it."), "format", b.value("output.format")),
	)
	top.Required = []string{"name", "partials"}
	amplitude := text("An expression of n, ratio, hz, f0, key and vel, or a level in dB such as \"-6 dB\".")
	panRule := object("rule", b.value("group.pan.rule"), "width", b.value("group.pan.width"))
	panRule.Required = []string{"rule"}
	cluster := object("count", b.value("group.cluster.count"), "from", b.value("group.cluster.from"), "to", b.value("group.cluster.from"))
	cluster.Required = []string{"count"}
	edge := anyOf(described(b.value("group.noise.low"), "A ratio to the fundamental."), b.value("group.noise.low:Hz"))
	band := object("low", edge, "high", edge, "slope", b.value("group.noise.slope"), "width", b.value("group.noise.width"))
	band.Required = []string{"low", "high"}
	group := object(
		"harmonics", anyOf(b.value("group.harmonics"), object("count", b.value("group.harmonics"),
			"first", b.value("group.harmonics.first"), "step", b.value("group.harmonics.step"))),
		"ratio", b.value("group.ratio"),
		"ratios", b.list("group.ratios", b.value("group.ratios[]")),
		"modes", b.value("group.modes"),
		"spectrum", b.value("group.spectrum"),
		"cluster", cluster,
		"noise", described(band, "A band of noise from low to high, its power density tilted by slope dB per octave; width sets how far apart its channels are."),
		"count", b.value("group.count"),
		"amplitude", anyOf(&jsonschema.Schema{Type: "number"}, amplitude),
		"amplitudes", b.list("group.amplitudes", anyOf(&jsonschema.Schema{Type: "number"}, amplitude)),
		"phase", b.value("group.phase"),
		"envelope", ref("envelope"),
		"stiffness", b.value("group.stiffness"),
		"tilt", b.value("group.tilt"),
		"detune", b.value("group.detune"),
		"unison", object("voices", b.value("group.unison.voices"), "spread", b.value("group.unison.spread"), "width", b.value("group.unison.width")),
		"pan", anyOf(append(b.value("group.pan").AnyOf, panRule)...),
		"pitch", b.points("group.pitch"),
		"vibrato", object("rate", b.value("group.vibrato.rate"), "depth", b.value("group.vibrato.depth"),
			"delay", b.value("group.vibrato.delay"), "fade", b.value("group.vibrato.fade")),
		"drift", object("rate", b.value("group.drift.rate"), "depth", b.value("group.drift.depth")),
	)
	envelope := object(
		"attack", b.value("envelope.attack"),
		"decay", b.value("envelope.attack"),
		"sustain", b.value("envelope.sustain"),
		"release", b.value("envelope.attack"),
		"curve", b.value("envelope.curve"),
		"points", b.points("envelope.points"),
		"stretch", b.value("envelope.stretch"),
	)
	s := top
	s.Version = "https://json-schema.org/draft/2020-12/schema"
	s.ID = "https://sinter.invalid/sinter.schema.json"
	s.Title = "sinter patch"
	s.Description = "A sinter patch: sine partials compiled into a sample set. See the README's patch reference."
	s.Definitions = jsonschema.Definitions{
		"group": group, "envelope": envelope, "note": b.value("keys[]"), "switch": b.value("dither"),
	}
	for at := range b.rules {
		if !b.used[at] {
			t.Errorf("the rule at %q is not in the schema", at)
		}
	}
	data, err := json.MarshalIndent(s, "", "  ")
	if err != nil {
		t.Fatal(err)
	}
	return append(data, '\n')
}

func include() *jsonschema.Schema {
	s := object("include", text("A file of partial groups, relative to this one."))
	s.Required = []string{"include"}
	return s
}

// levelPattern is the pattern of a level written as text: a decimal
// number in the rule's range, then optionally "dB" or one of its units,
// as the decoder's own pattern reads it.
func levelPattern(t *testing.T, r patch.Rule) string {
	t.Helper()
	if r.Min != math.Trunc(r.Min) || r.Max != math.Trunc(r.Max) {
		t.Fatalf("level bounds %g..%g: decimalPattern takes whole numbers", r.Min, r.Max)
	}
	units := slices.Clone(r.Units)
	units = append(units, "dB")
	return `^\s*` + decimalPattern(int(r.Min), int(r.Max)) + `\s*(?:` + strings.Join(units, "|") + `)?\s*$`
}

// hertzPattern is the pattern of a frequency written as text: a decimal
// number in the rule's range, then "Hz", as the decoder's own pattern
// reads it.
func hertzPattern(t *testing.T, r patch.Rule) string {
	t.Helper()
	if r.Min != math.Trunc(r.Min) || r.Max != math.Trunc(r.Max) {
		t.Fatalf("frequency bounds %g..%g: decimalPattern takes whole numbers", r.Min, r.Max)
	}
	return `^\s*` + decimalPattern(int(r.Min), int(r.Max)) + `\s*Hz\s*$`
}

// decimalPattern matches the decimals lo ≤ x ≤ hi (lo and hi whole) in the
// form the decoder reads: an optional sign, digits with an optional
// fraction or a fraction alone, no exponent, leading zeros allowed.
func decimalPattern(lo, hi int) string {
	var alts []string
	if hi >= 0 {
		alts = append(alts, `\+?(?:`+magnitudePattern(max(lo, 0), hi)+`)`)
	}
	if lo <= 0 {
		alts = append(alts, `-(?:`+magnitudePattern(max(-hi, 0), -lo)+`)`)
	}
	return `(?:` + strings.Join(alts, "|") + `)`
}

// magnitudePattern matches unsigned decimals a ≤ x ≤ b (0 ≤ a ≤ b): an
// integer part from a to b − 1 with any fraction, or b with a fraction of
// zeros only.
func magnitudePattern(a, b int) string {
	var alts []string
	if a <= b-1 {
		alts = append(alts, `0*(?:`+intPattern(a, b-1)+`)(?:\.[0-9]*)?`)
		if a == 0 {
			alts = append(alts, `\.[0-9]+`)
		}
	}
	alts = append(alts, `0*(?:`+intPattern(b, b)+`)(?:\.0*)?`)
	if b == 0 {
		alts = append(alts, `\.0+`)
	}
	return strings.Join(alts, "|")
}

// intPattern matches the whole numbers a ≤ n ≤ c (0 ≤ a ≤ c) written
// without leading zeros.
func intPattern(a, c int) string {
	var alts []string
	for a <= c {
		top := 9
		for top < a {
			top = top*10 + 9
		}
		end := min(c, top)
		alts = append(alts, sameLength(strconv.Itoa(a), strconv.Itoa(end)))
		a = end + 1
	}
	return strings.Join(alts, "|")
}

// sameLength matches the digit strings from x to y, which have the same
// length.
func sameLength(x, y string) string {
	switch {
	case x == y:
		return x
	case len(x) == 1:
		return digits(x[0], y[0])
	case x[0] == y[0]:
		return x[:1] + alternatives(sameLength(x[1:], y[1:]))
	}
	rest := len(x) - 1
	alts := []string{x[:1] + alternatives(sameLength(x[1:], strings.Repeat("9", rest)))}
	if x[0]+1 <= y[0]-1 {
		any := "[0-9]"
		if rest > 1 {
			any += fmt.Sprintf("{%d}", rest)
		}
		alts = append(alts, digits(x[0]+1, y[0]-1)+any)
	}
	alts = append(alts, y[:1]+alternatives(sameLength(strings.Repeat("0", rest), y[1:])))
	return strings.Join(alts, "|")
}

// digits matches one digit from a to b.
func digits(a, b byte) string {
	if a == b {
		return string(a)
	}
	return fmt.Sprintf("[%c-%c]", a, b)
}

// alternatives brackets a pattern with alternatives, so that what follows or
// comes before it applies to all of them.
func alternatives(p string) string {
	if strings.Contains(p, "|") {
		return "(?:" + p + ")"
	}
	return p
}

// accidentals are the spellings patch.ParseNote reads for each shift in
// semitones: up to two of '#', 's' (sharp) and 'b' (flat).
var accidentals = map[int]string{-2: `bb`, -1: `b`, 0: `(?:[#s]b|b[#s])?`, 1: `[#s]`, 2: `[#s][#s]`}

// notePattern matches the text patch.ParseNote reads as a key within the
// rule's range: a MIDI number, or a note name whose letter, accidentals
// and octave give a key in range. Which names are in range is found by
// asking ParseNote itself, octave by octave; TestNotePattern compares the
// two over every spelling.
func notePattern(t *testing.T, r patch.Rule) string {
	t.Helper()
	octaves := map[int]string{-1: `-0*1`, 0: `-?0+`}
	for o := 1; o <= 9; o++ {
		octaves[o] = `0*` + strconv.Itoa(o)
	}
	// Octaves whose letters take the same spellings share one alternative.
	var spellingsOf []string
	octavesOf := map[string][]string{}
	for o := -1; o <= 9; o++ {
		var letters []string
		for _, letter := range "CDEFGAB" {
			var spellings []string
			for shift := -2; shift <= 2; shift++ {
				sample := string(letter) + map[int]string{-2: "bb", -1: "b", 0: "", 1: "#", 2: "##"}[shift] + strconv.Itoa(o)
				if _, err := patch.ParseNote(sample); err == nil {
					spellings = append(spellings, accidentals[shift])
				}
			}
			if len(spellings) == 0 {
				continue
			}
			class := "[" + string(letter) + strings.ToLower(string(letter)) + "]"
			if len(spellings) == 5 {
				letters = append(letters, class+`[#sb]{0,2}`)
			} else {
				letters = append(letters, class+"(?:"+strings.Join(spellings, "|")+")")
			}
		}
		key := strings.Join(letters, "|")
		if octavesOf[key] == nil {
			spellingsOf = append(spellingsOf, key)
		}
		octavesOf[key] = append(octavesOf[key], octaves[o])
	}
	var names []string
	for _, key := range spellingsOf {
		names = append(names, "(?:"+key+")(?:"+strings.Join(octavesOf[key], "|")+")")
	}
	number := decimalWhole(int(r.Min), int(r.Max))
	return `^\s*(?:` + number + `|` + strings.Join(names, "|") + `)\s*$`
}

// decimalWhole matches whole numbers lo ≤ n ≤ hi as strconv.Atoi reads
// them: an optional sign and digits, leading zeros allowed.
func decimalWhole(lo, hi int) string {
	var alts []string
	if hi >= 0 {
		alts = append(alts, `\+?0*(?:`+intPattern(max(lo, 0), hi)+`)`)
	}
	if lo <= 0 {
		alts = append(alts, `-0*(?:`+intPattern(max(-hi, 0), -lo)+`)`)
	}
	return strings.Join(alts, "|")
}
