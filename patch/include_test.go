package patch_test

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"sinter/patch"
)

// writeFiles writes name → text under a new folder and returns the folder.
func writeFiles(t *testing.T, files map[string]string) string {
	t.Helper()
	dir := t.TempDir()
	for name, text := range files {
		path := filepath.Join(dir, name)
		if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

// TestInclude: groups come from a file beside the patch, relative to the
// including file at every level, in place, with the included file's
// envelope as their default; the patch lists every included file.
func TestInclude(t *testing.T) {
	dir := writeFiles(t, map[string]string{
		"kits/pad.yaml": `name: pad
partials:
  - {ratio: 1}
  - include: ../shared/air.yaml
  - {ratio: 3}
`,
		"shared/air.yaml": `envelope: {attack: 0.4}
partials:
  - {ratio: 2, amplitude: -6 dB}
`,
	})
	p, err := patch.Load(filepath.Join(dir, "kits", "pad.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	plan, err := p.Expand(patch.ExpandOptions{})
	if err != nil {
		t.Fatal(err)
	}
	n := plan.Notes[0]
	if len(n.Partials) != 3 || n.Partials[1].Hz != 2*n.F0 || n.Partials[2].Hz != 3*n.F0 {
		t.Fatalf("partials %+v; want ratios 1, 2 (included), 3", n.Partials)
	}
	if n.Partials[1].Envelope.Attack != 0.4 || n.Partials[0].Envelope.Attack != 0.005 {
		t.Errorf("attacks %v and %v; want the included file's 0.4 for its group only", n.Partials[1].Envelope.Attack, n.Partials[0].Envelope.Attack)
	}
	want := filepath.Join(dir, "shared", "air.yaml")
	if len(plan.Includes) != 1 || plan.Includes[0].Path != want || len(plan.Includes[0].SHA256) != 64 {
		t.Errorf("includes %+v; want %s with its hash", plan.Includes, want)
	}
}

// TestIncludeErrors: each problem names the file it is in, with its line
// and column, and a cycle is refused.
func TestIncludeErrors(t *testing.T) {
	cases := []struct {
		name  string
		files map[string]string
		file  string // of the expected error, relative to the folder
		line  int
		msg   string
	}{
		{"itself", map[string]string{"p.yaml": "name: p\npartials:\n  - include: p.yaml\n"},
			"p.yaml", 3, "include cycle: "},
		{"cycle of two", map[string]string{
			"p.yaml": "name: p\npartials:\n  - include: a.yaml\n",
			"a.yaml": "partials:\n  - include: p.yaml\n"},
			"a.yaml", 2, "include cycle: "},
		{"missing", map[string]string{"p.yaml": "name: p\npartials:\n  - include: none.yaml\n"},
			"p.yaml", 3, "cannot include"},
		{"absolute", map[string]string{"p.yaml": "name: p\npartials:\n  - include: /etc/hosts\n"},
			"p.yaml", 3, "must be a path relative to p.yaml"},
		{"not alone", map[string]string{"p.yaml": "name: p\npartials:\n  - {include: a.yaml, amplitude: 2}\n", "a.yaml": "partials: [{ratio: 1}]\n"},
			"p.yaml", 3, "an include stands alone"},
		{"error inside", map[string]string{
			"p.yaml": "name: p\npartials:\n  - include: a.yaml\n",
			"a.yaml": "partials:\n  - {ratio: 1}\n  - {ratoi: 2}\n"},
			"a.yaml", 3, `unknown key "ratoi"`},
		{"unknown key in included file", map[string]string{
			"p.yaml": "name: p\npartials:\n  - include: a.yaml\n",
			"a.yaml": "name: a\npartials: [{ratio: 1}]\n"},
			"a.yaml", 1, `unknown key "name"`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := writeFiles(t, c.files)
			_, err := patch.Load(filepath.Join(dir, "p.yaml"))
			list, ok := err.(patch.ErrorList)
			if !ok || len(list) == 0 {
				t.Fatalf("Load: %v; want an ErrorList", err)
			}
			for _, e := range list {
				if e.File == filepath.Join(dir, c.file) && e.Line == c.line && e.Column > 0 && strings.Contains(e.Msg, c.msg) {
					return
				}
			}
			t.Errorf("errors:\n%v\nwant one at %s:%d:…: …%s…", list, c.file, c.line, c.msg)
		})
	}
	// An expression that fails when expanded names the included file.
	dir := writeFiles(t, map[string]string{
		"p.yaml": "name: p\npartials:\n  - include: a.yaml\n",
		"a.yaml": "partials:\n  - {harmonics: 3, amplitude: \"1/(n-2)\"}\n",
	})
	p, err := patch.Load(filepath.Join(dir, "p.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	_, err = p.Expand(patch.ExpandOptions{})
	if list, ok := err.(patch.ErrorList); !ok || list[0].File != filepath.Join(dir, "a.yaml") || list[0].Line != 2 {
		t.Errorf("Expand: %v; want an error at a.yaml:2", err)
	}
}
