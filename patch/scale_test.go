package patch_test

import (
	"crypto/sha256"
	"encoding/hex"
	"math"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"sinter/patch"
)

// c4 is MIDI 60 in 12-TET from A4 = 440 Hz: 261.625565 Hz (standards
// sheet §4 check value).
const c4 = 261.6255653005986

// justScale is 5-limit just intonation: 9/8, 5/4 (386.3137 cents), 4/3,
// 3/2 (701.9550 cents), 5/3, 15/8 and the octave.
const justScale = "! just.scl\n5-limit just major\n 7\n 9/8\n 5/4\n 4/3\n 3/2\n 5/3\n 15/8\n 2/1\n"

// whiteKeys maps the seven degrees onto the white keys from middle C,
// which sounds at 261.6255653 Hz; the black keys are unmapped.
const whiteKeys = "! white.kbm\n12\n0\n127\n60\n60\n261.6255653005986\n7\n0\nx\n1\nx\n2\n3\nx\n4\nx\n5\nx\n6\n"

func centsBetween(f1, f2 float64) float64 { return 1200 * math.Log2(f2/f1) }

// TestScaleTuning: root keys render at the scale's frequency, within 0.01
// cent of worked values, and the plan records the files with their
// SHA-256.
func TestScaleTuning(t *testing.T) {
	twelve := "twelve\n12\n100.0\n200.0\n300.0\n400.0\n500.0\n600.0\n700.0\n800.0\n900.0\n1000.0\n1100.0\n2/1\n"
	nineteen := "19 equal\n19\n"
	for i := 1; i < 19; i++ {
		nineteen += strconv.FormatFloat(1200*float64(i)/19, 'f', 5, 64) + "\n"
	}
	nineteen += "2/1\n"
	cases := []struct {
		name   string
		tuning string
		files  map[string]string
		keys   string
		want   map[int]float64
	}{
		{"just, white keys", "{scale: t/just.scl, keymap: t/white.kbm}", map[string]string{"t/just.scl": justScale, "t/white.kbm": whiteKeys},
			"[C4, E4, G4, C5, B3]", map[int]float64{60: c4, 64: c4 * 5 / 4, 67: c4 * 3 / 2, 72: 2 * c4, 59: c4 * 15 / 16}},
		// Without a keymap, key 60 is degree 0 at its 12-TET pitch from
		// a4: 432·2^(−9/12) = 256.8687 Hz.
		{"19 equal from a4 432", "{scale: t/19.scl, a4: 432}", map[string]string{"t/19.scl": nineteen},
			"[60, 61, 79]", map[int]float64{60: 256.8687, 61: 256.8687 * math.Exp2(63.1579/1200), 79: 2 * 256.8687}},
		// A keymap that maps A4 to 432 Hz: middle C at 256.8687 Hz.
		{"A4 at 432", "{scale: t/12.scl, keymap: t/432.kbm}", map[string]string{"t/12.scl": twelve,
			"t/432.kbm": "12\n0\n127\n60\n69\n432.0\n12\n0\n1\n2\n3\n4\n5\n6\n7\n8\n9\n10\n11\n"},
			"[57, 60, 69]", map[int]float64{57: 216, 60: 256.8687, 69: 432}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			files := map[string]string{"p.yaml": "name: p\ntuning: " + c.tuning + "\nkeys: " + c.keys + "\npartials: [{ratio: 1}]\n"}
			for k, v := range c.files {
				files[k] = v
			}
			dir := writeFiles(t, files)
			p, err := patch.Load(filepath.Join(dir, "p.yaml"))
			if err != nil {
				t.Fatal(err)
			}
			plan, err := p.Expand(patch.ExpandOptions{})
			if err != nil {
				t.Fatal(err)
			}
			for _, n := range plan.Notes {
				if d := centsBetween(c.want[n.Key], n.F0); math.Abs(d) > 0.01 {
					t.Errorf("key %d renders at %.6f Hz, want %.4f (%.4f cents off)", n.Key, n.F0, c.want[n.Key], d)
				}
				if n.Partials[0].Hz != n.F0 {
					t.Errorf("key %d: its partial at ratio 1 is %g Hz, not the fundamental %g", n.Key, n.Partials[0].Hz, n.F0)
				}
			}
			for name, text := range c.files {
				sum := sha256.Sum256([]byte(text))
				inc := plan.Tuning.Scale
				if strings.HasSuffix(name, ".kbm") {
					inc = *plan.Tuning.Keymap
				}
				if inc.Path != filepath.Join(dir, name) || inc.SHA256 != hex.EncodeToString(sum[:]) {
					t.Errorf("records %+v for %s", inc, name)
				}
			}
		})
	}
}

// TestTwelveToneScale: a scale of 12 steps of 100 cents gives the plan no
// scale gives, number for number, so its files are bit-identical; with a
// keymap that puts A4 at 432 Hz it gives the plan of a4: 432.
func TestTwelveToneScale(t *testing.T) {
	twelve := "twelve\n12\n100.0\n200.0\n300.0\n400.0\n500.0\n600.0\n700.0\n800.0\n900.0\n1000.0\n1100.0\n2/1\n"
	body := "keys: {from: 21, to: 108, step: 5}\nvelocities: [50, 100]\nlayer_crossfade: 6\npartials: [{harmonics: 12, stiffness: 0.0001}]\n"
	cases := []struct {
		name, tuning, plain string
	}{
		{"no keymap", "tuning: {scale: 12.scl}\n", ""},
		{"no keymap, a4 442", "tuning: {scale: 12.scl, a4: 442}\n", "tuning: {a4: 442}\n"},
		{"A4 at 432", "tuning: {scale: 12.scl, keymap: 432.kbm}\n", "tuning: {a4: 432}\n"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := writeFiles(t, map[string]string{
				"scaled.yaml": "name: p\n" + c.tuning + body,
				"plain.yaml":  "name: p\n" + c.plain + body,
				"12.scl":      twelve,
				"432.kbm":     "12\n0\n127\n60\n69\n432.0\n12\n0\n1\n2\n3\n4\n5\n6\n7\n8\n9\n10\n11\n",
			})
			plans := make([]*patch.Plan, 2)
			for i, name := range []string{"scaled.yaml", "plain.yaml"} {
				p, err := patch.Load(filepath.Join(dir, name))
				if err != nil {
					t.Fatal(err)
				}
				if plans[i], err = p.Expand(patch.ExpandOptions{}); err != nil {
					t.Fatal(err)
				}
			}
			if !plans[0].Tuning.TwelveTone {
				t.Errorf("a 12-TET scale is not taken for one")
			}
			if !reflect.DeepEqual(plans[0].Notes, plans[1].Notes) {
				t.Errorf("the notes differ from those without a scale")
			}
		})
	}
}

// TestTuningErrors: each problem with a scale names the file it is in,
// with its line, column and the tuning key's path.
func TestTuningErrors(t *testing.T) {
	patchWith := func(tuning, keys string) string {
		return "name: p\ntuning: " + tuning + "\nkeys: " + keys + "\npartials: [{ratio: 1}]\n"
	}
	files := func(extra ...string) map[string]string {
		m := map[string]string{"just.scl": justScale, "white.kbm": whiteKeys}
		for i := 0; i+1 < len(extra); i += 2 {
			m[extra[i]] = extra[i+1]
		}
		return m
	}
	cases := []struct {
		name, patch string
		files       map[string]string
		file        string
		line, col   int
		path, msg   string
	}{
		{"error in the scale", patchWith("{scale: bad.scl}", "C4"), files("bad.scl", "d\n2\n5/4\n -2/1\n"),
			"bad.scl", 4, 2, "tuning.scale", "the ratio -2/1 is negative"},
		{"error in the keymap", patchWith("{scale: just.scl, keymap: bad.kbm}", "C4"), files("bad.kbm", "12\n0\n127\n60\n60\n  middle C\n7\n"),
			"bad.kbm", 6, 3, "tuning.keymap", "expected the frequency of the reference key"},
		{"reference key unmapped", patchWith("{scale: just.scl, keymap: bad.kbm}", "C4"), files("bad.kbm", "12\n0\n127\n60\n61\n277.2\n7\n0\nx\n1\n"),
			"bad.kbm", 5, 1, "tuning.keymap", "the reference key 61 is unmapped (the entry for it on line 9 is x)"},
		{"missing scale", patchWith("{scale: none.scl}", "C4"), files(),
			"p.yaml", 2, 17, "tuning.scale", "cannot read"},
		{"absolute path", patchWith("{scale: /etc/just.scl}", "C4"), files(),
			"p.yaml", 2, 17, "tuning.scale", "must be a path relative to p.yaml"},
		{"keymap alone", patchWith("{keymap: white.kbm}", "C4"), files(),
			"p.yaml", 2, 18, "tuning.keymap", "a keymap places the keys of a scale; give the scale too"},
		{"a4 beside a keymap", patchWith("{scale: just.scl, keymap: white.kbm, a4: 440}", "C4"), files(),
			"p.yaml", 2, 50, "tuning.a4", "the keymap gives the reference frequency"},
		{"unmapped root in a list", patchWith("{scale: just.scl, keymap: white.kbm}", "[C4, \"C#4\", E4]"), files(),
			"p.yaml", 3, 12, "keys[1]", "key C#4 (61) is unmapped by "},
		{"unmapped root in a range", patchWith("{scale: just.scl, keymap: white.kbm}", "{from: C4, to: E4, step: 3}"), files(),
			"p.yaml", 3, 7, "keys", "key D#4 (63) is unmapped by"},
		{"root out of reach", patchWith("{scale: wide.scl}", "[60, 72]"), files("wide.scl", "wide\n1\n3000.0\n"),
			"p.yaml", 3, 12, "keys[1]", "key C5 (72) would sound at 2.809e+11 Hz under the scale"},
		{"no period", patchWith("{scale: none.scl}", "C4"), files("none.scl", "none\n0\n"),
			"none.scl", 2, 1, "tuning.scale", "no period"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			c.files["p.yaml"] = c.patch
			dir := writeFiles(t, c.files)
			_, err := patch.Load(filepath.Join(dir, "p.yaml"))
			list, ok := err.(patch.ErrorList)
			if !ok || len(list) == 0 {
				t.Fatalf("Load: %v; want an ErrorList", err)
			}
			e := list[0]
			if e.File != filepath.Join(dir, c.file) || e.Line != c.line || e.Column != c.col || e.Path != c.path || !strings.Contains(e.Msg, c.msg) {
				t.Errorf("got %v\nwant %s:%d:%d: %s: …%s…", e, c.file, c.line, c.col, c.path, c.msg)
			}
		})
	}
}
