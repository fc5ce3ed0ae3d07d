package patch_test

import (
	"math"
	"testing"

	"sinter/patch"
)

func TestParseNote(t *testing.T) {
	tests := []struct {
		in   string
		want int
	}{
		// MIDI 1.0 Detailed Specification: middle C = 60.
		// Scientific pitch notation: C4 = 60 (common practice).
		{"C4", 60},
		// 12-TET tuning reference A4 = 440 Hz is MIDI 69: standards sheet §4, ISO 16.
		{"A4", 69},
		// MIDI 1.0 Detailed Specification: note numbers are 7-bit, 0..127;
		// with C4 = 60 and 12 keys an octave, 0 is C-1 and 127 is G9.
		{"C-1", 0},
		{"G9", 127},
		{"c-1", 0},
		// Scientific pitch notation: sharps raise, flats lower a semitone.
		{"F#3", 54},
		{"Fs3", 54}, // 's' is the file-name spelling of '#'
		{"Bb2", 46},
		{"bb2", 46},
		{"c4", 60},
		// Enharmonic spellings cross the octave boundary: Cb4 is B3, B#3 is C4.
		{"Cb4", 59},
		{"B#3", 60},
		// A double sharp raises a whole tone: C##4 is D4.
		{"C##4", 62},
		{"Dbb4", 60},
		{"E#4", 65},
		{"Fb4", 64},
		// A bare MIDI number.
		{"60", 60},
		{"0", 0},
		{"127", 127},
		{" 64 ", 64},
		{" A0 ", 21}, // A0 = 27.5 Hz, the lowest key of an 88-key piano
	}
	for _, tt := range tests {
		got, err := patch.ParseNote(tt.in)
		if err != nil || got != tt.want {
			t.Errorf("ParseNote(%q) = %d, %v; want %d, nil", tt.in, got, err, tt.want)
		}
	}
}

func TestParseNoteErrors(t *testing.T) {
	for _, in := range []string{
		"",
		"   ",
		"H4",    // not a letter A-G
		"C",     // no octave
		"C#",    // no octave
		"C10",   // octave beyond 9
		"C-2",   // octave below -1
		"128",   // MIDI 1.0 Detailed Specification: note numbers stop at 127
		"-1",    // and start at 0
		"C4x",   // trailing junk
		"C+4",   // a signed octave is not a note name
		"C###4", // at most two accidentals
		"G#9",   // 128
		"Ab9x",
		"Cb-1", // -1
		"#4",
	} {
		if m, err := patch.ParseNote(in); err == nil {
			t.Errorf("ParseNote(%q) = %d, nil; want an error", in, m)
		}
	}
}

func TestNoteName(t *testing.T) {
	tests := []struct {
		m          int
		name, file string
	}{
		// MIDI 1.0 Detailed Specification: middle C = 60; scientific pitch
		// notation names it C4 and names notes with sharps.
		{0, "C-1", "C-1"},
		{60, "C4", "C4"},
		{61, "C#4", "Cs4"},
		{69, "A4", "A4"},
		{70, "A#4", "As4"},
		{127, "G9", "G9"},
	}
	for _, tt := range tests {
		if got := patch.NoteName(tt.m); got != tt.name {
			t.Errorf("NoteName(%d) = %q; want %q", tt.m, got, tt.name)
		}
		if got := patch.FileNoteName(tt.m); got != tt.file {
			t.Errorf("FileNoteName(%d) = %q; want %q", tt.m, got, tt.file)
		}
	}
}

func TestNoteNameRoundTrip(t *testing.T) {
	for m := 0; m <= 127; m++ {
		for _, name := range []string{patch.NoteName(m), patch.FileNoteName(m)} {
			got, err := patch.ParseNote(name)
			if err != nil || got != m {
				t.Errorf("ParseNote(%q) = %d, %v; want %d (the name of %d)", name, got, err, m, m)
			}
		}
	}
}

func TestKeyFrequency(t *testing.T) {
	// 12-TET formula f = 440·2^((m−69)/12): standards sheet §4, ISO 16;
	// check values from the standards sheet.
	tests := []struct {
		m    int
		a4   float64
		want float64
	}{
		{0, 440, 8.175799},
		{21, 440, 27.5},
		{57, 440, 220},
		{60, 440, 261.625565},
		{69, 440, 440},
		{108, 440, 4186.009045},
		{127, 440, 12543.853951},
		// The reference scales every key: A4 is a4, an octave is a doubling.
		{69, 432, 432},
		{81, 415, 830},
		{57, 442, 221},
	}
	for _, tt := range tests {
		got := patch.KeyFrequency(tt.m, tt.a4)
		if math.Abs(got-tt.want) > 1e-6*tt.want {
			t.Errorf("KeyFrequency(%d, %g) = %.9g; want %.9g (1e-6 relative)", tt.m, tt.a4, got, tt.want)
		}
	}
	// A semitone is the ratio 2^(1/12): standards sheet §4.
	for m := 1; m <= 127; m++ {
		r := patch.KeyFrequency(m, 440) / patch.KeyFrequency(m-1, 440)
		if math.Abs(r-math.Pow(2, 1.0/12)) > 1e-12 {
			t.Fatalf("KeyFrequency(%d)/KeyFrequency(%d) = %v; want 2^(1/12)", m, m-1, r)
		}
	}
}
