package tuning

import (
	"fmt"
	"math"
)

// Keys is the frequency in Hz of each of the 128 MIDI keys; 0 where the
// mapping leaves a key unmapped.
type Keys [128]float64

// Keyboard tunes the 128 MIDI keys by scale s through mapping m. Key k
// plays the degree the mapping gives it: with a pattern of size N, entry
// (k − Middle) mod N plus OctaveDegree for every whole pattern between
// the middle key and k; with a linear mapping, degree k − Middle. A degree
// sounds its pitch in the scale, the period added or taken away for every
// time round the scale, and the keyboard is placed so that the reference
// key sounds at the mapping's frequency:
//
//	f(k) = Frequency · 2^((cents(degree(k)) − cents(degree(Reference))) / 1200)
//
// It is an error for the scale to have no pitches (so no period) or a
// period of 0 cents or less, for the reference key to be unmapped, and for
// a mapped key to come to a frequency that is not a finite, positive
// number.
func Keyboard(s *Scale, m *Keymap) (Keys, error) {
	var keys Keys
	fail := func(file string, l int, format string, args ...any) (Keys, error) {
		return Keys{}, &Error{File: file, Line: l, Column: 1, Msg: fmt.Sprintf(format, args...)}
	}
	if len(s.Cents) == 0 {
		return fail(s.File, s.countLine, "a scale of no pitches has no period to repeat at; list at least one pitch, the last being the period")
	}
	if p := s.Period(); p <= 0 {
		return fail(s.File, s.pitchLines[len(s.pitchLines)-1], "the period, the scale's last pitch, is %g cents; a keyboard needs it above 0 to rise from key to key", p)
	}
	ref, ok, entry := m.degree(m.Reference)
	if !ok {
		if entry >= 0 && entry < len(m.mapLines) {
			return fail(m.File, m.referenceLine, "the reference key %d is unmapped (the entry for it on line %d is x), so the frequency places no pitch", m.Reference, m.mapLines[entry])
		}
		return fail(m.File, m.referenceLine, "the reference key %d is unmapped (the pattern leaves out its entry %d), so the frequency places no pitch", m.Reference, entry)
	}
	refCents := s.DegreeCents(ref)
	for k := range keys {
		if k < m.First || k > m.Last {
			continue
		}
		d, ok, _ := m.degree(k)
		if !ok {
			continue
		}
		hz := m.Frequency * math.Exp2((s.DegreeCents(d)-refCents)/1200)
		if math.IsInf(hz, 0) || math.IsNaN(hz) || hz <= 0 {
			at := s.pitchLines[len(s.pitchLines)-1]
			return fail(s.File, at, "key %d would sound at %g Hz: the scale's steps, repeated as the mapping repeats them, are too wide for 128 keys", k, hz)
		}
		keys[k] = hz
	}
	return keys, nil
}

// degree is the scale degree key k plays, ignoring First and Last (the
// reference key is placed wherever it is); ok is false for an unmapped
// key, whose entry in the pattern is entry.
func (m *Keymap) degree(k int) (d int, ok bool, entry int) {
	if m.Size == 0 {
		return k - m.Middle, true, -1
	}
	i := k - m.Middle
	repeat := floorDiv(i, m.Size)
	entry = i - repeat*m.Size
	if entry >= len(m.Map) || m.Map[entry] == Unmapped {
		return 0, false, entry
	}
	return m.Map[entry] + repeat*m.OctaveDegree, true, entry
}
