package tuning

import (
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Unmapped marks a key of a mapping's pattern that plays no degree: an
// 'x' in the .kbm file.
const Unmapped = -1

// Keymap is a keyboard mapping as a .kbm file gives it: which scale
// degree each MIDI key plays, and the frequency that places the scale.
type Keymap struct {
	File string
	// Size is the number of keys in the repeating pattern; 0 is a linear
	// mapping, every key one degree above the key below it.
	Size int
	// First and Last are the lowest and highest keys the mapping tunes;
	// keys outside them are unmapped.
	First, Last int
	// Middle is the key the pattern's first entry belongs to.
	Middle int
	// Reference is the key that sounds at Frequency (Hz).
	Reference int
	Frequency float64
	// OctaveDegree is the formal octave: how many degrees each repetition
	// of the pattern lies above the one before it.
	OctaveDegree int
	// Map holds the degree of each key of the pattern, from Middle up, or
	// Unmapped; keys left out at its end are unmapped.
	Map []int
	// referenceLine and mapLines are where the reference key and each
	// entry stand, for errors about them.
	referenceLine int
	mapLines      []int
}

// Linear is the mapping used where no .kbm file is given: every key
// mapped in order, key middle playing degree 0 at hz, the scale repeating
// at its period upwards and downwards.
func Linear(middle int, hz float64) *Keymap {
	return &Keymap{Size: 0, First: 0, Last: 127, Middle: middle, Reference: middle, Frequency: hz}
}

// maxMapSize bounds a pattern; a keyboard has 128 keys, and patterns
// longer than that are allowed by the format but serve no keyboard.
const maxMapSize = 100_000

// ParseKeymap reads a .kbm file. As the format's description says:
// lines beginning with '!' are comments; the others hold, one to a line,
// the size of the pattern (0 for a linear mapping), the first and last
// MIDI keys to tune, the middle key where the pattern's first entry is
// mapped, the reference key, the frequency to tune it to (a number such
// as 440.0), the scale degree that is the formal octave, and then the
// pattern, one entry to a line: a scale degree, or x for an unmapped key.
// Entries left out at the end of the pattern are unmapped.
func ParseKeymap(file string, data []byte) (*Keymap, error) {
	fail := func(l, col int, format string, args ...any) (*Keymap, error) {
		return nil, &Error{File: file, Line: l, Column: col, Msg: fmt.Sprintf(format, args...)}
	}
	if len(data) > MaxFileBytes {
		return fail(1, 1, "the file is %d bytes; keyboard mappings are limited to %d", len(data), MaxFileBytes)
	}
	lines := meaningful(data)
	// The trailing blank lines of a file are no entries.
	for len(lines) > 0 && blank(lines[len(lines)-1].text) {
		lines = lines[:len(lines)-1]
	}
	m := &Keymap{File: file}
	header := []struct {
		what   string
		dst    *int
		lo, hi int
	}{
		{"the size of the pattern", &m.Size, 0, maxMapSize},
		{"the first MIDI key to tune", &m.First, 0, 127},
		{"the last MIDI key to tune", &m.Last, 0, 127},
		{"the middle key, where the pattern's first entry is mapped", &m.Middle, 0, 127},
		{"the reference key, whose frequency is given", &m.Reference, 0, 127},
		{"the frequency of the reference key", nil, 0, 0},
		{"the scale degree of the formal octave", &m.OctaveDegree, 0, maxPitches},
	}
	for i, h := range header {
		if i >= len(lines) {
			return fail(lastLine(data), 1, "expected %s; the file ends before it", h.what)
		}
		l := lines[i]
		if h.dst == nil {
			hz, col, msg := frequency(l.text)
			if msg != "" {
				return fail(l.n, col, "%s", msg)
			}
			m.Frequency = hz
			continue
		}
		v, col, msg := wholeNumber(l.text, h.lo, h.hi, h.what)
		if msg != "" {
			return fail(l.n, col, "%s", msg)
		}
		*h.dst = v
	}
	m.referenceLine = lines[4].n
	if m.First > m.Last {
		return fail(lines[2].n, indent(lines[2].text)+1, "the last key to tune, %d, is below the first, %d", m.Last, m.First)
	}
	entries := lines[len(header):]
	if m.Size == 0 && len(entries) > 0 {
		l := entries[0]
		return fail(l.n, indent(l.text)+1, "a pattern of size 0 is a linear mapping and takes no entries")
	}
	for i, l := range entries {
		if i >= m.Size {
			return fail(l.n, indent(l.text)+1, "the pattern has %d keys (line %d), so this entry is one too many", m.Size, lines[0].n)
		}
		start := indent(l.text)
		tok := token(l.text[start:])
		if strings.EqualFold(tok, "x") && blank(l.text[start+1:]) {
			m.Map = append(m.Map, Unmapped)
		} else {
			d, col, msg := wholeNumber(l.text, 0, maxPitches, "a scale degree or x")
			if msg != "" {
				return fail(l.n, col, "%s", msg)
			}
			m.Map = append(m.Map, d)
		}
		m.mapLines = append(m.mapLines, l.n)
	}
	return m, nil
}

// frequency reads the reference frequency: a positive, finite number of
// hertz, alone on its line.
func frequency(text string) (hz float64, col int, msg string) {
	start := indent(text)
	tok := token(text[start:])
	v, err := strconv.ParseFloat(tok, 64)
	switch {
	case err != nil && !strings.Contains(err.Error(), "range") || tok == "" || strings.ContainsAny(tok, "xXnNiI_"):
		// ParseFloat also reads hexadecimal, "inf", "nan" and digits
		// with underscores, none of which is a frequency in this format.
		return 0, start + 1, fmt.Sprintf("expected the frequency of the reference key in Hz, such as 440.0, found %q", clip(strings.TrimSpace(text)))
	case err != nil || v <= 0 || math.IsInf(v, 0):
		return 0, start + 1, fmt.Sprintf("the reference frequency %s Hz must be a positive, finite number", clip(tok))
	case !blank(text[start+len(tok):]):
		return 0, start + len(tok) + 1 + indent(text[start+len(tok):]), "expected only the reference frequency on this line"
	}
	return v, 0, ""
}
