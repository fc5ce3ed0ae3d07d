package tuning_test

import (
	"errors"
	"math"
	"strconv"
	"strings"
	"testing"

	"sinter/patch/tuning"
)

// cents is the interval between two frequencies, 1200·log2(f2/f1) (common
// practice; the reference sheet's §4 gives the same formula).
func cents(f1, f2 float64) float64 { return 1200 * math.Log2(f2/f1) }

// meanquar is the example .scl file the format's published description
// shows, 1/4-comma meantone (from memory of that page): cents with a
// period, ratios with a slash, comments, a description, a count with
// spaces around it.
const meanquar = `! meanquar.scl
!
1/4-comma meantone scale. Pietro Aaron's temperament (1523)
 12
!
 76.04900
 193.15686
 310.26471
 5/4
 503.42157
 579.47057
 696.57843
 25/16
 889.73529
 1006.84314
 1082.89214
 2/1
`

// TestScaleWorkedValues reads one pitch per case and compares its cents
// with a worked value: the just major third 5/4 = 386.3137 cents and fifth
// 3/2 = 701.9550 cents (5-limit just intonation), the tritave 3/1 =
// 1901.9550 cents (the period of the Bohlen–Pierce scale), the syntonic
// comma 81/80 = 21.5063 cents (from memory), and the forms the format's
// description names: a whole number is a ratio over 1, a value with a
// period is cents, anything after the value is ignored.
func TestScaleWorkedValues(t *testing.T) {
	cases := []struct {
		line string
		want float64
	}{
		{"5/4", 386.3137},
		{"3/2", 701.9550},
		{"3/1", 1901.9550},
		{"81/80", 21.5063},
		{"2", 1200},
		{"2/1", 1200},
		{" \t5/4   major third", 386.3137},
		{"386.3137", 386.3137},
		{"100.", 100},
		{".5", 0.5},
		{"-5.0", -5},
		{"+7.25 cents", 7.25},
		{"2147483647/2147483646", 1200 * math.Log2(2147483647.0/2147483646)},
	}
	for _, c := range cases {
		s, err := tuning.ParseScale("one.scl", []byte("one pitch\n1\n"+c.line+"\n"))
		if err != nil {
			t.Errorf("%q: %v", c.line, err)
			continue
		}
		if got := s.Cents[0]; math.Abs(got-c.want) > 5e-5 {
			t.Errorf("%q is %.6f cents, want %.4f", c.line, got, c.want)
		}
	}
}

// TestScaleFile reads the description's example file whole.
func TestScaleFile(t *testing.T) {
	s, err := tuning.ParseScale("meanquar.scl", []byte(meanquar))
	if err != nil {
		t.Fatal(err)
	}
	if s.Description != "1/4-comma meantone scale. Pietro Aaron's temperament (1523)" {
		t.Errorf("description %q", s.Description)
	}
	if len(s.Cents) != 12 || s.Period() != 1200 {
		t.Fatalf("%d pitches, period %g", len(s.Cents), s.Period())
	}
	for _, c := range []struct {
		degree int
		want   float64
	}{
		{0, 0}, {1, 76.049}, {4, 386.3137}, {8, 772.6274}, {12, 1200},
		{16, 1586.3137},   // a third a period up
		{-4, -427.3726},   // 25/16 a period down: 772.6274 − 1200
		{-12, -1200},      // the period below degree 0
		{-13, -1317.1079}, // degree 11 two periods down: 1082.89214 − 2400
	} {
		if got := s.DegreeCents(c.degree); math.Abs(got-c.want) > 1e-4 {
			t.Errorf("degree %d is %.4f cents, want %.4f", c.degree, got, c.want)
		}
	}
}

// keyboard tunes a keyboard from file texts; kbm "" is the mapping used
// without a .kbm file, key 60 at hz.
func keyboard(t *testing.T, scl, kbm string, hz float64) tuning.Keys {
	t.Helper()
	s, err := tuning.ParseScale("t.scl", []byte(scl))
	if err != nil {
		t.Fatal(err)
	}
	m := tuning.Linear(60, hz)
	if kbm != "" {
		if m, err = tuning.ParseKeymap("t.kbm", []byte(kbm)); err != nil {
			t.Fatal(err)
		}
	}
	keys, err := tuning.Keyboard(s, m)
	if err != nil {
		t.Fatal(err)
	}
	return keys
}

// equal writes a scale of n equal steps dividing period (text as a .scl
// pitch) with cents to 5 decimals, as scale archives write them.
func equal(n int, period string, periodCents float64) string {
	var b strings.Builder
	b.WriteString("equal steps\n" + strconv.Itoa(n) + "\n")
	for i := 1; i < n; i++ {
		b.WriteString(strconv.FormatFloat(periodCents*float64(i)/float64(n), 'f', 5, 64) + "\n")
	}
	b.WriteString(period + "\n")
	return b.String()
}

// TestKeyboards tunes whole keyboards and checks keys against worked
// values: 19 equal steps of 63.1579 cents to the octave; the
// Bohlen–Pierce scale, 13 equal steps of the tritave 3/1 (1901.9550
// cents), so 13 keys up is three times the frequency; a 12-step .kbm
// mapping A4 (key 69) to 432 Hz, which puts key 57 at 216 Hz and middle C
// at 432·2^(−9/12) = 256.8687 Hz; and, without a .kbm, key 60 at the
// frequency given (the patch's own 12-TET middle C, 261.6256 Hz from
// A4 = 440, standards sheet §4).
func TestKeyboards(t *testing.T) {
	const c4 = 261.6255653005986 // 440·2^(−9/12), standards sheet §4 check value 261.625565
	twelve := equal(12, "2/1", 1200)
	a432 := `! A4 at 432 Hz
12
0
127
60
69
432.0
12
0
1
2
3
4
5
6
7
8
9
10
11
`
	cases := []struct {
		name     string
		scl, kbm string
		checks   []struct {
			key int
			hz  float64
		}
		steps []struct {
			from, to int
			cents    float64
		}
	}{
		{name: "19 equal", scl: equal(19, "2/1", 1200),
			checks: []struct {
				key int
				hz  float64
			}{{60, c4}, {79, 2 * c4}, {41, c4 / 2}},
			steps: []struct {
				from, to int
				cents    float64
			}{{60, 61, 63.1579}, {61, 62, 63.1579}, {59, 60, 63.1579}, {70, 73, 3 * 63.1579}}},
		{name: "Bohlen-Pierce", scl: equal(13, "3/1", 1901.9550),
			checks: []struct {
				key int
				hz  float64
			}{{60, c4}, {73, 3 * c4}, {47, c4 / 3}},
			steps: []struct {
				from, to int
				cents    float64
			}{{60, 61, 146.3042}, {72, 73, 146.3042}, {60, 73, 1901.9550}}},
		{name: "A4 at 432", scl: twelve, kbm: a432,
			checks: []struct {
				key int
				hz  float64
			}{{69, 432}, {57, 216}, {81, 864}, {60, 256.8687}},
			steps: []struct {
				from, to int
				cents    float64
			}{{60, 61, 100}, {0, 127, 12700}}},
		{name: "just major", scl: "just\n7\n9/8\n5/4\n4/3\n3/2\n5/3\n15/8\n2\n", kbm: `! white keys only
12
0
127
60
60
261.6255653
7
0
x
1
x
2
3
x
4
x
5
x
6
`,
			checks: []struct {
				key int
				hz  float64
			}{{60, c4}, {64, c4 * 5 / 4}, {67, c4 * 3 / 2}, {72, 2 * c4}, {59, c4 * 15 / 16}, {61, 0}, {70, 0}, {58, 0}},
			steps: []struct {
				from, to int
				cents    float64
			}{{60, 64, 386.3137}, {60, 67, 701.9550}}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			keys := keyboard(t, c.scl, c.kbm, c4)
			for _, k := range c.checks {
				if k.hz == 0 {
					if keys[k.key] != 0 {
						t.Errorf("key %d is mapped to %g Hz, want unmapped", k.key, keys[k.key])
					}
					continue
				}
				// 0.01 cent: what a root key must hold to.
				if d := cents(k.hz, keys[k.key]); math.Abs(d) > 0.01 {
					t.Errorf("key %d is %.6f Hz, want %.4f (%.4f cents off)", k.key, keys[k.key], k.hz, d)
				}
			}
			for _, s := range c.steps {
				if d := cents(keys[s.from], keys[s.to]); math.Abs(d-s.cents) > 1e-3 {
					t.Errorf("key %d to %d is %.4f cents, want %.4f", s.from, s.to, d, s.cents)
				}
			}
		})
	}
}

// TestKeymapRange: keys outside first..last are unmapped, the reference
// key is placed even outside them, and entries left out at the end of the
// pattern are unmapped.
func TestKeymapRange(t *testing.T) {
	keys := keyboard(t, equal(12, "2/1", 1200), "5\n21\n108\n60\n60\n440\n12\n0\n1\n2\n3\n", 0)
	for k := range 128 {
		mapped := k >= 21 && k <= 108 && ((k-60)%5+5)%5 <= 3
		if (keys[k] != 0) != mapped {
			t.Errorf("key %d: %g Hz, mapped should be %v", k, keys[k], mapped)
		}
	}
	// Key 69 is entry (69−60) mod 5 = 4, left out: the reference is
	// unmapped, an error naming the reference key's line.
	s, _ := tuning.ParseScale("t.scl", []byte(equal(12, "2/1", 1200)))
	m, err := tuning.ParseKeymap("t.kbm", []byte("! pattern\n5\n21\n108\n60\n69\n440\n12\n0\n1\n2\n3\n"))
	if err != nil {
		t.Fatal(err)
	}
	_, err = tuning.Keyboard(s, m)
	var e *tuning.Error
	if !errors.As(err, &e) || e.File != "t.kbm" || e.Line != 6 || !strings.Contains(e.Msg, "reference key 69 is unmapped") {
		t.Errorf("got %v, want t.kbm:6: the reference key 69 is unmapped", err)
	}
}

// TestReadErrors: one case per bad input, with the file, line and column
// the error names and a part of its message.
func TestReadErrors(t *testing.T) {
	const kbmHead = "12\n0\n127\n60\n69\n440.0\n12\n"
	cases := []struct {
		name, file, text string
		line, col        int
		msg              string
	}{
		{"only comments", "s.scl", "! a\n! b\n", 2, 1, "found only comments"},
		{"no count", "s.scl", "desc\n", 1, 1, "expected the number of pitches"},
		{"count not a number", "s.scl", "desc\n  twelve\n", 2, 3, `expected the number of pitches, a whole number`},
		{"count with words", "s.scl", "desc\n 12 notes\n", 2, 5, "expected only the number of pitches"},
		{"negative count", "s.scl", "desc\n-1\n", 2, 1, "expected the number of pitches"},
		{"too few pitches", "s.scl", "desc\n3\n5/4\n3/2\n", 4, 1, "says the scale has 3 pitches, but the file ends after 2"},
		{"too many pitches", "s.scl", "desc\n1\n2/1\n\n  3/1\n", 5, 3, "this line would be one more"},
		{"blank pitch", "s.scl", "desc\n2\n\n2/1\n", 3, 1, "expected a pitch"},
		{"word for a pitch", "s.scl", "desc\n1\n   fifth\n", 3, 4, "expected a pitch"},
		{"negative ratio", "s.scl", "desc\n1\n -3/2\n", 3, 2, "the ratio -3/2 is negative"},
		{"zero denominator", "s.scl", "desc\n1\n3/0\n", 3, 3, "denominator cannot be 0"},
		{"no denominator", "s.scl", "desc\n1\n3/ x\n", 3, 3, "expected a denominator"},
		{"zero ratio", "s.scl", "desc\n1\n0/4\n", 3, 1, "a ratio of 0 is no pitch"},
		{"huge numerator", "s.scl", "desc\n1\n99999999999999999999999/2\n", 3, 1, "numerator"},
		{"huge cents", "s.scl", "desc\n1\n" + strings.Repeat("9", 400) + ".0\n", 3, 1, "too large for cents"},
		{"a period alone", "s.scl", "desc\n1\n.\n", 3, 1, "expected a pitch"},
		{"crlf lines", "s.scl", "desc\r\n1\r\n3/0\r\n", 3, 3, "denominator cannot be 0"},

		{"kbm empty", "k.kbm", "! nothing\n", 1, 1, "expected the size of the pattern"},
		{"kbm ends early", "k.kbm", "12\n0\n127\n", 3, 1, "expected the middle key"},
		{"kbm key above 127", "k.kbm", "12\n0\n128\n60\n69\n440\n12\n", 3, 1, "the last MIDI key to tune is 128, outside 0..127"},
		{"kbm first above last", "k.kbm", "12\n100\n20\n60\n69\n440\n12\n", 3, 1, "the last key to tune, 20, is below the first, 100"},
		{"kbm frequency zero", "k.kbm", "12\n0\n127\n60\n69\n0.0\n12\n", 6, 1, "must be a positive, finite number"},
		{"kbm frequency word", "k.kbm", "12\n0\n127\n60\n69\n  A4\n12\n", 6, 3, "expected the frequency of the reference key"},
		{"kbm frequency infinite", "k.kbm", "12\n0\n127\n60\n69\ninf\n12\n", 6, 1, "expected the frequency"},
		{"kbm frequency overflows", "k.kbm", "12\n0\n127\n60\n69\n1e999\n12\n", 6, 1, "positive, finite"},
		{"kbm frequency with words", "k.kbm", "12\n0\n127\n60\n69\n440.0 Hz\n12\n", 6, 7, "expected only the reference frequency"},
		{"kbm too many entries", "k.kbm", "! size\n2\n0\n127\n60\n69\n440\n12\n0\n1\n2\n", 11, 1, "the pattern has 2 keys (line 2)"},
		{"kbm bad entry", "k.kbm", kbmHead + "0\n y\n", 9, 2, "expected a scale degree or x"},
		{"kbm negative entry", "k.kbm", kbmHead + "-1\n", 8, 1, "expected a scale degree or x"},
		{"kbm entries for linear", "k.kbm", "0\n0\n127\n60\n69\n440\n12\n0\n", 8, 1, "size 0 is a linear mapping"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var err error
			if strings.HasSuffix(c.file, ".scl") {
				_, err = tuning.ParseScale(c.file, []byte(c.text))
			} else {
				_, err = tuning.ParseKeymap(c.file, []byte(c.text))
			}
			var e *tuning.Error
			if !errors.As(err, &e) {
				t.Fatalf("got %v, want an error at %d:%d", err, c.line, c.col)
			}
			if e.File != c.file || e.Line != c.line || e.Column != c.col || !strings.Contains(e.Msg, c.msg) {
				t.Errorf("got %v\nwant %s:%d:%d: …%s…", e, c.file, c.line, c.col, c.msg)
			}
		})
	}
}

// TestKeyboardErrors: scales and mappings that read but cannot tune a
// keyboard, each named at its place.
func TestKeyboardErrors(t *testing.T) {
	cases := []struct {
		name, scl, kbm string
		file           string
		line           int
		msg            string
	}{
		{"no pitches", "none\n 0\n", "", "t.scl", 2, "no period"},
		{"period of zero", "flat\n2\n100.0\n0.0\n", "", "t.scl", 4, "the period, the scale's last pitch, is 0 cents"},
		{"falling period", "down\n1\n1/2\n", "", "t.scl", 3, "is -1200 cents"},
		{"reference on an x", "s\n1\n2/1\n", "1\n0\n127\n60\n60\n440\n1\nx\n", "t.kbm", 5, "(the entry for it on line 8 is x)"},
		{"steps are too wide", "s\n1\n100000.0\n", "", "t.scl", 3, "are too wide for 128 keys"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s, err := tuning.ParseScale("t.scl", []byte(c.scl))
			if err != nil {
				t.Fatal(err)
			}
			m := tuning.Linear(60, 261.6)
			if c.kbm != "" {
				if m, err = tuning.ParseKeymap("t.kbm", []byte(c.kbm)); err != nil {
					t.Fatal(err)
				}
			}
			_, err = tuning.Keyboard(s, m)
			var e *tuning.Error
			if !errors.As(err, &e) || e.File != c.file || e.Line != c.line || !strings.Contains(e.Msg, c.msg) {
				t.Errorf("got %v, want %s:%d: …%s…", err, c.file, c.line, c.msg)
			}
		})
	}
}
