package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"sinter/patch"
	"sinter/synth/sampleset"
)

const smallPatch = `name: test-tone
sample_rate: 8000
bit_depth: 16
keys: [C4, E4]
velocities: [64, 127]
hold: 0.1
tail: 0.05
partials:
  - harmonics: 4
    amplitude: "1/n"
`

func writePatch(t *testing.T, text string) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "p.yaml")
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

func runCLI(args ...string) (code int, stdout, stderr string) {
	var out, errs bytes.Buffer
	code = run(args, &out, &errs)
	return code, out.String(), errs.String()
}

func TestExitStatuses(t *testing.T) {
	good := writePatch(t, smallPatch)
	bad := writePatch(t, "name: test-tone\nsampel_rate: 8000\npartials: [{harmonics: 2}]\n")
	cases := []struct {
		name   string
		args   []string
		code   int
		stdout string // substring expected on stdout
		stderr string // substring expected on stderr
	}{
		{"no arguments", nil, exitUsage, "", "Usage:"},
		{"help", []string{"help"}, exitOK, "sinter render PATCH.yaml", ""},
		{"version", []string{"--version"}, exitOK, "sinter " + version, ""},
		{"unknown command", []string{"bake"}, exitUsage, "", `unknown command "bake"`},
		{"check good", []string{"check", good}, exitOK, "4 (2 keys x 2 velocity layers x 1 round robin)", ""},
		{"check bad patch", []string{"check", bad}, exitUsage, "", `p.yaml:2:1: sampel_rate: unknown key "sampel_rate" (did you mean "sample_rate"?)`},
		{"check missing file", []string{"check", filepath.Join(t.TempDir(), "none.yaml")}, exitUsage, "", "cannot read the patch"},
		{"render two patches", []string{"render", good, good}, exitUsage, "", "expected one argument, got 2"},
		{"render bad flag", []string{"render", good, "--jobz", "2"}, exitUsage, "", "flag provided but not defined"},
		{"render zero jobs", []string{"render", good, "--jobs", "0"}, exitUsage, "", "--jobs must be 1 or more"},
		{"render key not in patch", []string{"render", good, "--keys", "D4"}, exitUsage, "", "key D4 (62) is not one of the patch's keys"},
		{"render bad key list", []string{"render", good, "--keys", "C4,H9"}, exitUsage, "", `"H9" is not a key`},
		{"verify missing set", []string{"verify", t.TempDir()}, exitFailure, "", "manifest.json"},
		{"render empty shard", []string{"render", good, "--shard", ""}, exitUsage, "", `shard "" is not K/N (shard K of N, from 1) or auto`},
		{"render empty shard, = form", []string{"render", good, "--shard="}, exitUsage, "", `shard "" is not K/N`},
		{"render shard without N", []string{"render", good, "--shard", "1/"}, exitUsage, "", `shard "1/" is not K/N`},
		{"render shard without K", []string{"render", good, "--shard", "/3"}, exitUsage, "", `shard "/3" is not K/N`},
		{"render shard 0", []string{"render", good, "--shard", "0/3"}, exitUsage, "", "shard 0 of 3 does not exist"},
		{"check seed above 2^53", []string{"check", writePatch(t, "name: x\nseed: 9007199254740993\npartials: [{ratio: 1}]\n")}, exitUsage, "",
			"p.yaml:2:7: seed: 9007199254740993 is out of range: expected 0..9007199254740992"},
		{"help for a command unknown", []string{"help", "bake"}, exitUsage, "", `unknown command "bake"`},
		{"check crossfade wider than a layer", []string{"check", writePatch(t, "name: x\nvelocities: [40, 60, 127]\nlayer_crossfade: 30\npartials: [{ratio: 1}]\n")}, exitUsage, "",
			"p.yaml:3:18: layer_crossfade: a crossfade over 30 velocities is wider than the narrowest layer"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, stdout, stderr := runCLI(c.args...)
			if code != c.code {
				t.Errorf("exit %d, want %d\nstdout: %s\nstderr: %s", code, c.code, stdout, stderr)
			}
			if !strings.Contains(stdout, c.stdout) {
				t.Errorf("stdout %q lacks %q", stdout, c.stdout)
			}
			if !strings.Contains(stderr, c.stderr) {
				t.Errorf("stderr %q lacks %q", stderr, c.stderr)
			}
		})
	}
}

func TestRenderThenVerify(t *testing.T) {
	good := writePatch(t, smallPatch)
	out := filepath.Join(t.TempDir(), "set")
	code, stdout, stderr := runCLI("render", good, "-o", out, "--jobs", "2")
	if code != exitOK {
		t.Fatalf("render exit %d: %s", code, stderr)
	}
	if !strings.Contains(stdout, "rendered 4 files") {
		t.Errorf("stdout %q", stdout)
	}
	// Not a terminal, so progress is one plain line per file (for CI logs).
	if lines := strings.Count(stderr, "\n"); lines != 4 || strings.Contains(stderr, "\r") {
		t.Errorf("progress on a non-terminal should be 4 plain lines, got %q", stderr)
	}
	names, _ := filepath.Glob(filepath.Join(out, "*.wav"))
	if len(names) != 4 {
		t.Fatalf("%d WAV files, want 4: %v", len(names), names)
	}
	if code, _, stderr := runCLI("verify", out); code != exitOK {
		t.Fatalf("verify exit %d: %s", code, stderr)
	}
	if err := os.WriteFile(names[0], []byte("RIFF"), 0o644); err != nil {
		t.Fatal(err)
	}
	if code, _, stderr := runCLI("verify", out); code != exitFailure || !strings.Contains(stderr, filepath.Base(names[0])) {
		t.Fatalf("verify of a damaged set: exit %d, stderr %q", code, stderr)
	}
}

// TestVerifyMapping: a mapping edited so that a region names a file that
// does not exist fails verify, which names the region by its line and
// counts its problems in words.
func TestVerifyMapping(t *testing.T) {
	good := writePatch(t, strings.Replace(smallPatch, "velocities: [64, 127]", "velocities: [127]", 1))
	out := filepath.Join(t.TempDir(), "set")
	if code, _, stderr := runCLI("render", good, "-o", out, "--quiet"); code != exitOK {
		t.Fatalf("render: %s", stderr)
	}
	if code, stdout, _ := runCLI("verify", out); code != exitOK || !strings.Contains(stdout, "the mapping plays each of them") {
		t.Fatalf("verify of a fresh set: exit %d, %q", code, stdout)
	}
	sfz := filepath.Join(out, "test-tone.sfz")
	text, _ := os.ReadFile(sfz)
	// Both regions play the C4 file: E4's is played by none.
	edited := strings.Replace(string(text), "test-tone_064_E4_v127.wav", "test-tone_060_C4_v127.wav", 1)
	if err := os.WriteFile(sfz, []byte(edited), 0o644); err != nil {
		t.Fatal(err)
	}
	code, _, stderr := runCLI("verify", out)
	if code != exitFailure || !strings.Contains(stderr, "test-tone_064_E4_v127.wav: no region of test-tone.sfz plays it") || !strings.Contains(stderr, "1 problem in") {
		t.Errorf("exit %d, stderr %q", code, stderr)
	}
	edited = strings.Replace(string(text), "test-tone_064_E4_v127.wav", "test-tone_064_E4_v128.wav", 1)
	if err := os.WriteFile(sfz, []byte(edited), 0o644); err != nil {
		t.Fatal(err)
	}
	code, _, stderr = runCLI("verify", out)
	if code != exitFailure || !strings.Contains(stderr, "test-tone.sfz:4:1: <region> plays test-tone_064_E4_v128.wav, which does not exist") || !strings.Contains(stderr, "2 problems in") {
		t.Errorf("exit %d, stderr %q", code, stderr)
	}
}

func TestBadPatchWritesNothing(t *testing.T) {
	bad := writePatch(t, strings.Replace(smallPatch, `"1/n"`, `"1/(n-1)"`, 1))
	out := filepath.Join(t.TempDir(), "set")
	code, _, stderr := runCLI("render", bad, "-o", out)
	if code != exitUsage || !strings.Contains(stderr, "partials[0].amplitude") {
		t.Fatalf("exit %d, stderr %q", code, stderr)
	}
	if _, err := os.Stat(out); !os.IsNotExist(err) {
		t.Fatalf("the output folder exists after a patch error: %v", err)
	}
	entries, _ := os.ReadDir(filepath.Dir(out))
	if len(entries) != 0 {
		t.Fatalf("files left beside the output folder: %v", entries)
	}
}

func TestQuietRender(t *testing.T) {
	good := writePatch(t, smallPatch)
	code, stdout, stderr := runCLI("render", "--quiet", good, "-o", filepath.Join(t.TempDir(), "set"), "--keys", "E4")
	if code != exitOK || stdout != "" || stderr != "" {
		t.Fatalf("exit %d, stdout %q, stderr %q", code, stdout, stderr)
	}
}

func TestParseKeys(t *testing.T) {
	cases := []struct {
		in   string
		want []int
	}{
		// Scientific pitch notation, C4 = MIDI 60 (MIDI 1.0 Detailed Specification: middle C = 60).
		{"C4,E4", []int{60, 64}},
		{"60-62", []int{60, 61, 62}},
		{"C4-D4", []int{60, 61, 62}},
		{"C-1-C#-1", []int{0, 1}},
		{" 69 ", []int{69}},
	}
	for _, c := range cases {
		got, err := parseKeys(c.in)
		if err != nil || !reflect.DeepEqual(got, c.want) {
			t.Errorf("parseKeys(%q) = %v, %v; want %v", c.in, got, err, c.want)
		}
	}
	for _, bad := range []string{"", "C4,", "62-60", "C4-", "Q4"} {
		if _, err := parseKeys(bad); err == nil {
			t.Errorf("parseKeys(%q) succeeded", bad)
		}
	}
}

// TestJSONReports: with --json, check and render print one JSON document
// on stdout, the result or the errors with their places, and nothing on
// stderr but progress.
func TestJSONReports(t *testing.T) {
	good := writePatch(t, smallPatch)
	bad := writePatch(t, "name: test-tone\nsampel_rate: 8000\npartials: [{harmonics: 2}]\n")
	type report struct {
		OK     bool `json:"ok"`
		Result struct {
			Files int `json:"files"`
			Work  struct {
				Computed int64 `json:"computed"`
				Nominal  int64 `json:"nominal"`
			} `json:"partial_samples"`
			PerKey []struct {
				Note string `json:"note"`
				Kept int    `json:"partials_kept"`
			} `json:"per_key"`
		} `json:"result"`
		Errors []struct {
			File    string `json:"file"`
			Line    int    `json:"line"`
			Column  int    `json:"column"`
			Message string `json:"message"`
		} `json:"errors"`
	}
	decode := func(t *testing.T, stdout string) report {
		t.Helper()
		var r report
		if err := json.Unmarshal([]byte(stdout), &r); err != nil {
			t.Fatalf("stdout is not JSON: %v\n%s", err, stdout)
		}
		return r
	}
	t.Run("check", func(t *testing.T) {
		code, stdout, stderr := runCLI("check", good, "--json")
		r := decode(t, stdout)
		if code != exitOK || !r.OK || stderr != "" {
			t.Fatalf("exit %d, ok %v, stderr %q", code, r.OK, stderr)
		}
		// 4 files of 0.15 s at 8 kHz with 4 partials each, none silent
		// before the end of its release.
		if r.Result.Files != 4 || r.Result.Work.Nominal != 4*4*1200 || len(r.Result.PerKey) != 2 || r.Result.PerKey[0].Note != "C4" {
			t.Errorf("result %+v", r.Result)
		}
		if r.Result.Work.Computed <= 0 || r.Result.Work.Computed > r.Result.Work.Nominal {
			t.Errorf("computed %d of nominal %d", r.Result.Work.Computed, r.Result.Work.Nominal)
		}
	})
	t.Run("bad patch", func(t *testing.T) {
		code, stdout, stderr := runCLI("check", "--json", bad)
		r := decode(t, stdout)
		if code != exitUsage || r.OK || stderr != "" || len(r.Errors) != 1 {
			t.Fatalf("exit %d, report %+v, stderr %q", code, r, stderr)
		}
		if e := r.Errors[0]; e.File != bad || e.Line != 2 || e.Column != 1 || !strings.Contains(e.Message, `did you mean "sample_rate"`) {
			t.Errorf("error %+v", e)
		}
	})
	t.Run("render", func(t *testing.T) {
		code, stdout, _ := runCLI("render", good, "--json", "--quiet", "-o", filepath.Join(t.TempDir(), "set"))
		r := decode(t, stdout)
		if code != exitOK || !r.OK || r.Result.Files != 4 || r.Result.Work.Computed == 0 {
			t.Fatalf("exit %d, report %+v", code, r)
		}
	})
}

// TestRenderRefusesHugeSets: a patch whose set passes the default limits
// (here 128 keys × 127 layers × 4 round robins, 65 024 files) is refused
// with exit status 2 and a message naming the flag, and nothing is
// written; check warns about it.
func TestRenderRefusesHugeSets(t *testing.T) {
	var vels []string
	for v := 1; v <= 127; v++ {
		vels = append(vels, strconv.Itoa(v))
	}
	src := "name: huge\nsample_rate: 8000\nkeys: {from: 0, to: 127}\nvelocities: [" + strings.Join(vels, ", ") + "]\nround_robin: 4\nhold: 0.05\ntail: 0.01\npartials: [{ratio: 1}]\n"
	path := writePatch(t, src)
	out := filepath.Join(t.TempDir(), "set")
	code, _, stderr := runCLI("render", path, "-o", out, "--quiet")
	if code != exitUsage || !strings.Contains(stderr, "65024 files, more than the limit of 50000") || !strings.Contains(stderr, "--allow-large") {
		t.Fatalf("exit %d, stderr %q", code, stderr)
	}
	if _, err := os.Stat(out); !os.IsNotExist(err) {
		t.Errorf("the output folder exists after a refused render")
	}
	if _, stdout, _ := runCLI("check", path); !strings.Contains(stdout, "limits:   the set would have 65024 files") {
		t.Errorf("check does not warn about the limit:\n%s", stdout)
	}
}

// TestPlot: plot writes a PNG of the size asked for, readable by
// image/png, for the key asked for or the patch's key nearest C4.
func TestPlot(t *testing.T) {
	good := writePatch(t, smallPatch)
	file := filepath.Join(t.TempDir(), "tone.png")
	code, stdout, stderr := runCLI("plot", good, "--key", "E4", "-o", file, "--width", "640", "--height", "900")
	if code != exitOK || !strings.Contains(stdout, "drew E4, velocity 127, at its levelling gain of ") {
		t.Fatalf("exit %d, stdout %q, stderr %q", code, stdout, stderr)
	}
	f, err := os.Open(file)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	cfg, err := png.DecodeConfig(f)
	if err != nil || cfg.Width != 640 || cfg.Height != 900 {
		t.Errorf("PNG config %+v, %v; want 640 × 900", cfg, err)
	}
	if code, _, stderr := runCLI("plot", good, "--key", "D4"); code != exitUsage || !strings.Contains(stderr, "not one of the patch's keys") {
		t.Errorf("a key not in the patch: exit %d, %q", code, stderr)
	}
}

// TestInitRendersAsIs: the starter patch passes check and renders, the
// schema its first line points at is written beside it and says so, and
// init never overwrites a file: not a patch, not a schema.
func TestInitRendersAsIs(t *testing.T) {
	dir := t.TempDir()
	wd, _ := os.Getwd()
	if err := os.Chdir(dir); err != nil {
		t.Fatal(err)
	}
	defer os.Chdir(wd)
	code, stdout, stderr := runCLI("init", "first-pad")
	if code != exitOK {
		t.Fatalf("init: exit %d, %s", code, stderr)
	}
	if !strings.Contains(stdout, "wrote first-pad.yaml and sinter.schema.json") {
		t.Errorf("init does not say it wrote the schema: %q", stdout)
	}
	src, _ := os.ReadFile("first-pad.yaml")
	first, _, _ := strings.Cut(string(src), "\n")
	target := strings.TrimPrefix(first, "# yaml-language-server: $schema=")
	if target == first {
		t.Fatalf("the starter patch's first line %q does not point at a schema", first)
	}
	if schema, err := os.ReadFile(target); err != nil || !bytes.Equal(schema, patch.JSONSchema()) {
		t.Errorf("the schema the first line names, %s, is not this version's: %v", target, err)
	}
	// A schema already there is the user's: kept, and said so.
	if err := os.WriteFile("sinter.schema.json", []byte("{}\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if code, stdout, _ := runCLI("init", "second-pad"); code != exitOK || !strings.Contains(stdout, "kept the sinter.schema.json already there") {
		t.Errorf("init beside a schema: exit %d, %q", code, stdout)
	}
	if schema, _ := os.ReadFile("sinter.schema.json"); string(schema) != "{}\n" {
		t.Errorf("init overwrote the schema already there")
	}
	if code, _, stderr := runCLI("render", "first-pad.yaml", "--quiet", "--keys", "C4"); code != exitOK {
		t.Fatalf("render of the starter patch: exit %d, %s", code, stderr)
	}
	if code, _, stderr := runCLI("verify", filepath.Join("out", "first-pad")); code != exitOK {
		t.Fatalf("verify: exit %d, %s", code, stderr)
	}
	if code, _, stderr := runCLI("init", "first-pad"); code != exitUsage || !strings.Contains(stderr, "never overwrites") {
		t.Errorf("a second init: exit %d, %q", code, stderr)
	}
}

// TestProgressBar: the terminal line shows the bar, the count, the time
// elapsed and the time left at the rate so far.
func TestProgressBar(t *testing.T) {
	got := progressBar(12, 48, 3*time.Second)
	want := "[#######-----------------------] 12/48 files, 0:03 elapsed, about 0:09 left"
	if got != want {
		t.Errorf("progressBar = %q\nwant          %q", got, want)
	}
	if got := progressBar(48, 48, 75*time.Second); !strings.HasSuffix(got, "48/48 files, 1:15 elapsed, about 0:00 left") {
		t.Errorf("finished: %q", got)
	}
}

// TestSchemaCommand: sinter schema prints the patch language's schema as
// JSON (encoding/json reads it) with the top-level keys of a patch.
func TestSchemaCommand(t *testing.T) {
	code, stdout, _ := runCLI("schema")
	var s struct {
		Schema     string         `json:"$schema"`
		Properties map[string]any `json:"properties"`
	}
	if err := json.Unmarshal([]byte(stdout), &s); code != exitOK || err != nil {
		t.Fatalf("exit %d, %v", code, err)
	}
	if s.Schema != "https://json-schema.org/draft/2020-12/schema" || s.Properties["partials"] == nil || s.Properties["sample_rate"] == nil {
		t.Errorf("schema %+v", s)
	}
}

// TestParseShard reads K/N and the variables batch engines set.
func TestParseShard(t *testing.T) {
	env := func(vars ...string) func(string) string {
		return func(k string) string {
			for i := 0; i+1 < len(vars); i += 2 {
				if vars[i] == k {
					return vars[i+1]
				}
			}
			return ""
		}
	}
	cases := []struct {
		value string
		env   func(string) string
		want  sampleset.Shard
		err   string
	}{
		{"2/3", env(), sampleset.Shard{Index: 2, Count: 3}, ""},
		{"auto", env("SINTER_SHARD", "3/3"), sampleset.Shard{Index: 3, Count: 3}, ""},
		{"auto", env("CI_NODE_INDEX", "1", "CI_NODE_TOTAL", "4"), sampleset.Shard{Index: 1, Count: 4}, ""},
		{"auto", env("CIRCLE_NODE_INDEX", "0", "CIRCLE_NODE_TOTAL", "2"), sampleset.Shard{Index: 1, Count: 2}, ""},
		{"auto", env("BUILDKITE_PARALLEL_JOB", "4", "BUILDKITE_PARALLEL_JOB_COUNT", "5"), sampleset.Shard{Index: 5, Count: 5}, ""},
		{"auto", env("JOB_COMPLETION_INDEX", "2", "SINTER_SHARDS", "3"), sampleset.Shard{Index: 3, Count: 3}, ""},
		{"auto", env("JOB_COMPLETION_INDEX", "2"), sampleset.Shard{}, "found no shard"},
		{"0/3", env(), sampleset.Shard{}, "does not exist"},
		{"4/3", env(), sampleset.Shard{}, "does not exist"},
		{"two", env(), sampleset.Shard{}, "is not K/N"},
	}
	for _, c := range cases {
		got, err := parseShard(c.value, c.env)
		if c.err != "" {
			if err == nil || !strings.Contains(err.Error(), c.err) {
				t.Errorf("%q: %v, %v; want an error with %q", c.value, got, err, c.err)
			}
			continue
		}
		if err != nil || got != c.want {
			t.Errorf("%q: %v, %v; want %v", c.value, got, err, c.want)
		}
	}
}

// TestShardedRenderAndMerge: three shard renders merged with the merge
// command give the files of a single render, byte for byte.
func TestShardedRenderAndMerge(t *testing.T) {
	root := t.TempDir()
	path := writePatch(t, strings.Replace(smallPatch, "keys: [C4, E4]", "keys: [C3, G3, C4, E4, G4]", 1))
	if code, _, stderr := runCLI("render", path, "-o", filepath.Join(root, "single"), "--quiet"); code != exitOK {
		t.Fatalf("render: %s", stderr)
	}
	var shards []string
	for k := 1; k <= 3; k++ {
		dir := filepath.Join(root, fmt.Sprintf("s%d", k))
		if code, _, stderr := runCLI("render", path, "-o", dir, "--quiet", "--shard", fmt.Sprintf("%d/3", k)); code != exitOK {
			t.Fatalf("shard %d: %s", k, stderr)
		}
		shards = append(shards, dir)
	}
	// The same folder twice, as written or spelled another way, is said to
	// be that, not taken for a second copy of its shard.
	for _, again := range []string{shards[0], shards[0] + "/", shards[0] + "/."} {
		code, _, stderr := runCLI("merge", path, "-o", filepath.Join(root, "twice"), shards[0], shards[1], again, shards[2])
		if want := fmt.Sprintf("cannot merge %s: the folder was given twice (as %s and as %s)", again, shards[0], again); code != exitFailure || !strings.Contains(stderr, want) {
			t.Errorf("merge given %s twice: exit %d, %q; want %q", shards[0], code, stderr, want)
		}
	}
	if code, stdout, stderr := runCLI(append([]string{"merge", path, "-o", filepath.Join(root, "merged")}, shards...)...); code != exitOK || !strings.Contains(stdout, "merged 3 shards") {
		t.Fatalf("merge: exit %d, %s %s", code, stdout, stderr)
	}
	for _, name := range []string{"manifest.json", "test-tone.sfz", "test-tone_060_C4_v127.wav"} {
		a, _ := os.ReadFile(filepath.Join(root, "single", name))
		b, _ := os.ReadFile(filepath.Join(root, "merged", name))
		if len(a) == 0 || !bytes.Equal(a, b) {
			t.Errorf("%s differs between the single render and the merge", name)
		}
	}
}

// TestCheckPlansWhatRenderComputes renders example patches (a few keys of
// each, copied beside their includes) and patches for the other loop and
// tail kinds into fresh folders, and compares check --json with render
// --json figure by figure: files, audio seconds and bytes (exact unless
// tails end by level, when check's are the most render may write), the
// partial-samples and noise-band samples computed and nominal, the
// levelling and the folder.
func TestCheckPlansWhatRenderComputes(t *testing.T) {
	if testing.Short() {
		t.Skip("renders several sets")
	}
	examples := []struct{ file, keys string }{
		{"puzzle-pad.yaml", "C3"},   // stereo, crossfade loop, round robins, loudness per key
		{"hollow-lead.yaml", "C3"},  // whole cycles, retuned; a breakpoint envelope
		{"harbor-bells.yaml", "G2"}, // tail by level, round robins, stereo, true peak
		{"attic-harp.yaml", "C3"},   // tail by level, an include, one gain for the set
		{"dust-choir.yaml", "C3"},   // moving partials, unison, crossfade loop
		{"lantern-comb.yaml", ""},   // scale files: a region per key
		{"felt-bars.yaml", "C3"},    // layers that cross-fade
		{"fog-flute.yaml", "C4"},    // noise bands: struck, held, in stereo; whole cycles
	}
	inline := map[string]string{
		"drone.yaml": "name: drone\nkeys: [A2]\nhold: 6\ntail: 1\nloop: {crossfade: 0.2}\npartials: [{ratios: [1, 2.41, 3.7], envelope: {attack: 0.3, decay: 0.2, sustain: 0.7, release: 0.8}}]\n",
		"cycles.yaml": "name: cycles\nkeys: [C3, G3]\nvelocities: [60, 120]\nhold: 1.5\ntail: 0.5\nloop: auto\nnormalize: {peak: -3 dBFS, scope: file}\n" +
			"partials: [{harmonics: 16, amplitude: \"vel/n\", envelope: {attack: 0.01, decay: \"0.4/n\", sustain: \"0.5/n\", release: 0.2}}]\n",
		"plain.yaml": "name: plain\nkeys: [C4]\nround_robin: 2\nhold: 0.5\ntail: 0.5\nnormalize: off\npartials: [{harmonics: 6, envelope: {attack: 0.001, decay: 0.3, sustain: 0, release: 0.1}}]\n",
		// Noise through a crossfade loop and its continuation, and a tail
		// that ends by level.
		"breath.yaml": "name: breath\nkeys: [A2, A4]\nchannels: 2\nhold: 2\ntail: 0.5\nloop: {crossfade: 0.1, length: 0.8}\npartials: [{ratios: [1, 2.41]}, {noise: {low: 1, high: 5, width: 0.5}, pan: -0.3, envelope: {attack: 0.05, decay: 0.2, sustain: 0.4, release: 0.3}}]\n",
		"gust.yaml":   "name: gust\nkeys: [C4]\nhold: 0.6\ntail: auto\npartials: [{noise: {low: 400 Hz, high: 3000 Hz, slope: -3}, envelope: {attack: 0.01, decay: 0.4, sustain: 0, release: 0.2}}]\n",
	}
	dir := t.TempDir()
	// The patches and what they include, not any set rendered beside them.
	sources, _ := filepath.Glob("../../examples/*.yaml")
	parts, _ := filepath.Glob("../../examples/parts/*.yaml")
	tunings, _ := filepath.Glob("../../examples/tunings/*")
	for _, src := range slices.Concat(sources, parts, tunings) {
		rel, _ := filepath.Rel("../../examples", src)
		data, err := os.ReadFile(src)
		if err == nil {
			err = os.MkdirAll(filepath.Join(dir, filepath.Dir(rel)), 0o755)
		}
		if err == nil {
			err = os.WriteFile(filepath.Join(dir, rel), data, 0o644)
		}
		if err != nil {
			t.Fatal(err)
		}
	}
	type run struct{ file, keys string }
	runs := []run{}
	for _, e := range examples {
		runs = append(runs, run(e))
	}
	for name, src := range inline {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(src), 0o644); err != nil {
			t.Fatal(err)
		}
		runs = append(runs, run{name, ""})
	}
	type report struct {
		OK     bool `json:"ok"`
		Result struct {
			Files        int     `json:"files"`
			AudioSeconds float64 `json:"audio_seconds"`
			Bytes        int64   `json:"bytes"`
			UpperBounds  bool    `json:"lengths_are_upper_bounds"`
			Levelling    string  `json:"levelling"`
			OutputDir    string  `json:"output_dir"`
			Work         struct {
				Computed int64  `json:"computed"`
				Nominal  int64  `json:"nominal"`
				Counts   string `json:"counts"`
			} `json:"partial_samples"`
			Noise *struct {
				Computed int64 `json:"computed"`
				Nominal  int64 `json:"nominal"`
			} `json:"noise_samples"`
		} `json:"result"`
	}
	for _, r := range runs {
		t.Run(r.file, func(t *testing.T) {
			path := filepath.Join(dir, r.file)
			args := []string{path, "--json"}
			if r.keys != "" {
				args = append(args, "--keys", r.keys)
			}
			var planned, rendered report
			code, stdout, stderr := runCLI(append([]string{"check"}, args...)...)
			if err := json.Unmarshal([]byte(stdout), &planned); code != exitOK || err != nil {
				t.Fatalf("check: exit %d, %v, %s", code, err, stderr)
			}
			code, stdout, stderr = runCLI(append([]string{"render", "--quiet"}, args...)...)
			if err := json.Unmarshal([]byte(stdout), &rendered); code != exitOK || err != nil {
				t.Fatalf("render: exit %d, %v, %s", code, err, stderr)
			}
			p, g := planned.Result, rendered.Result
			if p.Work.Computed != g.Work.Computed || p.Work.Nominal != g.Work.Nominal {
				t.Errorf("partial-samples: check plans %d of %d nominal, render computed %d of %d", p.Work.Computed, p.Work.Nominal, g.Work.Computed, g.Work.Nominal)
			}
			switch noise := strings.Contains(r.file, "fog") || strings.Contains(r.file, "breath") || strings.Contains(r.file, "gust"); {
			case noise != (p.Noise != nil) || noise != (g.Noise != nil):
				t.Errorf("noise work: check plans %v, render reports %v; want them for a patch with noise bands only", p.Noise, g.Noise)
			case noise && *p.Noise != *g.Noise:
				t.Errorf("noise-band samples: check plans %+v, render added %+v", *p.Noise, *g.Noise)
			}
			if p.Work.Counts == "" || g.Work.Counts == "" {
				t.Errorf("check or render does not say what its partial-samples count")
			}
			if p.Files != g.Files || p.Levelling != g.Levelling || p.OutputDir != g.OutputDir {
				t.Errorf("check plans %d files, %q, into %s; render wrote %d, %q, into %s", p.Files, p.Levelling, p.OutputDir, g.Files, g.Levelling, g.OutputDir)
			}
			exact := math.Abs(p.AudioSeconds-g.AudioSeconds) < 1e-9 && p.Bytes == g.Bytes
			bounded := g.AudioSeconds <= p.AudioSeconds && g.Bytes <= p.Bytes && g.Bytes > 0
			if p.UpperBounds && !bounded || !p.UpperBounds && !exact {
				t.Errorf("check plans %.6f s and %d bytes (upper bounds: %v); render wrote %.6f s and %d bytes", p.AudioSeconds, p.Bytes, p.UpperBounds, g.AudioSeconds, g.Bytes)
			}
		})
	}
}

// TestCommandHelp: sinter help COMMAND and sinter COMMAND --help (or -h)
// print the same text, that command's usage, what it does, its flags, an
// example, and the paragraphs on --json and LIST only where the command
// takes them; no other command's usage. sinter help keeps the overview,
// with the --json paragraph naming the commands it belongs to.
func TestCommandHelp(t *testing.T) {
	cases := []struct {
		name       string
		flags      []string // some of the flags its help must list
		json, keys bool
	}{
		{"render", []string{"-o DIR", "--keys LIST", "--jobs N", "--quiet", "--json", "--allow-large", "--force", "--shard K/N", "--no-wait", "--page"}, true, true},
		{"page", []string{"--jobs N", "--no-wait"}, false, false},
		{"serve", []string{"--port N"}, false, false},
		{"check", []string{"--keys LIST", "--json"}, true, true},
		{"merge", []string{"-o DIR", "--json", "--no-wait"}, true, false},
		{"verify", nil, false, false},
		{"plot", []string{"--key C4", "--velocity V", "-o FILE.png", "--width W", "--height H"}, false, false},
		{"init", nil, false, false},
		{"schema", nil, false, false},
		{"analyze", []string{"-o PATCH.yaml", "--key NOTE", "--f0 HZ", "--partials N", "--floor DB", "--channel left", "--json", "--plot FILE.png"}, true, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, viaHelp, _ := runCLI("help", c.name)
			if code != exitOK {
				t.Fatalf("help %s: exit %d", c.name, code)
			}
			for _, args := range [][]string{{c.name, "--help"}, {c.name, "-h"}} {
				if code, out, _ := runCLI(args...); code != exitOK || out != viaHelp {
					t.Errorf("%v: exit %d, and its text differs from sinter help %s:\n%s", args, code, c.name, out)
				}
			}
			if !strings.HasPrefix(viaHelp, "Usage: sinter "+c.name) || !strings.Contains(viaHelp, "\nExample:\n  sinter "+c.name+" ") {
				t.Errorf("no usage or example:\n%s", viaHelp)
			}
			for _, f := range c.flags {
				if !strings.Contains(viaHelp, "\n  "+f+" ") {
					t.Errorf("flag %q not listed:\n%s", f, viaHelp)
				}
			}
			if got := strings.Contains(viaHelp, "--json (render, check, merge and analyze)"); got != c.json {
				t.Errorf("the --json paragraph there: %v, want %v", got, c.json)
			}
			if got := strings.Contains(viaHelp, "LIST (render and check) is"); got != c.keys {
				t.Errorf("the LIST paragraph there: %v, want %v", got, c.keys)
			}
			for _, other := range cases {
				if other.name != c.name && strings.Contains(viaHelp, "sinter "+other.name+" ") {
					t.Errorf("the help of %s mentions sinter %s:\n%s", c.name, other.name, viaHelp)
				}
			}
		})
	}
	code, overview, _ := runCLI("help")
	if code != exitOK {
		t.Fatalf("help: exit %d", code)
	}
	for _, c := range cases {
		if !strings.Contains(overview, "\n  sinter "+c.name) {
			t.Errorf("the overview lacks %s", c.name)
		}
	}
	if strings.Count(overview, "--json (render, check, merge and analyze) prints") != 1 || !strings.Contains(overview, "sinter help COMMAND") {
		t.Errorf("overview:\n%s", overview)
	}
}
