package patch_test

import (
	"fmt"
	"math"
	"math/rand/v2"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"sinter/patch"
)

// place puts a value, written as YAML, where a rule applies in a patch;
// the patch gets a name and, unless the place sets them, a partials list.
type place func(v string) string

func top(format string) place {
	return func(v string) string { return fmt.Sprintf(format, v) }
}

// group places a value in the one group of a patch.
func group(format string) place {
	return func(v string) string { return "partials: [{" + fmt.Sprintf(format, v) + "}]" }
}

// series writes a YAML list of count entries, entry i by item.
func series(count string, item func(i int) string) string {
	n, _ := strconv.Atoi(count)
	items := make([]string, n)
	for i := range items {
		items[i] = item(i)
	}
	return "[" + strings.Join(items, ", ") + "]"
}

func listOf(format string, item func(i int) string) place {
	return func(n string) string { return fmt.Sprintf(format, series(n, item)) }
}

// rangeCase places the values of one rule. high, when set, places the
// top of the range instead of places, where other keys must change for
// the top to be valid. At an end that a rule across keys forbids, check
// must fail with crossLow or crossHigh (and nothing about the range)
// while the schema, which sees one key, passes.
type rangeCase struct {
	places, high        []place
	crossLow, crossHigh string
}

// rangeCases holds every rule of patch.Rules; TestSchemaRangesMatchCheck
// fails for a rule without a case.
var rangeCases = map[string]rangeCase{
	"name":         {places: []place{func(v string) string { return "name: " + v }}},
	"sample_rate":  {places: []place{top("sample_rate: %s")}},
	"bit_depth":    {places: []place{top("bit_depth: %s")}},
	"channels":     {places: []place{top("channels: %s")}},
	"tuning.a4":    {places: []place{top("tuning: {a4: %s}")}},
	"keys[]":       {places: []place{top("keys: [%s]"), top("keys: %s"), top("keys: {from: %s, to: 127}"), top("keys: {from: 0, to: %s}")}},
	"keys":         {places: []place{listOf("keys: %s", func(i int) string { return strconv.Itoa(i) })}},
	"keys.step":    {places: []place{top("keys: {from: 0, to: 127, step: %s}")}},
	"velocities":   {places: []place{listOf("velocities: %s", func(i int) string { return strconv.Itoa(i + 1) })}},
	"velocities[]": {places: []place{top("velocities: [%s]"), top("velocities: %s")}},
	// Two layers of 63 and 64 velocities leave room for the widest.
	"layer_crossfade": {places: []place{top("layer_crossfade: %s"), top("velocities: [63, 127]\nlayer_crossfade: %s")}},
	"hold":            {places: []place{top("hold: %s\ntail: auto")}},
	// A file needs some length, so the shortest tail needs a hold and the
	// longest none.
	"tail":                {places: []place{top("tail: %s")}, high: []place{top("hold: 0\ntail: %s")}},
	"tail.until":          {places: []place{top("tail: {until: %s}")}},
	"tail.max":            {places: []place{top("tail: {max: %s}")}},
	"band_limit":          {places: []place{top("band_limit: %s")}},
	"band_fade":           {places: []place{top("band_fade: %s")}},
	"normalize":           {places: []place{top("normalize: %s")}},
	"normalize.peak":      {places: []place{top("normalize: {peak: %s}")}},
	"normalize.true_peak": {places: []place{top("normalize: {true_peak: %s}")}},
	"normalize.loudness":  {places: []place{top("normalize: {loudness: %s}")}},
	"normalize.scope":     {places: []place{top("normalize: {scope: %s}")}},
	"normalize.ceiling":   {places: []place{top("normalize: {ceiling: %s}")}},
	"dither":              {places: []place{top("dither: %s"), top("normalize: {strict: %s}"), top("loop: {exact: %s}")}},
	"loop":                {places: []place{top("loop: %s")}},
	// A loop starts once the envelopes have settled and a crossfade has
	// passed, and ends before note-off: neither end of start's range can
	// hold a loop.
	"loop.start": {places: []place{top("hold: 600\ntail: 0\nloop: {start: %s}")},
		crossLow: "the loop starts at", crossHigh: "no room for a loop"},
	"loop.length":    {places: []place{top("loop: {length: %s, crossfade: 0.001}")}},
	"loop.crossfade": {places: []place{top("hold: 60\nloop: {length: 60, crossfade: %s}")}},
	"round_robin":    {places: []place{top("round_robin: %s")}},
	"output.format":  {places: []place{top("output: {format: %s}")}},
	"seed":           {places: []place{top("seed: %s")}},
	"partials":       {places: []place{listOf("partials: %s", func(int) string { return "{ratio: 1}" })}},
	"body":           {places: []place{listOf("body: %s", func(i int) string { return fmt.Sprintf("[%d, 0]", i+1) })}},
	"body[][0]":      {places: []place{top("body: [[%s, 0]]")}},
	"body[][1]":      {places: []place{top("body: [[100, %s]]")}},

	"group.harmonics":       {places: []place{group("harmonics: %s"), group("harmonics: {count: %s}")}},
	"group.harmonics.first": {places: []place{group("harmonics: {count: 1, first: %s}")}},
	"group.harmonics.step":  {places: []place{group("harmonics: {count: 2, step: %s}")}},
	"group.count":           {places: []place{group("spectrum: square, count: %s")}},
	"group.cluster.count":   {places: []place{group("cluster: {count: %s}")}},
	"group.ratio":           {places: []place{group("ratio: %s")}},
	"group.ratios":          {places: []place{listOf("partials: [{ratios: %s}]", func(i int) string { return strconv.Itoa(i + 1) })}},
	"group.ratios[]":        {places: []place{group("ratios: [%s]")}},
	"group.cluster.from":    {places: []place{group("cluster: {count: 1, from: %s, to: 1e6}"), group("cluster: {count: 1, from: 1e-6, to: %s}")}},
	"group.modes":           {places: []place{group("modes: %s")}},
	"group.spectrum":        {places: []place{group("spectrum: %s")}},
	"group.amplitudes": {places: []place{func(n string) string {
		one := func(int) string { return "1" }
		return fmt.Sprintf("partials: [{ratios: %s, amplitudes: %s}]", series(n, one), series(n, one))
	}}},
	"group.phase":         {places: []place{group("ratio: 1, phase: %s")}},
	"group.stiffness":     {places: []place{group("harmonics: 2, stiffness: %s")}},
	"group.tilt":          {places: []place{group("ratio: 2, tilt: %s")}},
	"group.detune":        {places: []place{group("ratio: 1, detune: %s")}},
	"group.unison.voices": {places: []place{group("ratio: 1, unison: {voices: %s}")}},
	"group.unison.spread": {places: []place{group("ratio: 1, unison: {voices: 2, spread: %s}")}},
	"group.unison.width":  {places: []place{group("ratio: 1, unison: {voices: 2, width: %s}")}},
	"group.pan":           {places: []place{group("ratio: 1, pan: %s")}},
	"group.pan.rule":      {places: []place{group("ratio: 1, pan: {rule: %s}")}},
	"group.pan.width":     {places: []place{group("ratio: 1, pan: {rule: alternate, width: %s}")}},
	"group.pitch":         {places: []place{listOf("partials: [{ratio: 1, pitch: %s}]", func(i int) string { return fmt.Sprintf("[%g, 0]", float64(i)/10) })}},
	"group.pitch[][0]":    {places: []place{group("ratio: 1, pitch: [[%s, 0]]")}},
	"group.pitch[][1]":    {places: []place{group("ratio: 1, pitch: [[0, %s]]")}},
	"group.vibrato.rate":  {places: []place{group("ratio: 1, vibrato: {rate: %s}")}},
	"group.vibrato.depth": {places: []place{group("ratio: 1, vibrato: {depth: %s}")}},
	"group.vibrato.delay": {places: []place{group("ratio: 1, vibrato: {delay: %s}")}},
	"group.vibrato.fade":  {places: []place{group("ratio: 1, vibrato: {fade: %s}")}},
	"group.drift.rate":    {places: []place{group("ratio: 1, drift: {rate: %s}")}},
	"group.drift.depth":   {places: []place{group("ratio: 1, drift: {depth: %s}")}},
	// A band's low edge must lie below its high one, so each end of an
	// edge's range is tried at the edge that can take it.
	"group.noise.low":    {places: []place{group("noise: {low: %s, high: 1e6}")}, high: []place{group("noise: {low: 1e-6, high: %s}")}},
	"group.noise.low:Hz": {places: []place{group("noise: {low: %s, high: 200000 Hz}")}, high: []place{group("noise: {low: 1 Hz, high: %s}")}},
	"group.noise.slope":  {places: []place{group("noise: {low: 1, high: 2, slope: %s}")}},
	"group.noise.width":  {places: []place{group("noise: {low: 1, high: 2, width: %s}")}},

	"envelope.attack":      {places: []place{top("envelope: {attack: %s}"), top("envelope: {decay: %s}"), group("ratio: 1, envelope: {release: %s}")}},
	"envelope.sustain":     {places: []place{top("envelope: {sustain: %s}"), group("ratio: 1, envelope: {sustain: %s}")}},
	"envelope.curve":       {places: []place{top("envelope: {curve: %s}")}},
	"envelope.points":      {places: []place{listOf("envelope: {points: %s}", func(i int) string { return fmt.Sprintf("[%d, 1]", i) })}},
	"envelope.points[][0]": {places: []place{top("envelope: {points: [[%s, 1]]}")}},
	"envelope.points[][1]": {places: []place{top("envelope: {points: [[0, %s]]}")}},
	"envelope.stretch":     {places: []place{top("envelope: {points: [[0, 0], [1, 1]], stretch: %s}")}},
}

// probe is one value tried at one end of a rule: whether it is valid, and
// the rule across keys check fails on there, if any.
type probe struct {
	value string
	valid bool
	high  bool
	cross string
}

// probes lists the values to try for rule r: its lowest and highest valid
// values and the nearest invalid ones beyond them (for a real number the
// next float64, for a whole number the next one), each word and a word
// that is not one, each allowed list length and one entry too few or too
// many.
func probes(r patch.Rule, c rangeCase) []probe {
	var out []probe
	add := func(v string, valid, high bool) {
		cross := ""
		if valid && !high {
			cross = c.crossLow
		} else if valid {
			cross = c.crossHigh
		}
		out = append(out, probe{v, valid, high, cross})
	}
	real := func(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }
	whole := func(x float64, step int64) string { return strconv.FormatInt(int64(x)+step, 10) }
	switch r.Kind {
	case patch.ValueText:
		for _, v := range []string{"a", "0-set.v2_x"} {
			add(v, true, false)
		}
		for _, v := range []string{"A", "-a", `"x/y"`, `""`} {
			add(v, false, false)
		}
	case patch.ValueWords:
		for _, w := range r.Words {
			add(w, true, false)
		}
		add(r.Words[0]+"x", false, false)
	case patch.ValueNumber, patch.ValueExpression, patch.ValueLevel:
		if !math.IsInf(r.Min, 0) {
			add(real(r.Min), true, false)
			add(real(math.Nextafter(r.Min, math.Inf(-1))), false, false)
		}
		if !math.IsInf(r.Max, 0) {
			add(real(r.Max), true, true)
			add(real(math.Nextafter(r.Max, math.Inf(1))), false, true)
		}
		if r.Kind == patch.ValueLevel {
			for _, unit := range append(r.Units, "dB") {
				add(fmt.Sprintf("%g %s", r.Min, unit), true, false)
				add(fmt.Sprintf("%.3f %s", r.Min-0.001, unit), false, false)
				add(fmt.Sprintf("%g %s", r.Max, unit), true, true)
				add(fmt.Sprintf("%.3f %s", r.Max+0.001, unit), false, true)
			}
		}
		if r.Kind != patch.ValueExpression { // any other text is an expression, check's to judge
			for _, w := range r.Words {
				add(w, true, false)
			}
			if r.Words != nil {
				add(r.Words[0]+"x", false, false)
			}
		}
	case patch.ValueHertz:
		add(real(r.Min)+" Hz", true, false)
		add(fmt.Sprintf("%.3f Hz", r.Min-0.001), false, false)
		add(real(r.Max)+" Hz", true, true)
		add(fmt.Sprintf("%.3f Hz", r.Max+0.001), false, true)
		add(real(r.Max/1000)+" kHz", false, true)
	case patch.ValueInteger, patch.ValueNote:
		if r.Values != nil {
			for _, v := range r.Values {
				add(strconv.Itoa(v), true, false)
				add(strconv.Itoa(v+1), false, false)
				add(strconv.Itoa(v-1), false, false)
			}
			break
		}
		add(whole(r.Min, 0), true, false)
		add(whole(r.Min, -1), false, false)
		add(whole(r.Max, 0), true, true)
		add(whole(r.Max, 1), false, true)
		if r.Kind == patch.ValueNote {
			add("C-1", true, false)
			add("Cb-1", false, false)
			add("G9", true, true)
			add("G#9", false, true)
		}
	case patch.ValueList:
		add(strconv.Itoa(r.MinItems), true, false)
		if r.MinItems > 0 {
			add(strconv.Itoa(r.MinItems-1), false, false)
		}
		if r.MaxItems > 0 {
			add(strconv.Itoa(r.MaxItems), true, true)
			add(strconv.Itoa(r.MaxItems+1), false, true)
		}
	}
	return out
}

// TestSchemaRangesMatchCheck walks every rule the decoder and expander
// check with: the lowest and highest valid values of each ranged key
// pass both the schema and check, one step outside fails both, and so
// for choices and list lengths. The schema is read by
// santhosh-tekuri/jsonschema, a general-purpose JSON Schema validator
// (see compileSchema); check is patch.Parse and Plan.Expand, as `sinter
// check` runs them.
func TestSchemaRangesMatchCheck(t *testing.T) {
	schema := compileSchema(t)
	check := func(src string) error {
		p, err := patch.Parse("walk.yaml", []byte(src))
		if err != nil {
			return err
		}
		_, err = p.Expand(patch.ExpandOptions{})
		return err
	}
	rules := patch.Rules()
	if len(rules) != len(rangeCases) {
		t.Errorf("%d rules, %d cases", len(rules), len(rangeCases))
	}
	for _, r := range rules {
		c, ok := rangeCases[r.At]
		if !ok {
			t.Errorf("no case for the rule at %q", r.At)
			continue
		}
		t.Run(r.At, func(t *testing.T) {
			for _, pr := range probes(r, c) {
				places := c.places
				if pr.high && c.high != nil {
					places = c.high
				}
				for _, pl := range places {
					src := pl(pr.value)
					if !strings.HasPrefix(src, "name:") {
						src = "name: walk\n" + src
					}
					if !strings.Contains(src, "partials:") {
						src += "\npartials: [{ratio: 1}]"
					}
					src += "\n"
					schemaErr := schema.Validate(asJSON(t, src))
					checkErr := check(src)
					switch {
					case pr.valid && schemaErr != nil:
						t.Errorf("the schema refuses a valid value:\n%s%v", src, schemaErr)
					case !pr.valid && schemaErr == nil:
						t.Errorf("the schema passes a value check refuses:\n%s", src)
					case pr.cross != "" && (checkErr == nil || !strings.Contains(checkErr.Error(), pr.cross)):
						t.Errorf("check should fail on the rule across keys %q:\n%s%v", pr.cross, src, checkErr)
					case pr.valid && pr.cross == "" && checkErr != nil:
						t.Errorf("check refuses a valid value:\n%s%v", src, checkErr)
					case !pr.valid && checkErr == nil:
						t.Errorf("check passes an invalid value:\n%s", src)
					}
				}
			}
		})
	}
}

// TestSchemaNamesIssueCases: the cases the schema once judged unlike
// check, each now judged alike.
func TestSchemaNamesIssueCases(t *testing.T) {
	schema := compileSchema(t)
	for _, c := range []struct {
		src   string
		valid bool
	}{
		{"velocities: [0]", false},
		{"velocities: [128]", false},
		{"partials: [{ratio: 1, tilt: 90}]", false},
		{"partials: [{harmonics: {count: 5000}}]", false},
		{"seed: 9007199254740993", false},
		{"body: [[100, 0]]", true},
		{"partials: [{ratio: 1, pitch: [[0, 10]]}]", true},
		{"envelope: {points: [[0, 1]]}", true},
	} {
		src := "name: x\n" + c.src + "\n"
		if !strings.Contains(src, "partials:") {
			src += "partials: [{ratio: 1}]\n"
		}
		if err := schema.Validate(asJSON(t, src)); (err == nil) != c.valid {
			t.Errorf("%q: schema says %v, want valid=%v", c.src, err, c.valid)
		}
	}
}

// TestDecimalPattern compares the pattern a level's text must match with
// strconv.ParseFloat and the range, over every decimal of up to four
// characters from a small alphabet and many random longer ones.
func TestDecimalPattern(t *testing.T) {
	shape := regexp.MustCompile(`^[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)$`) // the decoder's number, without the unit
	ranges := [][2]int{{-60, 0}, {-70, 0}, {-200, -20}, {0, 127}, {-5, 5}, {1, 1}, {0, 0}, {7, 1000}}
	var texts []string
	alphabet := "+-.01259"
	var grow func(prefix string)
	grow = func(prefix string) {
		if shape.MatchString(prefix) {
			texts = append(texts, prefix)
		}
		if len(prefix) == 4 {
			return
		}
		for _, c := range alphabet {
			grow(prefix + string(c))
		}
	}
	grow("")
	rng := rand.New(rand.NewPCG(1, 2))
	for range 20000 {
		s := []string{"", "-", "+"}[rng.IntN(3)] + strings.Repeat("0", rng.IntN(3)) + strconv.Itoa(rng.IntN(1200))
		if rng.IntN(2) == 0 {
			s += "." + strings.Repeat("0", rng.IntN(3)) + strconv.Itoa(rng.IntN(100))
		}
		texts = append(texts, s)
	}
	for _, r := range ranges {
		re := regexp.MustCompile(`^` + decimalPattern(r[0], r[1]) + `$`)
		for _, s := range texts {
			v, err := strconv.ParseFloat(s, 64)
			want := err == nil && v >= float64(r[0]) && v <= float64(r[1])
			if re.MatchString(s) != want {
				t.Errorf("%d..%d: pattern matches %q: %v, ParseFloat says in range: %v", r[0], r[1], s, !want, want)
			}
		}
	}
}

// TestNotePattern compares the pattern a key's text must match with
// patch.ParseNote over every letter, accidental spelling and octave from
// −3 to 11, and MIDI numbers from −300 to 300 with signs and zeros.
func TestNotePattern(t *testing.T) {
	var rule patch.Rule
	for _, r := range patch.Rules() {
		if r.Kind == patch.ValueNote {
			rule = r
		}
	}
	re := regexp.MustCompile(notePattern(t, rule))
	var texts []string
	for _, letter := range "ABCDEFGHabcdefgh" {
		for _, acc := range []string{"", "#", "s", "b", "##", "#s", "#b", "s#", "ss", "sb", "b#", "bs", "bb", "###", "S"} {
			for o := -3; o <= 11; o++ {
				texts = append(texts, fmt.Sprintf("%c%s%d", letter, acc, o))
			}
			texts = append(texts, string(letter)+acc+"-0", string(letter)+acc+"04", string(letter)+acc+"-01", string(letter)+acc+"+4")
		}
	}
	for n := -300; n <= 300; n++ {
		texts = append(texts, strconv.Itoa(n), "+"+strconv.Itoa(n), fmt.Sprintf("%04d", n), " "+strconv.Itoa(n))
	}
	texts = append(texts, "", "-", "+", "C", "4", "-0", "00")
	for _, s := range texts {
		_, err := patch.ParseNote(s)
		if re.MatchString(s) != (err == nil) {
			t.Errorf("%q: pattern matches %v, ParseNote says %v", s, re.MatchString(s), err)
		}
	}
}
