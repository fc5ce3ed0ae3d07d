package patch

import (
	"math"
	"slices"
	"strings"
)

// Rule is what one key of the patch language accepts, as far as a single
// value can say: the range of a number, the words it takes, the number of
// entries of a list. The decoder and the expander check values against
// these rules, and the JSON Schema of the patch language
// (patch/sinter.schema.json) is generated from the same rules, so an
// editor and check cannot disagree on a key's range. Rules across keys
// (exactly one group kind, rising points, hold + tail) are check's alone.
type Rule struct {
	// At names the key: its path from the top of a patch ("sample_rate",
	// "normalize.peak"), from a partial group ("group.tilt") or from an
	// envelope ("envelope.attack"); "[]" stands for every entry of a list,
	// "[0]" and "[1]" for a point's two coordinates, and a suffix such as
	// ":Hz" for a second form of the same key. A rule may serve several
	// keys with the same meaning (every switch, every note).
	At   string
	Kind ValueKind
	// Min and Max bound a number, inclusive; ±Inf where there is no bound.
	Min, Max float64
	// Values, when set, are the only whole numbers allowed.
	Values []int
	// Unit is how messages write the unit after a number: " s", " Hz".
	Unit string
	// Units are the units a Level may be written in, the first being what
	// a bare number or "dB" means.
	Units []string
	// Decibels says an Expression may be written in dB ("-6 dB").
	Decibels bool
	// Words are the texts the key takes, besides a number where its kind
	// has one; Noun names them in messages ("a spectrum").
	Words []string
	Noun  string
	// MinItems and MaxItems bound the entries of a List; MaxItems 0 is no
	// bound.
	MinItems, MaxItems int
	// Pattern is the regular expression (RE2 syntax, which JSON Schema's
	// ECMA-262 patterns read alike here) a Text must match.
	Pattern string
}

// ValueKind is the shape of the value a Rule checks.
type ValueKind int

// The kinds of value.
const (
	ValueText       ValueKind = iota // text matching Pattern
	ValueWords                       // one of the rule's Words
	ValueNumber                      // a number in Min..Max, or one of the Words
	ValueInteger                     // a whole number in Min..Max (one of Values, if set)
	ValueLevel                       // a number or a level such as "-1 dBFS", in Min..Max
	ValueExpression                  // a number or an expression, in Min..Max for every partial it is evaluated for
	ValueNote                        // a MIDI key number in Min..Max or a note name such as C4
	ValueList                        // a list of MinItems..MaxItems entries
	ValueHertz                       // a frequency written with its unit, such as "800 Hz", in Min..Max
)

// rules is every Rule, in the order they are declared; newRule adds to it.
var rules []*Rule

// newRule registers r, so that no rule the decoder checks can be missing
// from the schema.
func newRule(r Rule) *Rule {
	rules = append(rules, &r)
	return &r
}

// Rules returns a copy of every rule the decoder and the expander check,
// for the schema's generator and its tests.
func Rules() []Rule {
	out := make([]Rule, len(rules))
	for i, r := range rules {
		out[i] = *r
		out[i].Values = slices.Clone(r.Values)
		out[i].Units = slices.Clone(r.Units)
		out[i].Words = slices.Clone(r.Words)
	}
	return out
}

// words returns the rule's words as a message lists them.
func (r *Rule) words() string { return strings.Join(r.Words, ", ") }

var inf = math.Inf(1)

// A patch's keys, top-level first.
var (
	// nameRule's pattern keeps every file name portable; CheckName also
	// refuses Windows device names, which no pattern here can say.
	nameRule       = newRule(Rule{At: "name", Kind: ValueText, Pattern: `^[a-z0-9][a-z0-9._-]*$`})
	sampleRateRule = newRule(Rule{At: "sample_rate", Kind: ValueInteger, Min: MinSampleRate, Max: MaxSampleRate})
	bitDepthRule   = newRule(Rule{At: "bit_depth", Kind: ValueInteger, Min: 16, Max: 32, Values: []int{16, 24, 32}, Noun: "bit depth"})
	channelsRule   = newRule(Rule{At: "channels", Kind: ValueInteger, Min: 1, Max: 2})
	a4Rule         = newRule(Rule{At: "tuning.a4", Kind: ValueNumber, Min: 100, Max: 1000, Unit: " Hz"})
	// noteRule is every key: in the keys list, alone, and a range's ends.
	noteRule       = newRule(Rule{At: "keys[]", Kind: ValueNote, Min: 0, Max: 127})
	keysRule       = newRule(Rule{At: "keys", Kind: ValueList, MinItems: 1})
	keyStepRule    = newRule(Rule{At: "keys.step", Kind: ValueInteger, Min: 1, Max: 127})
	velocitiesRule = newRule(Rule{At: "velocities", Kind: ValueList, MinItems: 1})
	velocityRule   = newRule(Rule{At: "velocities[]", Kind: ValueInteger, Min: 1, Max: 127})
	holdRule       = newRule(Rule{At: "hold", Kind: ValueNumber, Min: 0, Max: MaxSeconds, Unit: " s"})
	tailRule       = newRule(Rule{At: "tail", Kind: ValueNumber, Min: 0, Max: MaxSeconds, Unit: " s", Words: []string{"auto"}})
	tailUntilRule  = newRule(Rule{At: "tail.until", Kind: ValueLevel, Min: -200, Max: -20, Units: []string{"dBFS"}})
	tailMaxRule    = newRule(Rule{At: "tail.max", Kind: ValueNumber, Min: 0, Max: MaxSeconds, Unit: " s"})
	bandLimitRule  = newRule(Rule{At: "band_limit", Kind: ValueNumber, Min: 0.01, Max: 0.5})
	bandFadeRule   = newRule(Rule{At: "band_fade", Kind: ValueNumber, Min: 0, Max: 1})
	normalizeRule  = newRule(Rule{At: "normalize", Kind: ValueWords, Words: []string{"off", "false"}})
	peakRule       = newRule(Rule{At: "normalize.peak", Kind: ValueLevel, Min: -60, Max: 0, Units: []string{"dBFS"}})
	truePeakRule   = newRule(Rule{At: "normalize.true_peak", Kind: ValueLevel, Min: -60, Max: 0, Units: []string{"dBTP"}})
	loudnessRule   = newRule(Rule{At: "normalize.loudness", Kind: ValueLevel, Min: -70, Max: 0, Units: []string{"LUFS"}})
	scopeRule      = newRule(Rule{At: "normalize.scope", Kind: ValueWords, Words: []string{"set", "key", "file"}, Noun: "a scope"})
	ceilingRule    = newRule(Rule{At: "normalize.ceiling", Kind: ValueLevel, Min: -60, Max: 0, Units: []string{"dBFS", "dBTP"}})
	// switchRule is every on/off key: dither, normalize.strict, loop.exact.
	switchRule    = newRule(Rule{At: "dither", Kind: ValueWords, Words: []string{"on", "off", "true", "false", "yes", "no"}})
	loopRule      = newRule(Rule{At: "loop", Kind: ValueWords, Words: []string{"off", "false", "auto", "on", "true"}})
	loopStartRule = newRule(Rule{At: "loop.start", Kind: ValueNumber, Min: 0, Max: MaxSeconds, Unit: " s"})
	// A loop shorter than 20 ms is not worth writing.
	loopLengthRule = newRule(Rule{At: "loop.length", Kind: ValueNumber, Min: 0.02, Max: MaxSeconds, Unit: " s"})
	crossfadeRule  = newRule(Rule{At: "loop.crossfade", Kind: ValueNumber, Min: 0.001, Max: 10, Unit: " s"})
	formatRule     = newRule(Rule{At: "output.format", Kind: ValueWords, Words: []string{"wav", "flac"}, Noun: "a file format"})
	roundRobinRule = newRule(Rule{At: "round_robin", Kind: ValueInteger, Min: 1, Max: MaxRoundRobin})
	// The seed is at most 2^53, the largest whole number every JSON
	// reader holds exactly.
	seedRule     = newRule(Rule{At: "seed", Kind: ValueInteger, Min: 0, Max: 1 << 53})
	partialsRule = newRule(Rule{At: "partials", Kind: ValueList, MinItems: 1})
	bodyRule     = newRule(Rule{At: "body", Kind: ValueList, MinItems: 1, MaxItems: maxListLen})
	bodyHzRule   = newRule(Rule{At: "body[][0]", Kind: ValueNumber, Min: 1, Max: 1e6, Unit: " Hz"})
	bodyDBRule   = newRule(Rule{At: "body[][1]", Kind: ValueNumber, Min: -200, Max: 60, Unit: " dB"})

	// Two layers share the 127 velocities, so the narrower holds at most
	// 63: no crossfade can be wider (check also holds it to the patch's
	// narrowest layer).
	layerCrossfadeRule = newRule(Rule{At: "layer_crossfade", Kind: ValueInteger, Min: 0, Max: 63})
)

// A group's keys.
var (
	// seriesRule counts a series: harmonics: N, harmonics.count, count,
	// cluster.count.
	seriesRule     = newRule(Rule{At: "group.harmonics", Kind: ValueInteger, Min: 1, Max: MaxSeries})
	firstRule      = newRule(Rule{At: "group.harmonics.first", Kind: ValueInteger, Min: 1, Max: 1_000_000})
	stepRule       = newRule(Rule{At: "group.harmonics.step", Kind: ValueInteger, Min: 1, Max: 1_000_000})
	countRule      = newRule(Rule{At: "group.count", Kind: ValueInteger, Min: 1, Max: MaxSeries})
	clusterRule    = newRule(Rule{At: "group.cluster.count", Kind: ValueInteger, Min: 1, Max: MaxSeries})
	ratioRule      = newRule(Rule{At: "group.ratio", Kind: ValueNumber, Min: 1e-6, Max: 1e6})
	ratiosRule     = newRule(Rule{At: "group.ratios", Kind: ValueList, MinItems: 1, MaxItems: maxListLen})
	ratiosItemRule = newRule(Rule{At: "group.ratios[]", Kind: ValueNumber, Min: 1e-6, Max: 1e6})
	clusterEndRule = newRule(Rule{At: "group.cluster.from", Kind: ValueNumber, Min: 1e-6, Max: 1e6})
	modesRule      = newRule(Rule{At: "group.modes", Kind: ValueWords, Words: modeTableNames(), Noun: "a mode table"})
	spectrumRule   = newRule(Rule{At: "group.spectrum", Kind: ValueWords, Words: []string{"sawtooth", "square", "triangle"}, Noun: "a spectrum"})
	amplitudesRule = newRule(Rule{At: "group.amplitudes", Kind: ValueList, MinItems: 1, MaxItems: maxListLen})
	phaseRule      = newRule(Rule{At: "group.phase", Kind: ValueExpression, Min: -inf, Max: inf, Words: []string{"random", "schroeder"}})
	stiffnessRule  = newRule(Rule{At: "group.stiffness", Kind: ValueExpression, Min: 0, Max: 1})
	tiltRule       = newRule(Rule{At: "group.tilt", Kind: ValueExpression, Min: -60, Max: 60, Unit: " dB/octave"})
	detuneRule     = newRule(Rule{At: "group.detune", Kind: ValueExpression, Min: -4800, Max: 4800, Unit: " cents"})
	voicesRule     = newRule(Rule{At: "group.unison.voices", Kind: ValueInteger, Min: 1, Max: MaxUnison})
	spreadRule     = newRule(Rule{At: "group.unison.spread", Kind: ValueNumber, Min: 0, Max: maxSpread, Unit: " cents"})
	widthRule      = newRule(Rule{At: "group.unison.width", Kind: ValueNumber, Min: 0, Max: 1})
	panRule        = newRule(Rule{At: "group.pan", Kind: ValueExpression, Min: -1, Max: 1})
	panWordRule    = newRule(Rule{At: "group.pan.rule", Kind: ValueWords, Words: []string{"alternate", "random", "ratio"}, Noun: "a pan rule"})
	panWidthRule   = newRule(Rule{At: "group.pan.width", Kind: ValueNumber, Min: 0, Max: 1})
	pitchRule      = newRule(Rule{At: "group.pitch", Kind: ValueList, MinItems: 1, MaxItems: maxListLen})
	pitchTimeRule  = newRule(Rule{At: "group.pitch[][0]", Kind: ValueNumber, Min: 0, Max: MaxSeconds, Unit: " s"})
	pitchCentsRule = newRule(Rule{At: "group.pitch[][1]", Kind: ValueNumber, Min: -4800, Max: 4800, Unit: " cents"})
	vibRateRule    = newRule(Rule{At: "group.vibrato.rate", Kind: ValueExpression, Min: 0, Max: 100, Unit: " Hz"})
	vibDepthRule   = newRule(Rule{At: "group.vibrato.depth", Kind: ValueExpression, Min: 0, Max: 1200, Unit: " cents"})
	vibDelayRule   = newRule(Rule{At: "group.vibrato.delay", Kind: ValueExpression, Min: 0, Max: MaxSeconds, Unit: " s"})
	vibFadeRule    = newRule(Rule{At: "group.vibrato.fade", Kind: ValueExpression, Min: 0, Max: MaxSeconds, Unit: " s"})
	driftRateRule  = newRule(Rule{At: "group.drift.rate", Kind: ValueExpression, Min: 0, Max: 100, Unit: " Hz"})
	driftDepthRule = newRule(Rule{At: "group.drift.depth", Kind: ValueExpression, Min: 0, Max: 1200, Unit: " cents"})
	// A band edge is a ratio to the fundamental, as a partial's is, or a
	// frequency in hertz such as "800 Hz": two rules for one key, each
	// serving low and high. No band limit lies above 192 kHz, half the
	// highest sample rate.
	noiseRatioRule = newRule(Rule{At: "group.noise.low", Kind: ValueNumber, Min: 1e-6, Max: 1e6})
	noiseHzRule    = newRule(Rule{At: "group.noise.low:Hz", Kind: ValueHertz, Min: 1, Max: 200000, Unit: " Hz"})
	noiseSlopeRule = newRule(Rule{At: "group.noise.slope", Kind: ValueNumber, Min: -60, Max: 60, Unit: " dB/octave"})
	noiseWidthRule = newRule(Rule{At: "group.noise.width", Kind: ValueNumber, Min: 0, Max: 1})
)

// An envelope's keys.
var (
	// timeRule is attack, decay and release.
	timeRule     = newRule(Rule{At: "envelope.attack", Kind: ValueExpression, Min: 0, Max: MaxSeconds, Unit: " s"})
	sustainRule  = newRule(Rule{At: "envelope.sustain", Kind: ValueExpression, Min: 0, Max: 1, Decibels: true})
	curveRule    = newRule(Rule{At: "envelope.curve", Kind: ValueWords, Words: []string{"exponential", "linear"}, Noun: "an envelope curve"})
	pointsRule   = newRule(Rule{At: "envelope.points", Kind: ValueList, MinItems: 1, MaxItems: MaxEnvelopePoints})
	envTimeRule  = newRule(Rule{At: "envelope.points[][0]", Kind: ValueNumber, Min: 0, Max: MaxSeconds, Unit: " s"})
	envLevelRule = newRule(Rule{At: "envelope.points[][1]", Kind: ValueNumber, Min: 0, Max: 1})
	// The stretch's upper bound depends on the points (their last time
	// stretched may not pass MaxSeconds), so only its lower bound is the
	// key's own.
	stretchRule = newRule(Rule{At: "envelope.stretch", Kind: ValueExpression, Min: 0, Max: inf})
)
