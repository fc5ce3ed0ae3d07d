package sampleset

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"sinter/patch"
)

// event is one call the recording file system saw complete, or something
// a build reported done: "done" for a file (Options.Progress), "return"
// for the build itself.
type event struct{ op, path, to string }

// recordingDisk is the real file system, recording the order in which its
// calls complete.
type recordingDisk struct {
	inner      fileSystem
	noExchange bool // answer Exchange as a system without it does
	mu         sync.Mutex
	log        []event
}

func (r *recordingDisk) add(op, path, to string) {
	r.mu.Lock()
	r.log = append(r.log, event{op, path, to})
	r.mu.Unlock()
}

// recorded returns err, recording op if the call succeeded.
func (r *recordingDisk) recorded(err error, op, path, to string) error {
	if err == nil {
		r.add(op, path, to)
	}
	return err
}

func (r *recordingDisk) Create(path string) (file, error) {
	f, err := r.inner.Create(path)
	if err != nil {
		return nil, err
	}
	r.add("create", path, "")
	return recordingFile{f, path, r}, nil
}

func (r *recordingDisk) Rename(from, to string) error {
	return r.recorded(r.inner.Rename(from, to), "rename", from, to)
}

func (r *recordingDisk) Link(from, to string) error {
	return r.recorded(r.inner.Link(from, to), "link", from, to)
}

func (r *recordingDisk) SyncDir(path string) error {
	return r.recorded(r.inner.SyncDir(path), "syncdir", path, "")
}

func (r *recordingDisk) Exchange(a, b string) error {
	if r.noExchange {
		return errNoExchange
	}
	return r.recorded(r.inner.Exchange(a, b), "exchange", a, b)
}

type recordingFile struct {
	file
	path string
	r    *recordingDisk
}

func (f recordingFile) Sync() error { return f.r.recorded(f.file.Sync(), "sync", f.path, "") }

// durabilityProblems reads a log of one build and says where something was
// reported done, or made to last, before the data it stands on was
// synced: a file renamed into place before its data was synced (after a
// power loss the name could hold an empty or short file); a file
// reported done before it was synced and in place; a staging folder
// swapped in while it holds names not yet synced; a build that returned
// before the folder holding the swap was synced, or without a swap.
func durabilityProblems(log []event) []string {
	var problems []string
	synced := map[string]bool{}   // files synced
	placed := map[string]bool{}   // file names renamed or linked into place
	unsynced := map[string]bool{} // folders with names not yet synced
	swapIn := ""                  // the folder a swap changed, until it is synced
	swapped := false
	for _, e := range log {
		switch e.op {
		case "sync":
			synced[e.path] = true
		case "create":
			unsynced[filepath.Dir(e.path)] = true
		case "rename", "exchange", "link":
			if e.op == "link" || strings.HasSuffix(e.path, ".partial") {
				if e.op == "rename" && !synced[e.path] {
					problems = append(problems, fmt.Sprintf("%s renamed into place before it was synced", e.path))
				}
				unsynced[filepath.Dir(e.to)] = true
				placed[filepath.Base(e.to)] = true
				continue
			}
			// A folder: the staging folder swapped in (or the old set
			// set aside, before it).
			if strings.Contains(filepath.Base(e.path), ".staging-") {
				if unsynced[e.path] {
					problems = append(problems, fmt.Sprintf("%s swapped in before the names in it were synced", e.path))
				}
				swapped = true
			}
			swapIn = filepath.Dir(e.to)
		case "syncdir":
			unsynced[e.path] = false
			if e.path == swapIn {
				swapIn = ""
			}
		case "done":
			if !placed[e.path] {
				problems = append(problems, fmt.Sprintf("%s reported done before it was synced and in place", e.path))
			}
		case "return":
			if !swapped {
				problems = append(problems, "the build returned without swapping the set in")
			}
			if swapIn != "" {
				problems = append(problems, fmt.Sprintf("the build returned before %s, which the swap changed, was synced", swapIn))
			}
		}
	}
	return problems
}

// expand parses and expands the patch src and points it at dir.
func expand(t *testing.T, src, dir string) *patch.Plan {
	t.Helper()
	p, err := patch.Parse("test.yaml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	plan, err := p.Expand(patch.ExpandOptions{})
	if err != nil {
		t.Fatal(err)
	}
	plan.OutputDir = dir
	return plan
}

// TestNothingDoneBeforeItsSync builds sets through a file system that
// records the order of its calls — into a new folder, over a set with the
// two folders exchanged, over a set with two renames (as where the system
// cannot exchange), and again unchanged, every file kept by a hard link —
// and checks that no file is reported done before it was synced and in
// place, the staging folder is synced before the swap and its parent
// after it, before the build returns; and that every file of the set was
// synced or linked. Before syncing, every rename came first.
func TestNothingDoneBeforeItsSync(t *testing.T) {
	src := `name: durable
sample_rate: 22050
keys: [36, 60, 96]
velocities: [70, 120]
hold: 0.2
tail: 0.1
partials:
  - harmonics: 64
    amplitude: "%g / n"
`
	dir := filepath.Join(t.TempDir(), "set")
	saved := disk
	defer func() { disk = saved }()
	for _, c := range []struct {
		name       string
		amplitude  float64
		noExchange bool
		linked     bool // every file kept from the set before
	}{
		{"into a new folder", 0.5, false, false},
		{"over a set, exchanged", 0.4, false, false},
		{"over a set, two renames", 0.3, true, false},
		{"unchanged, files kept", 0.3, false, true},
	} {
		t.Run(c.name, func(t *testing.T) {
			plan := expand(t, fmt.Sprintf(src, c.amplitude), dir)
			rec := &recordingDisk{inner: saved, noExchange: c.noExchange}
			disk = rec
			res, err := Build(context.Background(), plan, Options{Jobs: 2, Version: "test",
				Progress: func(_, _ int, file string) { rec.add("done", file, "") }})
			disk = saved
			if err != nil {
				t.Fatal(err)
			}
			rec.add("return", "", "")
			for _, p := range durabilityProblems(rec.log) {
				t.Error(p)
			}
			if kept := res.Reused == len(plan.Notes); kept != c.linked {
				t.Errorf("%d of %d files kept", res.Reused, len(plan.Notes))
			}
			entries, err := os.ReadDir(dir)
			if err != nil {
				t.Fatal(err)
			}
			for _, e := range entries {
				found := false
				for _, ev := range rec.log {
					found = found || (ev.op == "sync" && filepath.Base(ev.path) == e.Name()+".partial") || (ev.op == "link" && filepath.Base(ev.to) == e.Name())
				}
				if !found {
					t.Errorf("%s was neither synced nor linked", e.Name())
				}
			}
		})
	}
}

// TestDurabilityCheckCatches feeds durabilityProblems logs in which
// something is done too early, and one in the right order: the check must
// find each fault, and nothing in the right order.
func TestDurabilityCheckCatches(t *testing.T) {
	const s, d, p = "/x/.set.staging-1", "/x/set", "/x"
	good := []event{{"create", s + "/a.wav.partial", ""}, {"sync", s + "/a.wav.partial", ""}, {"rename", s + "/a.wav.partial", s + "/a.wav"},
		{"done", "a.wav", ""}, {"syncdir", s, ""}, {"exchange", s, d}, {"syncdir", p, ""}, {"return", "", ""}}
	// without returns good with event i left out.
	without := func(i int) []event { return append(good[:i:i], good[i+1:]...) }
	cases := []struct {
		name string
		log  []event
		want string
	}{
		{"in order", good, ""},
		{"renamed before its sync", append(without(1), event{"sync", s + "/a.wav.partial", ""}), "renamed into place before it was synced"},
		{"done before the rename", append(append(good[:1:1], event{"done", "a.wav", ""}), good[1:]...), "a.wav reported done before"},
		{"swapped before the folder's sync", without(4), "swapped in before the names in it were synced"},
		{"parent not synced", without(6), "returned before /x, which the swap changed, was synced"},
		{"no swap", without(5), "returned without swapping"},
		{"old set set aside, new one moved in, parent not synced",
			append(good[:5:5], event{"rename", d, p + "/.set.previous-1"}, event{"rename", s, d}, event{"return", "", ""}), "returned before /x"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := strings.Join(durabilityProblems(c.log), "; ")
			if c.want == "" && got != "" || !strings.Contains(got, c.want) {
				t.Errorf("problems %q, want %q", got, c.want)
			}
		})
	}
}
