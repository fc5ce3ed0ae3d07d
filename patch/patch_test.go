package patch_test

import (
	"crypto/sha256"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strings"
	"testing"

	"sinter/patch"
)

// parseErrors parses src as file and returns the errors, failing the test
// unless Parse refused it with a non-empty ErrorList whose every entry
// names file.
func parseErrors(t *testing.T, file, src string) patch.ErrorList {
	t.Helper()
	p, err := patch.Parse(file, []byte(src))
	if err == nil {
		t.Fatalf("Parse accepted the patch (%+v); want an error", p)
	}
	if p != nil {
		t.Errorf("Parse returned a patch along with the error %v", err)
	}
	list, ok := err.(patch.ErrorList)
	if !ok {
		t.Fatalf("Parse error is a %T; want patch.ErrorList", err)
	}
	var viaAs patch.ErrorList
	if !errors.As(err, &viaAs) {
		t.Fatalf("errors.As(%v, *patch.ErrorList) = false", err)
	}
	if len(list) == 0 {
		t.Fatalf("Parse returned an empty ErrorList")
	}
	for i, e := range list {
		if e == nil {
			t.Fatalf("error %d is nil", i)
		}
		if e.File != file {
			t.Errorf("error %d (%v) has File %q; want %q", i, e, e.File, file)
		}
	}
	return list
}

func mustParse(t *testing.T, file, src string) *patch.Patch {
	t.Helper()
	p, err := patch.Parse(file, []byte(src))
	if err != nil {
		t.Fatalf("Parse:\n%v\nsource:\n%s", err, src)
	}
	return p
}

// badPatches are patches with one problem each, and where the first error
// must point: line and column are 1-based, counted in bytes.
var badPatches = []struct {
	name, src    string
	line, column int
	path, msg    string
	errs         int // how many errors in all; 0 means 1
}{
	{
		name: "crossfade wider than the narrowest layer",
		src:  "name: x\nvelocities: [40, 60, 127]\nlayer_crossfade:   30\npartials: [{ratio: 1}]\n",
		line: 3, column: 20, path: "layer_crossfade",
		msg: "a crossfade over 30 velocities is wider than the narrowest layer, velocity 60's 41–60 (20 velocities); at most 20",
	},
	{
		name: "crossfade beyond any two layers",
		src:  "name: x\nvelocities: [40, 60, 127]\nlayer_crossfade: 64\npartials: [{ratio: 1}]\n",
		line: 3, column: 18, path: "layer_crossfade", msg: "64 is out of range: expected 0..63",
	},
	{
		name: "crossfade not a whole number",
		src:  "name: x\nlayer_crossfade: 8.5\npartials: [{ratio: 1}]\n",
		line: 2, column: 18, path: "layer_crossfade", msg: "expected a whole number",
	},
	{
		name: "misspelt top-level key",
		src: `name: harbor-glass
sampel_rate: 48000
partials:
  - harmonics: 8
`,
		line: 2, column: 1, path: "sampel_rate", msg: `did you mean "sample_rate"`,
	},
	{
		name: "unknown key far from any known one",
		src: `name: harbor-glass
zzzzzzzzzzzz: 1
partials:
  - harmonics: 8
`,
		line: 2, column: 1, path: "zzzzzzzzzzzz", msg: "expected one of name, sample_rate",
	},
	{
		name: "unknown key inside envelope",
		src: `name: harbor-glass
envelope:
  attack: 0.01
  relase: 0.5
partials:
  - harmonics: 8
`,
		line: 4, column: 3, path: "envelope.relase", msg: `unknown key "relase" (did you mean "release"?)`,
	},
	{
		name: "unknown key inside a group envelope",
		src: `name: harbor-glass
partials:
  - harmonics: 8
    envelope: {attack: 0.01, sustian: 0.5}
`,
		line: 4, column: 30, path: "partials[0].envelope.sustian", msg: `did you mean "sustain"`,
	},
	{
		name: "wrong type",
		src: `name: harbor-glass
sample_rate: fast
partials:
  - harmonics: 8
`,
		line: 2, column: 14, path: "sample_rate", msg: `expected a number, found the text "fast"`,
	},
	{
		name: "sample rate out of range",
		src: `name: harbor-glass
sample_rate: 1000
partials:
  - harmonics: 8
`,
		line: 2, column: 14, path: "sample_rate", msg: "1000 is out of range: expected 8000..384000",
	},
	{
		// 2^53 + 1, which a float64 rounds to 2^53, the largest seed.
		name: "seed above 2^53",
		src: `name: harbor-glass
seed: 9007199254740993
partials: [{ratio: 1}]
`,
		line: 2, column: 7, path: "seed", msg: "9007199254740993 is out of range: expected 0..9007199254740992",
	},
	{
		name: "seed above 2^53 in hex",
		src: `name: harbor-glass
seed: 0x20000000000001
partials: [{ratio: 1}]
`,
		line: 2, column: 7, path: "seed", msg: "0x20000000000001 is out of range: expected 0..9007199254740992",
	},
	{
		name: "sample rate not whole",
		src: `name: harbor-glass
sample_rate: 44100.5
partials:
  - harmonics: 8
`,
		line: 2, column: 14, path: "sample_rate", msg: "expected a whole number, found 44100.5",
	},
	{
		name: "unsupported bit depth",
		src: `name: harbor-glass
bit_depth: 20
partials:
  - harmonics: 8
`,
		line: 2, column: 12, path: "bit_depth", msg: "bit depth 20 is not supported",
	},
	{
		name: "three channels",
		src: `name: harbor-glass
channels: 3
partials:
  - harmonics: 8
`,
		line: 2, column: 11, path: "channels", msg: "3 is out of range: expected 1..2",
	},
	{
		name: "tuning out of range",
		src: `name: harbor-glass
tuning: {a4: 50}
partials:
  - harmonics: 8
`,
		line: 2, column: 14, path: "tuning.a4", msg: "50 Hz is out of range: expected 100..1000 Hz",
	},
	{
		// MIDI 1.0 Detailed Specification: a note-on of velocity 0 is a
		// note-off, so layers run 1..127.
		name: "velocity zero",
		src: `name: harbor-glass
velocities: [0]
partials:
  - harmonics: 8
`,
		line: 2, column: 14, path: "velocities[0]", msg: "0 is out of range: expected 1..127",
	},
	{
		// MIDI 1.0 Detailed Specification: velocity is a 7-bit value.
		name: "velocity 200",
		src: `name: harbor-glass
velocities: [200]
partials:
  - harmonics: 8
`,
		line: 2, column: 14, path: "velocities[0]", msg: "200 is out of range: expected 1..127",
	},
	{
		name: "duplicate velocity",
		src: `name: harbor-glass
velocities: [64, 100, 64]
partials:
  - harmonics: 8
`,
		line: 2, column: 23, path: "velocities[2]", msg: "velocity 64 is listed twice",
	},
	{
		name: "empty velocity list",
		src: `name: harbor-glass
velocities: []
partials:
  - harmonics: 8
`,
		line: 2, column: 13, path: "velocities", msg: "the velocity list is empty",
	},
	{
		name: "duplicate key in a key list",
		src: `name: harbor-glass
keys: [C4, 60]
partials:
  - harmonics: 8
`,
		line: 2, column: 12, path: "keys[1]", msg: "key C4 is listed twice (first at line 2)",
	},
	{
		name: "duplicate key spelt two ways on two lines",
		src: `name: harbor-glass
keys:
  - "F#3"
  - Gb3
partials:
  - harmonics: 8
`,
		line: 4, column: 5, path: "keys[1]", msg: "key F#3 is listed twice (first at line 3)",
	},
	{
		name: "key range runs backwards",
		src: `name: harbor-glass
keys: {from: C6, to: C2}
partials:
  - harmonics: 8
`,
		line: 2, column: 7, path: "keys", msg: "the range runs backwards: to (C2) is below from (C6)",
	},
	{
		name: "key range without to",
		src: `name: harbor-glass
keys: {from: C2, step: 3}
partials:
  - harmonics: 8
`,
		line: 2, column: 7, path: "keys", msg: "a key range needs from and to",
	},
	{
		name: "key range step zero",
		src: `name: harbor-glass
keys: {from: C2, to: C6, step: 0}
partials:
  - harmonics: 8
`,
		line: 2, column: 32, path: "keys.step", msg: "0 is out of range: expected 1..127",
	},
	{
		name: "empty key list",
		src: `name: harbor-glass
keys: []
partials:
  - harmonics: 8
`,
		line: 2, column: 7, path: "keys", msg: "the key list is empty",
	},
	{
		name: "bad note name",
		src: `name: harbor-glass
keys: [C4, H4]
partials:
  - harmonics: 8
`,
		line: 2, column: 12, path: "keys[1]", msg: `"H4" is not a note`,
	},
	{
		name: "key that is a list",
		src: `name: harbor-glass
keys: [C4, [D4]]
partials:
  - harmonics: 8
`,
		line: 2, column: 12, path: "keys[1]", msg: "expected a note such as C4 or a MIDI number, found a list",
	},
	{
		// YAML 1.2 core schema (§10.2.1.4): .nan and .inf are floats, but not
		// finite numbers.
		name: "NaN hold",
		src: `name: harbor-glass
hold: .nan
partials:
  - harmonics: 8
`,
		line: 2, column: 7, path: "hold", msg: "expected a finite number, found .nan",
	},
	{
		name: "infinite hold",
		src: `name: harbor-glass
hold: .inf
partials:
  - harmonics: 8
`,
		line: 2, column: 7, path: "hold", msg: "expected a finite number, found .inf",
	},
	{
		name: "negative infinite tail",
		src: `name: harbor-glass
tail: -.Inf
partials:
  - harmonics: 8
`,
		line: 2, column: 7, path: "tail", msg: "expected a finite number, found -.Inf",
	},
	{
		name: "negative hold",
		src: `name: harbor-glass
hold: -0.5
partials:
  - harmonics: 8
`,
		line: 2, column: 7, path: "hold", msg: "-0.5 s is out of range: expected 0..600 s",
	},
	{
		name: "hold and tail over 600 s",
		src: `name: harbor-glass
hold: 400
tail: 300
partials:
  - harmonics: 8
`,
		line: 3, column: 7, path: "tail", msg: "hold + tail is 700 s; a file may last at most 600 s",
	},
	{
		name: "band limit above half the sample rate",
		src: `name: harbor-glass
band_limit: 0.6
partials:
  - harmonics: 8
`,
		line: 2, column: 13, path: "band_limit", msg: "0.6 is out of range: expected 0.01..0.5",
	},
	{
		name: "missing name",
		src: `partials:
  - harmonics: 8
`,
		line: 1, column: 1, path: "name", msg: "the patch needs a name",
	},
	{
		name: "bad name",
		src: `name: Harbor Glass
partials:
  - harmonics: 8
`,
		line: 1, column: 7, path: "name", msg: `name "Harbor Glass" must start with a-z or 0-9`,
	},
	{
		name: "name with a slash",
		src: `name: ../harbor-glass
partials:
  - harmonics: 8
`,
		line: 1, column: 7, path: "name", msg: `name "../harbor-glass" must start with a-z or 0-9`,
	},
	{
		name: "missing partials",
		src: `name: harbor-glass
`,
		line: 1, column: 1, path: "partials", msg: "the patch needs a partials list",
	},
	{
		name: "empty partials",
		src: `name: harbor-glass
partials: []
`,
		line: 2, column: 11, path: "partials", msg: "the partials list is empty",
	},
	{
		name: "partials not a list",
		src: `name: harbor-glass
partials: {harmonics: 8}
`,
		line: 2, column: 11, path: "partials", msg: "expected a list of partial groups, found a mapping",
	},
	{
		name: "unknown mode table",
		src: `name: harbor-glass
partials:
  - {modes: gong}
`,
		line: 3, column: 13, path: "partials[0].modes", msg: `"gong" is not a mode table; expected one of bar, drumhead`,
	},
	{
		name: "unknown spectrum",
		src: `name: harbor-glass
partials:
  - {spectrum: saw, count: 8}
`,
		line: 3, column: 16, path: "partials[0].spectrum", msg: `"saw" is not a spectrum; expected one of sawtooth, square, triangle`,
	},
	{
		name: "count on a harmonic series",
		src: `name: harbor-glass
partials:
  - {harmonics: 8, count: 4}
`,
		line: 3, column: 27, path: "partials[0].count", msg: "count does not apply to a harmonics group",
	},
	{
		name: "stiffness on a ratio",
		src: `name: harbor-glass
partials:
  - {ratio: 2.5, stiffness: 0.001}
`,
		line: 3, column: 29, path: "partials[0].stiffness", msg: "stiffness does not apply to a ratio group",
	},
	{
		name: "amplitudes do not match ratios",
		src: `name: harbor-glass
partials:
  - {ratios: [1, 2.7, 5.4], amplitudes: [1, 0.5]}
`,
		line: 3, column: 41, path: "partials[0].amplitudes", msg: "2 amplitudes for 3 ratios",
	},
	{
		name: "too many unison voices",
		src: `name: harbor-glass
partials:
  - {ratio: 1, unison: {voices: 40}}
`,
		line: 3, column: 33, path: "partials[0].unison.voices", msg: "40 is out of range: expected 1..16",
	},
	{
		name: "unknown pan rule",
		src: `name: harbor-glass
partials:
  - {ratio: 1, pan: {rule: swirl}}
`,
		line: 3, column: 28, path: "partials[0].pan.rule", msg: `"swirl" is not a pan rule; expected one of alternate, random, ratio`,
	},
	{
		name: "body points not rising",
		src: `name: harbor-glass
body: [[800, 3], [400, 0]]
partials: [{ratio: 1}]
`,
		line: 2, column: 19, path: "body[1][0]", msg: "the points must rise in frequency: 400 Hz follows 800 Hz",
	},
	{
		name: "cluster range upside down",
		src: `name: harbor-glass
partials:
  - {cluster: {count: 5, from: 4, to: 2}}
`,
		line: 3, column: 15, path: "partials[0].cluster", msg: "the cluster's range runs from 4 down to 2",
	},
	{
		name: "pitch points not rising",
		src: `name: harbor-glass
partials:
  - {ratio: 1, pitch: [[0.2, -30], [0.1, 0]]}
`,
		line: 3, column: 37, path: "partials[0].pitch[1][0]", msg: "the points must rise in time: 0.1 s follows 0.2 s",
	},
	{
		name: "unknown envelope curve",
		src: `name: harbor-glass
envelope: {curve: cubic}
partials: [{ratio: 1}]
`,
		line: 2, column: 19, path: "envelope.curve", msg: `"cubic" is not an envelope curve; expected one of exponential, linear`,
	},
	{
		name: "points with an attack",
		src: `name: harbor-glass
envelope: {points: [[0, 0], [0.1, 1]], attack: 0.2}
partials: [{ratio: 1}]
`,
		line: 2, column: 11, path: "envelope.attack", msg: "an envelope with points has no attack",
	},
	{
		name: "point level above 1",
		src: `name: harbor-glass
envelope: {points: [[0, 0], [0.1, 1.5]]}
partials: [{ratio: 1}]
`,
		line: 2, column: 35, path: "envelope.points[1][1]", msg: "1.5 is out of range: expected 0..1",
	},
	{
		name: "output dir climbing out",
		src: `name: harbor-glass
output: {dir: ../../etc}
partials: [{ratio: 1}]
`,
		line: 2, column: 15, path: "output.dir", msg: `output dir "../../etc" must be a path inside the patch's folder`,
	},
	{
		name: "output format unknown",
		src: `name: harbor-glass
output: {format: mp3}
partials: [{ratio: 1}]
`,
		line: 2, column: 18, path: "output.format", msg: `"mp3" is not a file format; expected one of wav, flac`,
	},
	{
		name: "output format flac of float samples",
		src: `name: harbor-glass
bit_depth: 32
output: {format: flac}
partials: [{ratio: 1}]
`,
		line: 3, column: 18, path: "output.format", msg: "FLAC holds integer samples, and bit_depth 32 is floating point",
	},
	{
		name: "output dir absolute",
		src: `name: harbor-glass
output: {dir: /var/tmp/set}
partials: [{ratio: 1}]
`,
		line: 2, column: 15, path: "output.dir", msg: "without '..' or a leading '/'",
	},
	{
		name: "name that is a device",
		src: `name: nul
partials: [{ratio: 1}]
`,
		line: 1, column: 7, path: "name", msg: `name "nul" is a device name on Windows`,
	},
	{
		name: "hold and tail zero",
		src: `name: harbor-glass
hold: 0
tail: 0
partials: [{ratio: 1}]
`,
		line: 3, column: 7, path: "tail", msg: "hold + tail is 0 s; a file needs some length",
	},
	{
		name: "huge number",
		src: `name: harbor-glass
hold: 1e300
partials: [{ratio: 1}]
`,
		line: 2, column: 7, path: "hold", msg: "1e+300 s is out of range: expected 0..600 s",
	},
	{
		// The escape makes the file's text longer than the expression's,
		// so columns inside it cannot be mapped onto the file: the error
		// stands at the scalar and counts columns in the expression.
		name: "expression with an escape, double-quoted",
		src: `name: harbor-glass
partials:
  - harmonics: 4
    amplitude: "1/\x28n"
`,
		line: 4, column: 16, path: "partials[0].amplitude", msg: `in expression "1/(n": column 5: expected ")" to close "(" at column 3`,
	},
	{
		name: "expression folded over two lines",
		src: `name: harbor-glass
partials:
  - harmonics: 4
    amplitude: 1/(n
      + 2
`,
		line: 4, column: 16, path: "partials[0].amplitude", msg: `in expression "1/(n + 2": column 9: expected ")" to close "(" at column 3`,
	},
	{
		name: "group with harmonics and ratio",
		src: `name: harbor-glass
partials:
  - {harmonics: 8, ratio: 2}
`,
		line: 3, column: 5, path: "partials[0]", msg: "a group needs exactly one of harmonics, ratio, ratios, modes, spectrum, cluster, noise; found harmonics and ratio",
	},
	{
		name: "group with neither harmonics nor ratio",
		src: `name: harbor-glass
partials:
  - harmonics: 8
  - amplitude: 0.5
`,
		line: 4, column: 5, path: "partials[1]", msg: "a group needs exactly one of harmonics",
	},
	{
		name: "harmonics count 0",
		src: `name: harbor-glass
partials:
  - harmonics: 0
`,
		line: 3, column: 16, path: "partials[0].harmonics", msg: "0 is out of range: expected 1..4096",
	},
	{
		name: "harmonics count 5000",
		src: `name: harbor-glass
partials:
  - harmonics: 5000
`,
		line: 3, column: 16, path: "partials[0].harmonics", msg: "5000 is out of range: expected 1..4096",
	},
	{
		name: "harmonic series without count",
		src: `name: harbor-glass
partials:
  - harmonics: {first: 1, step: 2}
`,
		line: 3, column: 16, path: "partials[0].harmonics", msg: "a harmonic series needs a count",
	},
	{
		name: "ratio zero",
		src: `name: harbor-glass
partials:
  - ratio: 0
`,
		line: 3, column: 12, path: "partials[0].ratio", msg: "0 is out of range: expected 1e-06..1e+06",
	},
	{
		// Column arithmetic: the node starts at the opening quote (column
		// 16); the expression starts one column later (17); "1/(n" is 4
		// bytes, so its end is column 21, and its "(" is column 19, which
		// the message gives as a file column too.
		name: "expression syntax error, double-quoted",
		src: `name: harbor-glass
partials:
  - harmonics: 8
    amplitude: "1/(n"
`,
		line: 4, column: 21, path: "partials[0].amplitude", msg: `in expression "1/(n": expected ")" to close "(" at column 19, found end of expression`,
	},
	{
		name: "expression syntax error, single-quoted",
		src: `name: harbor-glass
partials:
  - harmonics: 8
    amplitude: '1/(n'
`,
		line: 4, column: 21, path: "partials[0].amplitude", msg: `expected ")" to close "("`,
	},
	{
		// Plain scalar: the expression starts at the node, column 16.
		name: "expression syntax error, unquoted",
		src: `name: harbor-glass
partials:
  - harmonics: 8
    amplitude: 1/(n
`,
		line: 4, column: 20, path: "partials[0].amplitude", msg: `expected ")" to close "(" at column 18,`,
	},
	{
		// Blanks inside the quotes count: "  1/(n" ends at 17+6 = 23.
		name: "expression syntax error, quoted with leading blanks",
		src: `name: harbor-glass
partials:
  - harmonics: 8
    amplitude: "  1/(n"
`,
		line: 4, column: 23, path: "partials[0].amplitude", msg: `expected ")" to close "("`,
	},
	{
		// The second '*' of "2 ** n" is byte 3 of the expression: 17+3.
		name: "expression with a bad operator, double-quoted",
		src: `name: harbor-glass
partials:
  - harmonics: 8
    amplitude: "2 ** n"
`,
		line: 4, column: 20, path: "partials[0].amplitude", msg: `unexpected "*"`,
	},
	{
		// In a flow mapping: the quote is column 31, the expression 32..35.
		name: "expression syntax error in a flow mapping",
		src: `name: harbor-glass
partials:
  - {harmonics: 8, amplitude: "1/(n"}
`,
		line: 3, column: 36, path: "partials[0].amplitude", msg: `expected ")" to close "("`,
	},
	{
		name: "expression with an unexpected character, unquoted",
		src: `name: harbor-glass
partials:
  - harmonics: 8
    phase: n & 2
`,
		line: 4, column: 14, path: "partials[0].phase", msg: `unexpected character "&"`,
	},
	{
		name: "unknown variable with a suggestion",
		src: `name: harbor-glass
partials:
  - harmonics: 8
    amplitude: 0.5*vell
`,
		line: 4, column: 20, path: "partials[0].amplitude", msg: `unknown name "vell"; variables are n, ratio, hz, f0, key, vel (did you mean "vel"?)`,
	},
	{
		name: "unknown variable in the envelope",
		src: `name: harbor-glass
envelope:
  release: "0.2 * kye"
partials:
  - harmonics: 8
`,
		line: 3, column: 19, path: "envelope.release", msg: `(did you mean "key"?)`,
	},
	{
		name: "dB not allowed on phase",
		src: `name: harbor-glass
partials:
  - harmonics: 8
    phase: 90 dB
`,
		line: 4, column: 12, path: "partials[0].phase", msg: "a level in dB is not allowed here",
	},
	{
		name: "dB not allowed on attack",
		src: `name: harbor-glass
envelope: {attack: -20 dB}
partials:
  - harmonics: 8
`,
		line: 2, column: 20, path: "envelope.attack", msg: "a level in dB is not allowed here",
	},
	{
		name: "amplitude that is a list",
		src: `name: harbor-glass
partials:
  - harmonics: 8
    amplitude: [1, 2]
`,
		line: 4, column: 16, path: "partials[0].amplitude", msg: "expected a number or an expression, found a list",
	},
	{
		// dBFS: 0 dBFS is full scale, so a peak above it would clip (common practice).
		name: "normalize peak above full scale",
		src: `name: harbor-glass
normalize: {peak: +3 dBFS}
partials:
  - harmonics: 8
`,
		line: 2, column: 19, path: "normalize.peak", msg: "3 dBFS is out of range: expected -60..0 dBFS",
	},
	{
		name: "normalize loud",
		src: `name: harbor-glass
normalize: loud
partials:
  - harmonics: 8
`,
		line: 2, column: 12, path: "normalize", msg: `expected off or a mapping such as {peak: -1 dBFS}, found the text "loud"`,
	},
	{
		name: "normalize peak not a level",
		src: `name: harbor-glass
normalize: {peak: loud}
partials:
  - harmonics: 8
`,
		line: 2, column: 19, path: "normalize.peak", msg: "expected a level such as -1 dBFS",
	},
	{
		name: "mapping key set twice",
		src: `name: harbor-glass
name: puzzle-pad
partials:
  - harmonics: 8
`,
		line: 2, column: 1, path: "name", msg: `key "name" is set twice (first at line 1)`,
	},
	{
		name: "group key set twice",
		src: `name: harbor-glass
partials:
  - harmonics: 8
    amplitude: 1/n
    amplitude: 0.5
`,
		line: 5, column: 5, path: "partials[0].amplitude", msg: `key "amplitude" is set twice (first at line 4)`,
	},
	{
		name: "output dir not text",
		src: `name: harbor-glass
output: {dir: [a]}
partials:
  - harmonics: 8
`,
		line: 2, column: 15, path: "output.dir", msg: "expected text, found a list",
	},
	{
		name: "merge key with a scalar",
		src: `name: harbor-glass
partials:
  - <<: 3
    harmonics: 8
`,
		line: 3, column: 9, path: "partials[0]", msg: "a merge key (<<) takes a mapping or a list of mappings",
	},
	{
		// The parser says only "line 3" (where the scalar before the tab
		// starts); the error must point at the tab itself.
		name: "tab in indentation",
		src:  "name: harbor-glass\npartials:\n  - harmonics: 8\n\t  amplitude: 0.5\n",
		line: 4, column: 1, path: "", msg: "not valid YAML: found a tab character that violates indentation",
	},
	{
		name: "tab starting a mapping",
		src:  "name: harbor-glass\nenvelope:\n\tattack: 0.1\npartials:\n  - harmonics: 8\n",
		line: 3, column: 1, path: "", msg: "not valid YAML: found character that cannot start any token",
	},
	{
		name: "tab after spaces",
		src:  "name: harbor-glass\npartials:\n  - harmonics: 8\n   \tamplitude: 0.5\n",
		line: 4, column: 4, path: "", msg: "tab character",
	},
	{
		name: "bad indentation",
		src:  "name: harbor-glass\n  hold: 1\npartials:\n  - harmonics: 8\n",
		line: 2, column: 3, path: "", msg: "not valid YAML: mapping values are not allowed in this context",
	},
	{
		name: "empty patch",
		src:  "",
		line: 1, column: 1, path: "", msg: "the patch is empty",
	},
	{
		name: "only a comment",
		src:  "# harbor-glass, to do\n",
		line: 1, column: 1, path: "", msg: "the patch is empty",
	},
	{
		name: "a list instead of a mapping",
		src:  "- harmonics: 8\n",
		line: 1, column: 1, path: "", msg: "expected a mapping of keys (name, sample_rate",
		errs: 3, // and neither name nor partials
	},
}

func TestParseBadPatches(t *testing.T) {
	for _, tt := range badPatches {
		t.Run(tt.name, func(t *testing.T) {
			const file = "patches/bad.yaml"
			list := parseErrors(t, file, tt.src)
			e := list[0]
			if e.Line != tt.line || e.Column != tt.column || e.Path != tt.path || !strings.Contains(e.Msg, tt.msg) {
				t.Errorf("first error:\n  %v\nwant at %d:%d, path %q, message containing %q\nall errors:\n%v",
					e, tt.line, tt.column, tt.path, tt.msg, list)
			}
			if want := max(tt.errs, 1); len(list) != want {
				t.Errorf("got %d errors; want %d:\n%v", len(list), want, list)
			}
		})
	}
}

// Each problem is reported, not just the first, and in file order.
func TestParseCollectsErrorsInFileOrder(t *testing.T) {
	src := `partials:
  - harmonics: 0
    amplitude: 1/(n
hold: -1
sampel_rate: 48000
keys: [H4, C4, C4]
velocities: [0]
`
	list := parseErrors(t, "harbor-glass.yaml", src)
	want := []struct {
		line, col int
		path      string
	}{
		{1, 1, "name"},
		{2, 16, "partials[0].harmonics"},
		{3, 20, "partials[0].amplitude"},
		{4, 7, "hold"},
		{5, 1, "sampel_rate"},
		{6, 8, "keys[0]"},
		{6, 16, "keys[2]"},
		{7, 14, "velocities[0]"},
	}
	if len(list) != len(want) {
		t.Fatalf("got %d errors; want %d:\n%v", len(list), len(want), list)
	}
	for i, w := range want {
		if e := list[i]; e.Line != w.line || e.Column != w.col || e.Path != w.path {
			t.Errorf("error %d = %v; want at %d:%d, path %q\nall errors:\n%v", i, e, w.line, w.col, w.path, list)
		}
	}
}

func TestErrorFormat(t *testing.T) {
	tests := []struct {
		err  error
		want string
	}{
		{&patch.Error{File: "harbor-glass.yaml", Line: 3, Column: 7, Path: "keys[1]", Msg: "key C4 is listed twice"},
			"harbor-glass.yaml:3:7: keys[1]: key C4 is listed twice"},
		{&patch.Error{File: "harbor-glass.yaml", Line: 1, Column: 1, Msg: "the patch is empty"},
			"harbor-glass.yaml:1:1: the patch is empty"},
		{&patch.Error{File: "harbor-glass.yaml", Path: "keys", Msg: "no place"},
			"harbor-glass.yaml: keys: no place"},
		{&patch.Error{File: "harbor-glass.yaml", Msg: "cannot read the patch"},
			"harbor-glass.yaml: cannot read the patch"},
		{patch.ErrorList{
			{File: "a.yaml", Line: 1, Column: 1, Path: "name", Msg: "one"},
			{File: "a.yaml", Line: 2, Column: 5, Path: "hold", Msg: "two"},
		}, "a.yaml:1:1: name: one\na.yaml:2:5: hold: two"},
	}
	for _, tt := range tests {
		if got := tt.err.Error(); got != tt.want {
			t.Errorf("Error() = %q; want %q", got, tt.want)
		}
	}

	_, err := patch.Parse("puzzle-pad.yaml", []byte("name: puzzle-pad\nsampel_rate: 48000\npartials: [{harmonics: 8}]\n"))
	want := `puzzle-pad.yaml:2:1: sampel_rate: unknown key "sampel_rate" (did you mean "sample_rate"?)`
	if err == nil || err.Error() != want {
		t.Errorf("Parse error = %v; want %s", err, want)
	}
}

// billionLaughs builds a patch whose partials list, followed through its
// aliases, holds levels^width nodes: width aliases of the level below, levels deep.
func billionLaughs(levels, width int) string {
	var b strings.Builder
	b.WriteString("name: harbor-glass\npartials: ")
	var build func(level int) string
	build = func(level int) string {
		if level == 0 {
			return fmt.Sprintf("&l0 [%s]", strings.TrimSuffix(strings.Repeat("{ratio: 1}, ", width), ", "))
		}
		items := []string{build(level - 1)}
		for range width - 1 {
			items = append(items, fmt.Sprintf("*l%d", level-1))
		}
		return fmt.Sprintf("&l%d [%s]", level, strings.Join(items, ", "))
	}
	b.WriteString(build(levels - 1))
	b.WriteString("\n")
	return b.String()
}

func TestParseAliasBomb(t *testing.T) {
	t.Run("nested lists", func(t *testing.T) {
		// 9 levels of 9 aliases: 9^9 ≈ 387 million nodes if expanded.
		list := parseErrors(t, "bomb.yaml", billionLaughs(9, 9))
		if len(list) > 100 {
			t.Errorf("got %d errors; the aliases were expanded", len(list))
		}
	})
	t.Run("classic top-level anchors", func(t *testing.T) {
		var b strings.Builder
		b.WriteString("name: harbor-glass\n")
		b.WriteString(`a: &a ["lol","lol","lol","lol","lol","lol","lol","lol","lol"]` + "\n")
		for i := 1; i < 9; i++ {
			prev, cur := string(rune('a'+i-1)), string(rune('a'+i))
			fmt.Fprintf(&b, "%s: &%s [%s]\n", cur, cur, strings.TrimSuffix(strings.Repeat("*"+prev+",", 9), ","))
		}
		b.WriteString("partials: *i\nkeys: *i\nvelocities: *i\n")
		list := parseErrors(t, "bomb.yaml", b.String())
		if len(list) > 100 {
			t.Errorf("got %d errors; the aliases were expanded", len(list))
		}
	})
	t.Run("merge keys", func(t *testing.T) {
		// Each group merges the one before it nine times over; followed
		// naively that is 9^8 merges, but each mapping needs merging once.
		var b strings.Builder
		b.WriteString("name: harbor-glass\npartials:\n  - &g0 {ratio: 1.5, amplitude: 0.5}\n")
		for i := 1; i < 9; i++ {
			fmt.Fprintf(&b, "  - &g%d {<<: [%s]}\n", i, strings.TrimSuffix(strings.Repeat(fmt.Sprintf("*g%d, ", i-1), 9), ", "))
		}
		p := mustParse(t, "bomb.yaml", b.String())
		if len(p.Groups) != 9 {
			t.Fatalf("got %d groups; want 9", len(p.Groups))
		}
		for i, g := range p.Groups {
			if g.Kind != patch.KindRatio || g.Ratio != 1.5 || g.Amplitude.String() != "0.5" {
				t.Errorf("group %d = %+v; want ratio 1.5, amplitude 0.5 merged from group 0", i, g)
			}
		}
	})
	t.Run("too many nodes", func(t *testing.T) {
		// A flat list of 210 000 aliases visits more nodes than the walk allows.
		src := "name: harbor-glass\nkeys: [&k C4" + strings.Repeat(", *k", 210_000) + "]\npartials: [{ratio: 1}]\n"
		list := parseErrors(t, "wide.yaml", src)
		if len(list) != 1 || !strings.Contains(list[0].Msg, "more than 200000 YAML nodes") {
			t.Errorf("got %d errors, first %v; want one about the node budget", len(list), list[0])
		}
	})
}

func TestParseDeeplyNested(t *testing.T) {
	for _, depth := range []int{500, 5000, 20000} {
		t.Run(fmt.Sprint(depth), func(t *testing.T) {
			src := "name: harbor-glass\npartials: " + strings.Repeat("[", depth) + strings.Repeat("]", depth) + "\n"
			list := parseErrors(t, "deep.yaml", src)
			if list[0].Line < 1 || list[0].Line > 2 {
				t.Errorf("first error %v; want it on line 1 or 2", list[0])
			}
			src = "name: harbor-glass\npartials:\n  - envelope: " + strings.Repeat("{a: ", depth) + strings.Repeat("}", depth) + "\n"
			parseErrors(t, "deep.yaml", src)
		})
	}
}

func TestParseTooLarge(t *testing.T) {
	src := "name: harbor-glass\npartials: [{ratio: 1}]\n#" + strings.Repeat("x", 4<<20)
	list := parseErrors(t, "huge.yaml", src)
	if !strings.Contains(list[0].Msg, "patches are limited to 4194304") {
		t.Errorf("got %v; want the size limit", list[0])
	}
}

const minimalPatch = `name: harbor-glass
partials:
  - harmonics: 8
`

func TestParseDefaults(t *testing.T) {
	file := filepath.Join("patches", "harbor-glass.yaml")
	p := mustParse(t, file, minimalPatch)
	if p.File != file {
		t.Errorf("File = %q; want %q", p.File, file)
	}
	if p.SHA256 != sha256.Sum256([]byte(minimalPatch)) {
		t.Errorf("SHA256 = %x; want the hash of the source", p.SHA256)
	}
	checks := []struct {
		what      string
		got, want any
	}{
		{"Name", p.Name, "harbor-glass"},
		{"SampleRate", p.SampleRate, 48000},
		{"BitDepth", p.BitDepth, 24},
		{"Channels", p.Channels, 1},
		// ISO 16: A4 = 440 Hz.
		{"A4", p.A4, 440.0},
		// MIDI 1.0 Detailed Specification: middle C = 60.
		{"Keys", fmt.Sprint(p.Keys), "[60]"},
		{"Velocities", fmt.Sprint(p.Velocities), "[100]"},
		{"Hold", p.Hold, 2.0},
		{"Tail", p.Tail, 1.0},
		{"BandLimit", p.BandLimit, 0.45},
		{"BandFade", p.BandFade, 0.1},
		{"Normalize", p.Normalize, patch.Normalize{Measure: patch.MeasurePeak, Target: -1}},
		{"OutputDir", p.OutputDir, filepath.Join("patches", "out", "harbor-glass")},
		{"len(Groups)", len(p.Groups), 1},
	}
	for _, c := range checks {
		if c.got != c.want {
			t.Errorf("%s = %v; want %v", c.what, c.got, c.want)
		}
	}
	g := p.Groups[0]
	if g.Kind != patch.KindSeries || g.Count != 8 || g.First != 1 || g.Step != 1 || g.Line != 3 || g.Column != 5 {
		t.Errorf("group = %+v; want a series of 8 from 1 step 1 at 3:5", g)
	}
	if g.Amplitude.String() != "1" || g.Phase.String() != "0" {
		t.Errorf("amplitude %v, phase %v; want 1 and 0", g.Amplitude, g.Phase)
	}
}

func TestParseEverySetting(t *testing.T) {
	src := `name: puzzle-pad.v2_soft
sample_rate: 44100
bit_depth: 16
channels: 2
tuning: {a4: 432}
keys: [C3]
velocities: [127]
hold: 1.5
tail: 0.25
band_limit: 0.4
band_fade: 0.2
normalize: {peak: -3 dBFS}
output: {dir: renders/pad}
partials:
  - ratio: 2.76
`
	p := mustParse(t, "puzzle-pad.yaml", src)
	checks := []struct {
		what      string
		got, want any
	}{
		{"Name", p.Name, "puzzle-pad.v2_soft"},
		{"SampleRate", p.SampleRate, 44100},
		{"BitDepth", p.BitDepth, 16},
		{"Channels", p.Channels, 2},
		{"A4", p.A4, 432.0},
		{"Keys", fmt.Sprint(p.Keys), "[48]"},
		{"Velocities", fmt.Sprint(p.Velocities), "[127]"},
		{"Hold", p.Hold, 1.5},
		{"Tail", p.Tail, 0.25},
		{"BandLimit", p.BandLimit, 0.4},
		{"BandFade", p.BandFade, 0.2},
		{"Normalize", p.Normalize, patch.Normalize{Measure: patch.MeasurePeak, Target: -3}},
		{"OutputDir", p.OutputDir, filepath.Join("renders", "pad")},
		{"Ratio", p.Groups[0].Ratio, 2.76},
		{"Series", p.Groups[0].Kind == patch.KindSeries, false},
	}
	for _, c := range checks {
		if c.got != c.want {
			t.Errorf("%s = %v; want %v", c.what, c.got, c.want)
		}
	}
	for _, tt := range []struct {
		src  string
		want patch.Normalize
	}{
		{"off", patch.Normalize{Measure: patch.MeasureOff}},
		{"false", patch.Normalize{Measure: patch.MeasureOff}},
		{"{peak: 0}", patch.Normalize{Measure: patch.MeasurePeak, Target: 0}},
		{"{peak: -0.5 dB}", patch.Normalize{Measure: patch.MeasurePeak, Target: -0.5}},
		{"{peak: -60dBFS}", patch.Normalize{Measure: patch.MeasurePeak, Target: -60}},
		{"{}", patch.Normalize{Measure: patch.MeasurePeak, Target: -1}},
	} {
		p := mustParse(t, "n.yaml", "name: n\nnormalize: "+tt.src+"\npartials: [{ratio: 1}]\n")
		if p.Normalize != tt.want {
			t.Errorf("normalize: %s gives %+v; want %+v", tt.src, p.Normalize, tt.want)
		}
	}
}

func TestParseKeys(t *testing.T) {
	seq := func(from, to, step int) []int {
		var s []int
		for k := from; k <= to; k += step {
			s = append(s, k)
		}
		return s
	}
	tests := []struct {
		keys string
		want []int
	}{
		// Scientific pitch notation: C2 = 36, C6 = 84; every third key.
		{"{from: C2, to: C6, step: 3}", seq(36, 84, 3)},
		{"{from: C2, to: C6}", seq(36, 84, 1)},
		{"{from: 60, to: 60}", []int{60}},
		{"{from: C4, to: E4, step: 3}", []int{60, 63}}, // the range stops at or before to
		{"{from: C-1, to: G9, step: 127}", []int{0, 127}},
		// A list mixes names and numbers and comes out sorted.
		{`[64, C4, "F#3", Bb2, 100]`, []int{46, 54, 60, 64, 100}},
		{"[C5, Cs4, 12]", []int{12, 61, 72}},
		// A single key need not be a list.
		{"A4", []int{69}},
		{"21", []int{21}},
	}
	for _, tt := range tests {
		p := mustParse(t, "k.yaml", "name: k\nkeys: "+tt.keys+"\npartials: [{ratio: 1}]\n")
		if !slices.Equal(p.Keys, tt.want) {
			t.Errorf("keys: %s gives %v; want %v", tt.keys, p.Keys, tt.want)
		}
	}
}

func TestParseVelocities(t *testing.T) {
	tests := []struct {
		vels string
		want []int
	}{
		{"[127, 40, 80]", []int{40, 80, 127}},
		{"[1, 127]", []int{1, 127}},
		{"64", []int{64}},
		{"[100]", []int{100}},
	}
	for _, tt := range tests {
		p := mustParse(t, "v.yaml", "name: v\nvelocities: "+tt.vels+"\npartials: [{ratio: 1}]\n")
		if !slices.Equal(p.Velocities, tt.want) {
			t.Errorf("velocities: %s gives %v; want %v", tt.vels, p.Velocities, tt.want)
		}
	}
}

// envelopeOf expands the patch for its first key and layer and returns the
// envelope of each partial.
func envelopesOf(t *testing.T, p *patch.Patch) []patch.Envelope {
	t.Helper()
	plan, err := p.Expand(patch.ExpandOptions{})
	if err != nil {
		t.Fatalf("Expand: %v", err)
	}
	var envs []patch.Envelope
	for _, part := range plan.Notes[0].Partials {
		envs = append(envs, part.Envelope)
	}
	return envs
}

func TestParseAnchorsAndMergeKeys(t *testing.T) {
	// YAML 1.1 merge key type ("<<", yaml.org/type/merge.html): the merged
	// mapping's keys are added unless the mapping sets them itself; in a
	// list of mappings, earlier ones win; a merged mapping brings in what it
	// merges itself.
	src := `name: puzzle-pad
envelope: &soft
  attack: 0.2
  release: 1.5
partials:
  - &body
    ratio: 1
    amplitude: 0.5
    envelope:
      <<: *soft
      decay: 0.3
      sustain: 0.6
  - <<: *body
    ratio: 2
    phase: 90
  - ratio: 3
    envelope: *soft
  - <<: [{ratio: 4, amplitude: 0.25}, *body]
  - &nested
    <<: *body
    ratio: 5
    phase: 45
  - <<: *nested
    ratio: 6
`
	p := mustParse(t, "puzzle-pad.yaml", src)
	type want struct {
		ratio     float64
		amplitude string
		phase     string
		env       patch.Envelope
	}
	own := patch.Envelope{Attack: 0.2, Decay: 0.3, Sustain: 0.6, Release: 1.5}
	soft := patch.Envelope{Attack: 0.2, Decay: 0, Sustain: 1, Release: 1.5} // defaults for decay and sustain
	wants := []want{
		{1, "0.5", "0", own},
		{2, "0.5", "90", own},
		{3, "1", "0", soft},
		{4, "0.25", "0", own},
		{5, "0.5", "45", own},
		{6, "0.5", "45", own}, // merged from a mapping that merges in turn
	}
	if len(p.Groups) != len(wants) {
		t.Fatalf("got %d groups; want %d", len(p.Groups), len(wants))
	}
	envs := envelopesOf(t, p)
	for i, w := range wants {
		g := p.Groups[i]
		if g.Kind != patch.KindRatio || g.Ratio != w.ratio || g.Amplitude.String() != w.amplitude || g.Phase.String() != w.phase || !reflect.DeepEqual(envs[i], w.env) {
			t.Errorf("group %d: ratio %v, amplitude %v, phase %v, envelope %+v; want %+v", i, g.Ratio, g.Amplitude, g.Phase, envs[i], w)
		}
	}

	// The top-level envelope is the default of every group, key by key.
	p = mustParse(t, "puzzle-pad.yaml", `name: puzzle-pad
envelope: {attack: 0.05, release: 0.8}
partials:
  - ratio: 1
  - ratio: 2
    envelope: {release: 2}
`)
	envs = envelopesOf(t, p)
	if want := (patch.Envelope{Attack: 0.05, Decay: 0, Sustain: 1, Release: 0.8}); !reflect.DeepEqual(envs[0], want) {
		t.Errorf("group 0 envelope %+v; want %+v", envs[0], want)
	}
	if want := (patch.Envelope{Attack: 0.05, Decay: 0, Sustain: 1, Release: 2}); !reflect.DeepEqual(envs[1], want) {
		t.Errorf("group 1 envelope %+v; want %+v", envs[1], want)
	}
}

func TestParseOutputDir(t *testing.T) {
	abs := t.TempDir()
	tests := []struct {
		file, output, want string
	}{
		{"harbor-glass.yaml", "", filepath.Join("out", "harbor-glass")},
		{filepath.Join("patches", "harbor-glass.yaml"), "", filepath.Join("patches", "out", "harbor-glass")},
		{filepath.Join("patches", "harbor-glass.yaml"), "output: {dir: renders/glass}\n", filepath.Join("patches", "renders", "glass")},
		{filepath.Join("patches", "harbor-glass.yaml"), "output: {dir: renders/../glass}\n", filepath.Join("patches", "glass")},
		{filepath.Join(abs, "harbor-glass.yaml"), "", filepath.Join(abs, "out", "harbor-glass")},
	}
	for _, tt := range tests {
		p := mustParse(t, tt.file, "name: harbor-glass\n"+tt.output+"partials: [{ratio: 1}]\n")
		if p.OutputDir != tt.want {
			t.Errorf("file %q, %q: OutputDir = %q; want %q", tt.file, tt.output, p.OutputDir, tt.want)
		}
	}
}

func TestParseDecibels(t *testing.T) {
	tests := []struct {
		amplitude string
		str       string // Value.String
		want      func(n float64) float64
	}{
		// Decibels of amplitude: gain = 10^(dB/20), so −6 dB is about half
		// (common practice; standards sheet §2.2, inst gain "−6 ≈ half amplitude").
		{"-6 dB", "-6 dB", func(float64) float64 { return math.Pow(10, -6.0/20) }},
		{"-6dB", "-6 dB", func(float64) float64 { return math.Pow(10, -6.0/20) }},
		{`"-12 dB"`, "-12 dB", func(float64) float64 { return math.Pow(10, -12.0/20) }},
		{"0 dB", "0 dB", func(float64) float64 { return 1 }},
		{"-3*log2(n) dB", "-3*log2(n) dB", func(n float64) float64 { return math.Pow(10, -3*math.Log2(n)/20) }},
		{"0.5", "0.5", func(float64) float64 { return 0.5 }},
		{"1/n", "1/n", func(n float64) float64 { return 1 / n }},
	}
	for _, tt := range tests {
		p := mustParse(t, "db.yaml", "name: db\npartials:\n  - harmonics: 6\n    amplitude: "+tt.amplitude+"\n")
		if got := p.Groups[0].Amplitude.String(); got != tt.str {
			t.Errorf("amplitude %s: String() = %q; want %q", tt.amplitude, got, tt.str)
		}
		plan, err := p.Expand(patch.ExpandOptions{})
		if err != nil {
			t.Fatalf("amplitude %s: Expand: %v", tt.amplitude, err)
		}
		parts := plan.Notes[0].Partials
		if len(parts) != 6 {
			t.Fatalf("amplitude %s: %d partials; want 6", tt.amplitude, len(parts))
		}
		for _, part := range parts {
			if want := tt.want(part.Harmonic); math.Abs(part.Amplitude-want) > 1e-12 {
				t.Errorf("amplitude %s: harmonic %g has amplitude %v; want %v", tt.amplitude, part.Harmonic, part.Amplitude, want)
			}
		}
	}
	// Sustain takes a level in dB as well.
	p := mustParse(t, "db.yaml", "name: db\nenvelope: {sustain: -6 dB}\npartials: [{ratio: 1}]\n")
	if envs := envelopesOf(t, p); math.Abs(envs[0].Sustain-math.Pow(10, -6.0/20)) > 1e-12 {
		t.Errorf("sustain -6 dB = %v; want %v", envs[0].Sustain, math.Pow(10, -6.0/20))
	}
}

// An expression in a block scalar cannot be located column by column; the
// error points at the scalar and gives the column within the expression.
func TestParseExpressionInBlockScalar(t *testing.T) {
	src := "name: harbor-glass\npartials:\n  - harmonics: 8\n    amplitude: >-\n      1/(n\n"
	list := parseErrors(t, "block.yaml", src)
	e := list[0]
	if e.Line != 4 || e.Column != 16 || e.Path != "partials[0].amplitude" || !strings.Contains(e.Msg, "column 5") {
		t.Errorf("got %v; want at 4:16, path partials[0].amplitude, naming column 5", e)
	}
}

func TestLoad(t *testing.T) {
	good := filepath.Join("..", "testdata", "patches", "good-minimal.yaml")
	p, err := patch.Load(good)
	if err != nil {
		t.Fatalf("Load(%s): %v", good, err)
	}
	data, err := os.ReadFile(good)
	if err != nil {
		t.Fatal(err)
	}
	if p.File != good || p.SHA256 != sha256.Sum256(data) || p.Name != "harbor-glass" {
		t.Errorf("Load(%s) = file %q, name %q, hash %x", good, p.File, p.Name, p.SHA256)
	}
	if want := filepath.Join("..", "testdata", "patches", "out", "harbor-glass"); p.OutputDir != want {
		t.Errorf("OutputDir = %q; want %q", p.OutputDir, want)
	}

	bad := []struct {
		file         string
		line, column int
		path, msg    string
	}{
		{"bad-misspelt-key.yaml", 3, 1, "sampel_rate", `did you mean "sample_rate"`},
		{"bad-duplicate-velocity.yaml", 3, 23, "velocities[2]", "velocity 64 is listed twice"},
		{"bad-expression.yaml", 6, 21, "partials[0].amplitude", `expected ")" to close "("`},
		{"bad-tab-indent.yaml", 5, 1, "", "tab character"},
	}
	for _, tt := range bad {
		t.Run(tt.file, func(t *testing.T) {
			path := filepath.Join("..", "testdata", "patches", tt.file)
			_, err := patch.Load(path)
			if err == nil {
				t.Fatalf("Load(%s) succeeded; want an error", path)
			}
			list, ok := err.(patch.ErrorList)
			if !ok || len(list) == 0 {
				t.Fatalf("Load(%s) error is %T %v; want a non-empty patch.ErrorList", path, err, err)
			}
			for _, e := range list {
				if e.File != path {
					t.Errorf("error %v names file %q; want %q", e, e.File, path)
				}
			}
			e := list[0]
			if e.Line != tt.line || e.Column != tt.column || e.Path != tt.path || !strings.Contains(e.Msg, tt.msg) {
				t.Errorf("first error %v; want at %d:%d, path %q, containing %q", e, tt.line, tt.column, tt.path, tt.msg)
			}
			if prefix := fmt.Sprintf("%s:%d:%d: ", path, tt.line, tt.column); !strings.HasPrefix(err.Error(), prefix) {
				t.Errorf("Error() = %q; want it to start with %q", err.Error(), prefix)
			}
		})
	}

	missing := filepath.Join(t.TempDir(), "none.yaml")
	_, err = patch.Load(missing)
	list, ok := err.(patch.ErrorList)
	if !ok || len(list) != 1 || list[0].File != missing || list[0].Line != 0 || !strings.Contains(list[0].Msg, "cannot read the patch") {
		t.Errorf("Load(missing) = %v; want one ErrorList entry naming the file", err)
	}
}
