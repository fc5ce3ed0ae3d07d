package tuning_test

import (
	"bytes"
	"errors"
	"math"
	"testing"

	"sinter/patch/tuning"
)

// checkError holds a read error to what every error promises: the file
// it was given, a line of the file (or the one after the last, for an
// end that comes too soon) and a column from 1.
func checkError(t *testing.T, err error, file string, data []byte) {
	t.Helper()
	var e *tuning.Error
	if !errors.As(err, &e) {
		t.Fatalf("error %v is not a *tuning.Error", err)
	}
	lines := bytes.Count(data, []byte("\n")) + 1
	if e.File != file || e.Line < 1 || e.Line > lines || e.Column < 1 || e.Msg == "" {
		t.Fatalf("error %q has no place in the file's %d lines", e, lines)
	}
}

// FuzzParseScale: any bytes read as a scale or give an error with its
// place, never a panic; a scale read tunes a keyboard or says where it
// cannot, and every mapped key is a finite, positive frequency with key 60
// exactly where it was put.
func FuzzParseScale(f *testing.F) {
	for _, s := range []string{meanquar, "d\n1\n2\n", "d\n 2\n 5/4 third\n\t3.\n", "d\n1\n-3/2\n", "d\r\n1\r\n3/0\r\n", "!\n\n0\n", "d\n2\n1200.0\n"} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		s, err := tuning.ParseScale("f.scl", data)
		if err != nil {
			checkError(t, err, "f.scl", data)
			return
		}
		for _, c := range s.Cents {
			if math.IsNaN(c) || math.IsInf(c, 0) {
				t.Fatalf("pitch %v", c)
			}
		}
		keys, err := tuning.Keyboard(s, tuning.Linear(60, 261.625))
		if err != nil {
			checkError(t, err, "f.scl", data)
			return
		}
		for k, hz := range keys {
			if !(hz > 0) || math.IsInf(hz, 0) {
				t.Fatalf("key %d at %v Hz", k, hz)
			}
		}
		if keys[60] != 261.625 {
			t.Fatalf("key 60 at %v Hz, not where it was put", keys[60])
		}
	})
}

// FuzzParseKeymap: any bytes read as a mapping within the ranges the
// format gives, or give an error with its place; a mapping read tunes a
// 12-step scale without a panic, its reference key (when it tunes it) at
// exactly its frequency.
func FuzzParseKeymap(f *testing.F) {
	for _, s := range []string{
		"12\n0\n127\n60\n69\n440.0\n12\n0\n1\n2\n3\n4\n5\n6\n7\n8\n9\n10\n11\n",
		"! linear\n0\n0\n127\n60\n60\n261.6\n0\n",
		"12\n0\n127\n60\n60\n261.6\n7\n0\nx\n1\nx\n2\n3\nx\n4\nx\n5\nx\n6\n",
		"5\n21\n108\n60\n69\n440\n12\n0\n1\n",
		"12\n0\n127\n60\n69\n1e999\n12\n",
		"2\n0\n127\n60\n69\n440\n12\n0\n1\n2\n",
	} {
		f.Add([]byte(s))
	}
	twelve := []byte("twelve\n12\n100.0\n200.0\n300.0\n400.0\n500.0\n600.0\n700.0\n800.0\n900.0\n1000.0\n1100.0\n2/1\n")
	scale, err := tuning.ParseScale("twelve.scl", twelve)
	if err != nil {
		f.Fatal(err)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		m, err := tuning.ParseKeymap("f.kbm", data)
		if err != nil {
			checkError(t, err, "f.kbm", data)
			return
		}
		if m.First < 0 || m.Last > 127 || m.First > m.Last || m.Middle < 0 || m.Middle > 127 || m.Reference < 0 || m.Reference > 127 ||
			!(m.Frequency > 0) || math.IsInf(m.Frequency, 0) || m.OctaveDegree < 0 || len(m.Map) > m.Size {
			t.Fatalf("accepted %+v", m)
		}
		for _, d := range m.Map {
			if d < 0 && d != tuning.Unmapped {
				t.Fatalf("entry %d", d)
			}
		}
		keys, err := tuning.Keyboard(scale, m)
		var e *tuning.Error
		if errors.As(err, &e) && e.File == "twelve.scl" {
			// A formal octave of many degrees takes keys beyond any
			// frequency, which the error puts at the scale's period.
			checkError(t, err, "twelve.scl", twelve)
			return
		}
		if err != nil {
			checkError(t, err, "f.kbm", data)
			return
		}
		if r := m.Reference; r >= m.First && r <= m.Last && keys[r] != m.Frequency {
			t.Fatalf("reference key %d at %v Hz, want %v", r, keys[r], m.Frequency)
		}
	})
}
