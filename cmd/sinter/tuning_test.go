package main

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// writeFiles writes name → text into a new folder and returns the folder.
func writeFiles(t *testing.T, files map[string]string) string {
	t.Helper()
	dir := t.TempDir()
	for name, text := range files {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

const (
	twelveScale = "twelve\n12\n100.0\n200.0\n300.0\n400.0\n500.0\n600.0\n700.0\n800.0\n900.0\n1000.0\n1100.0\n2/1\n"
	// a432 maps A4 (key 69) to 432 Hz on a 12-step scale.
	a432 = "12\n0\n127\n60\n69\n432.0\n12\n0\n1\n2\n3\n4\n5\n6\n7\n8\n9\n10\n11\n"
	// justScale is 5-limit just major on the white keys from middle C.
	justScale = "just\n7\n9/8\n5/4\n4/3\n3/2\n5/3\n15/8\n2/1\n"
	whiteKeys = "12\n0\n127\n60\n60\n261.6255653005986\n7\n0\nx\n1\nx\n2\n3\nx\n4\nx\n5\nx\n6\n"
)

// TestCheckShowsTuning: check lists every key the mapping plays with its
// frequency and its offset from 12-TET. A4 mapped to 432 Hz puts every
// key 1200·log2(432/440) = −31.767 cents from 12-TET at 440 (the cents
// formula, common practice); just intonation puts E4 (5/4) 13.686 cents
// flat and G4 (3/2) 1.955 cents sharp of 12-TET, with E4 at 327.0320 Hz.
// render then writes a set verify passes.
func TestCheckShowsTuning(t *testing.T) {
	type key struct {
		Key          int     `json:"key"`
		Hz           float64 `json:"hz"`
		Cents        float64 `json:"cents_from_12tet"`
		Root         int     `json:"root"`
		MappingError float64 `json:"mapping_error_cents"`
	}
	var report struct {
		Result struct {
			Tuning struct {
				Scale      string `json:"scale"`
				TwelveTone bool   `json:"twelve_tone"`
				Keys       []key  `json:"keys"`
			} `json:"tuning"`
		} `json:"result"`
	}
	cases := []struct {
		name, tuning, keys string
		twelveTone         bool
		want               map[int][2]float64 // key → Hz, cents from 12-TET
		text               string
	}{
		{"A4 at 432", "{scale: s.scl, keymap: k.kbm}", "[60, 69]", true,
			map[int][2]float64{60: {256.8687, -31.767}, 64: {323.6343, -31.767}, 69: {432, -31.767}},
			"every key at its 12-TET pitch"},
		{"just", "{scale: j.scl, keymap: w.kbm}", "[C4, G4]", false,
			map[int][2]float64{60: {261.6256, 0}, 64: {327.0320, -13.686}, 67: {392.4383, 1.955}},
			"E4    64  327.0320    -13.686 c    67"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := writeFiles(t, map[string]string{"s.scl": twelveScale, "k.kbm": a432, "j.scl": justScale, "w.kbm": whiteKeys,
				"p.yaml": "name: tuned\nsample_rate: 8000\nhold: 0.1\ntail: 0.05\ntuning: " + c.tuning + "\nkeys: " + c.keys + "\npartials: [{ratio: 1}]\n"})
			path := filepath.Join(dir, "p.yaml")
			code, stdout, stderr := runCLI("check", path)
			if code != exitOK || !strings.Contains(stdout, c.text) {
				t.Fatalf("check: exit %d, %s\n%s\nwant …%s…", code, stderr, stdout, c.text)
			}
			code, stdout, stderr = runCLI("check", path, "--json")
			if err := json.Unmarshal([]byte(stdout), &report); code != exitOK || err != nil {
				t.Fatalf("check --json: exit %d, %v, %s", code, err, stderr)
			}
			tp := report.Result.Tuning
			if tp.TwelveTone != c.twelveTone || !strings.HasSuffix(tp.Scale, ".scl") {
				t.Errorf("tuning %+v", tp)
			}
			found := 0
			for _, k := range tp.Keys {
				if math.Abs(k.MappingError) > 0.5 {
					t.Errorf("key %d: the mapping misses by %g cents", k.Key, k.MappingError)
				}
				w, ok := c.want[k.Key]
				if !ok {
					continue
				}
				found++
				if math.Abs(k.Hz-w[0]) > 5e-5 || math.Abs(k.Cents-w[1]) > 5e-4 {
					t.Errorf("key %d: %.4f Hz, %+.3f cents from 12-TET; want %.4f Hz, %+.3f", k.Key, k.Hz, k.Cents, w[0], w[1])
				}
			}
			if found != len(c.want) {
				t.Errorf("check lists %d of the keys %v: %+v", found, c.want, tp.Keys)
			}
			out := filepath.Join(dir, "set")
			if code, _, stderr := runCLI("render", path, "-o", out, "--quiet"); code != exitOK {
				t.Fatalf("render: exit %d, %s", code, stderr)
			}
			if code, stdout, stderr := runCLI("verify", out); code != exitOK {
				t.Fatalf("verify: exit %d, %s %s", code, stdout, stderr)
			}
		})
	}
}

// TestTuningErrorsExit2: a problem in a scale file or with a root key is a
// patch error, exit 2, naming the file, line and column.
func TestTuningErrorsExit2(t *testing.T) {
	cases := []struct{ name, tuning, keys, scale, want string }{
		{"error in the scale", "{scale: j.scl}", "C4", "just\n2\n5/4\n -2/1\n", "j.scl:4:2: tuning.scale: the ratio -2/1 is negative"},
		{"unmapped root", "{scale: j.scl, keymap: w.kbm}", "[C4, \"C#4\"]", justScale, "p.yaml:3:12: keys[1]: key C#4 (61) is unmapped by "},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := writeFiles(t, map[string]string{"j.scl": c.scale, "w.kbm": whiteKeys,
				"p.yaml": "name: tuned\ntuning: " + c.tuning + "\nkeys: " + c.keys + "\npartials: [{ratio: 1}]\n"})
			code, _, stderr := runCLI("render", filepath.Join(dir, "p.yaml"), "--quiet")
			if code != exitUsage || !strings.Contains(stderr, c.want) {
				t.Errorf("exit %d, stderr %q; want 2 and …%s…", code, stderr, c.want)
			}
			if _, err := os.Stat(filepath.Join(dir, "out")); err == nil {
				t.Errorf("a patch with an error wrote its output folder")
			}
		})
	}
}
