package patch

import (
	"fmt"
	"strconv"
	"strings"
)

// Note names follow scientific pitch notation, where C4 is MIDI note 60
// (MIDI 1.0 Detailed Specification: "middle C has a reference value of 60").
var noteOffsets = map[byte]int{'C': 0, 'D': 2, 'E': 4, 'F': 5, 'G': 7, 'A': 9, 'B': 11}

var sharpNames = [12]string{"C", "C#", "D", "D#", "E", "F", "F#", "G", "G#", "A", "A#", "B"}

// ParseNote reads a key as a MIDI number ("60") or a note name ("C4", "F#3",
// "Bb2", "c-1"). Sharps are '#' or 's', flats 'b'; up to two accidentals.
// The result is within 0..127.
func ParseNote(s string) (int, error) {
	t := strings.TrimSpace(s)
	if t == "" {
		return 0, fmt.Errorf("empty note name")
	}
	if n, err := strconv.Atoi(t); err == nil {
		if float64(n) < noteRule.Min || float64(n) > noteRule.Max {
			return 0, fmt.Errorf("MIDI note %d is outside %g..%g", n, noteRule.Min, noteRule.Max)
		}
		return n, nil
	}
	letter := t[0] &^ 0x20 // upper case
	base, ok := noteOffsets[letter]
	if !ok {
		return 0, fmt.Errorf("%q is not a note: expected a letter A-G then an octave, like C4 or F#3, or a MIDI number", s)
	}
	rest := t[1:]
	shift := 0
	for i := 0; i < 2 && rest != "" && strings.IndexByte("#sb", rest[0]) >= 0; i++ {
		if rest[0] == 'b' {
			shift--
		} else {
			shift++
		}
		rest = rest[1:]
	}
	octave, err := strconv.Atoi(rest)
	if err != nil || rest == "" || strings.HasPrefix(rest, "+") {
		return 0, fmt.Errorf("%q has no octave number: expected a note like C4, F#3 or Bb2", s)
	}
	if octave < -1 || octave > 9 {
		return 0, fmt.Errorf("%q: octave %d is outside -1..9", s, octave)
	}
	m := (octave+1)*12 + base + shift
	if float64(m) < noteRule.Min || float64(m) > noteRule.Max {
		return 0, fmt.Errorf("%q is MIDI note %d, outside %g..%g", s, m, noteRule.Min, noteRule.Max)
	}
	return m, nil
}

// NoteName returns the sharp-spelled name of MIDI note m, such as "C#4".
func NoteName(m int) string {
	return sharpNames[((m%12)+12)%12] + strconv.Itoa(m/12-1)
}

// FileNoteName returns the note name in a portable file-name form: '#' is
// written as 's' ("Cs4"), so names survive shells and archive tools.
func FileNoteName(m int) string {
	return strings.Replace(NoteName(m), "#", "s", 1)
}
