package page_test

import (
	"encoding/json"
	"io"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"sinter/synth/manifest"
	"sinter/synth/page"
)

// writeInto is the write function of a folder, for tests.
func writeInto(dir string) func(string, func(io.Writer) error) error {
	return func(name string, fill func(io.Writer) error) error {
		f, err := os.Create(filepath.Join(dir, name))
		if err != nil {
			return err
		}
		defer f.Close()
		return fill(f)
	}
}

// pageData reads the data the page carries back out of index.html.
func pageData(t *testing.T, dir string) map[string]any {
	t.Helper()
	html, err := os.ReadFile(filepath.Join(dir, page.FileName))
	if err != nil {
		t.Fatal(err)
	}
	m := regexp.MustCompile(`(?s)<script type="application/json" id="set-data">(.*?)</script>`).FindSubmatch(html)
	if m == nil {
		t.Fatal("no data in the page")
	}
	var d map[string]any
	if err := json.Unmarshal(m[1], &d); err != nil {
		t.Fatal(err)
	}
	return d
}

// TestPageIsSelfContained: the page names no address outside its folder
// (no scheme, no protocol-relative or absolute path, no parent folder),
// carries the caution, and has a picture beside every file.
func TestPageIsSelfContained(t *testing.T) {
	dir := buildSet(t, setSource("bit_depth: 16"))
	html, err := os.ReadFile(filepath.Join(dir, page.FileName))
	if err != nil {
		t.Fatal(err)
	}
	for _, pattern := range []string{`https?://`, `wss?://`, `(src|href)="(/|\.\.|[a-z]+:)`, `url\(`, `@import`, `//[a-z0-9.-]+\.[a-z]{2,}/`} {
		if loc := regexp.MustCompile(pattern).FindIndex(html); loc != nil && string(html[loc[0]:loc[1]]) != `href="data:` {
			t.Errorf("the page holds %q (pattern %s)", html[max(0, loc[0]-30):min(len(html), loc[1]+30)], pattern)
		}
	}
	if !strings.Contains(string(html), "harm hearing and speakers") && !strings.Contains(string(pageData(t, dir)["caution"].(string)), "harm hearing and speakers") {
		t.Error("the page does not carry the caution")
	}
	m, err := manifest.Read(filepath.Join(dir, manifest.FileName))
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range m.Files {
		if _, err := os.Stat(filepath.Join(dir, page.PictureName(f.Path))); err != nil {
			t.Errorf("no picture of %s: %v", f.Path, err)
		}
	}
}

// TestRegionsFromMapping: the page plays what each mapping says, with the
// SFZ format's defaults where it is silent, and refuses what it cannot
// read with the mapping's line and column; a sample outside the folder
// is left out and said on the page.
func TestRegionsFromMapping(t *testing.T) {
	cases := []struct {
		name, sfz string
		want      map[string]any // fields of the one region
		notice    string
		err       string
	}{
		{name: "defaults", sfz: "<region> sample=a.wav\n",
			want: map[string]any{"root": 60.0, "lokey": 0.0, "hikey": 127.0, "lovel": 0.0, "hivel": 127.0, "seqLength": 1.0, "seqPosition": 1.0, "release": 0.001, "loopMode": "no_loop"}},
		{name: "key sets three", sfz: "<region> sample=a.wav key=62\n", want: map[string]any{"root": 62.0, "lokey": 62.0, "hikey": 62.0}},
		{name: "note names", sfz: "<region> sample=a.wav pitch_keycenter=c4 lokey=b3 hikey=d4\n", want: map[string]any{"root": 60.0, "lokey": 59.0, "hikey": 62.0}},
		{name: "inherited from the group", sfz: "<group> ampeg_release=0.7 volume=-6\n<region> sample=a.wav loop_start=3 loop_end=90\n",
			want: map[string]any{"release": 0.7, "volume": -6.0, "loopMode": "loop_continuous", "loopStart": 3.0, "loopEnd": 90.0}},
		{name: "default path", sfz: "<control> default_path=sub/\n<region> sample=a.wav\n", want: map[string]any{"sample": "sub/a.wav"}},
		{name: "outside the folder", sfz: "<region> sample=../other/a.wav\n", notice: "outside the set's folder"},
		{name: "an address", sfz: "<region> sample=http://example.invalid/a.wav\n", notice: "outside the set's folder"},
		{name: "bad number", sfz: "<region> sample=a.wav\n<region> sample=b.wav ampeg_release=slow\n", err: "review.sfz:2:1: ampeg_release=slow is not a number"},
		{name: "bad key", sfz: "<region> sample=a.wav lokey=H9\n", err: "review.sfz:1:1: lokey=H9 is not a key"},
		{name: "unreadable", sfz: "#define $X 1\n", err: "review.sfz:1:1: the preprocessor line"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			m := &manifest.Manifest{Sinter: "test", Patch: manifest.Patch{Name: "review"}, Mapping: "review.sfz", Files: []manifest.File{}}
			f, err := os.Create(filepath.Join(dir, manifest.FileName))
			if err != nil {
				t.Fatal(err)
			}
			manifest.Write(f, m)
			f.Close()
			if err := os.WriteFile(filepath.Join(dir, "review.sfz"), []byte(c.sfz), 0o644); err != nil {
				t.Fatal(err)
			}
			err = page.Write(dir, 1, writeInto(dir))
			if c.err != "" {
				if err == nil || !strings.Contains(err.Error(), c.err) {
					t.Fatalf("got %v, want an error with %q", err, c.err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			d := pageData(t, dir)
			regions := d["regions"].([]any)
			if c.notice != "" {
				notices := d["notices"].([]any)
				if len(regions) != 0 || len(notices) != 1 || !strings.Contains(notices[0].(string), c.notice) {
					t.Errorf("regions %v, notices %v; want none and %q", regions, notices, c.notice)
				}
				return
			}
			if len(regions) != 1 {
				t.Fatalf("%d regions", len(regions))
			}
			r := regions[0].(map[string]any)
			for k, v := range c.want {
				if r[k] != v {
					t.Errorf("%s is %v, want %v", k, r[k], v)
				}
			}
		})
	}
}

// TestHandler: the folder is served read only, with the sample types, and
// nothing above it.
func TestHandler(t *testing.T) {
	root := t.TempDir()
	dir := filepath.Join(root, "set")
	os.Mkdir(dir, 0o755)
	os.WriteFile(filepath.Join(dir, "a.flac"), []byte("fLaC"), 0o644)
	os.WriteFile(filepath.Join(root, "secret.txt"), []byte("outside the set"), 0o644)
	srv := httptest.NewServer(page.Handler(dir))
	defer srv.Close()
	cases := []struct {
		method, path string
		status       int
		kind         string
	}{
		{"GET", "/a.flac", 200, "audio/flac"},
		{"GET", "/../secret.txt", 404, ""},
		{"GET", "/%2e%2e/secret.txt", 404, ""},
		{"POST", "/a.flac", 405, ""},
		{"PUT", "/b.wav", 405, ""},
	}
	for _, c := range cases {
		req, _ := http.NewRequest(c.method, srv.URL+c.path, nil)
		req.URL.Opaque = c.path // sent as written, not cleaned by the client
		res, err := http.DefaultClient.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		body, _ := io.ReadAll(res.Body)
		res.Body.Close()
		if res.StatusCode != c.status || c.kind != "" && res.Header.Get("Content-Type") != c.kind || strings.Contains(string(body), "outside the set") {
			t.Errorf("%s %s: %d %q %q, want %d %q", c.method, c.path, res.StatusCode, res.Header.Get("Content-Type"), body, c.status, c.kind)
		}
	}
}

// FuzzMappingOnPage: any mapping gives a page whose data reads back, or an
// error, never a panic; no region of it plays a sample outside the folder.
func FuzzMappingOnPage(f *testing.F) {
	f.Add("<group> ampeg_release=0.5\n<region> sample=a.wav pitch_keycenter=60 lokey=58 hikey=62 loop_mode=loop_sustain loop_start=10 loop_end=99\n")
	f.Add("<control> default_path=../\n<region> sample=x.wav key=c#4\n")
	f.Add("<region> sample=C:\\a.wav seq_length=0 seq_position=-3 volume=1e400\n")
	dir := f.TempDir()
	m := &manifest.Manifest{Sinter: "test", Patch: manifest.Patch{Name: "fuzz"}, Mapping: "fuzz.sfz", Files: []manifest.File{}}
	out, err := os.Create(filepath.Join(dir, manifest.FileName))
	if err != nil {
		f.Fatal(err)
	}
	manifest.Write(out, m)
	out.Close()
	f.Fuzz(func(t *testing.T, sfz string) {
		if err := os.WriteFile(filepath.Join(dir, "fuzz.sfz"), []byte(sfz), 0o644); err != nil {
			t.Fatal(err)
		}
		if err := page.Write(dir, 1, writeInto(dir)); err != nil {
			return
		}
		for _, r := range pageData(t, dir)["regions"].([]any) {
			sample := r.(map[string]any)["sample"].(string)
			if strings.HasPrefix(sample, "/") || strings.HasPrefix(sample, "../") || sample == ".." || strings.Contains(sample, ":") {
				t.Fatalf("a region plays %q", sample)
			}
		}
	})
}
