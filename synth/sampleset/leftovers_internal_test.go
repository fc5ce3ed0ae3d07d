package sampleset

import (
	"errors"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"sinter/synth/manifest"
)

// TestRemoveLeftovers lays out beside an output folder "set" what builds
// leave, then removes leftovers as a build holding the folder's lock
// does and as verify does while another build holds it, and checks what
// goes, what stays, what is put back and the bytes counted freed.
func TestRemoveLeftovers(t *testing.T) {
	me := self()
	other := Owner{PID: 4242, Host: me.Host + "-elsewhere", Started: me.Started}
	type folder struct {
		name  string
		owner *Owner // its lock file, if any
		bytes int    // of its one data file
	}
	cases := []struct {
		name        string
		setMissing  bool
		folder      folder
		held        bool
		gone        bool  // removed (or put back)
		freed       int64 // bytes counted freed, the lock file apart
		restored    bool
		noticeHolds string
	}{
		{"an ended build's staging, lock held", false, folder{".set.staging-a1", &Owner{}, 1000}, true, true, 1000, false, "which has ended: freed"},
		{"an ended build's staging, lock busy", false, folder{".set.staging-a1", &Owner{}, 1000}, false, true, 1000, false, "which has ended"},
		{"a running build's staging", false, folder{".set.staging-a1", &me, 1000}, true, false, 0, false, ""},
		{"a staging with no lock file, lock held", false, folder{".set.staging-a1", nil, 1000}, true, true, 1000, false, "no longer running"},
		{"a staging with no lock file, lock busy", false, folder{".set.staging-a1", nil, 1000}, false, false, 0, false, ""},
		{"another host's staging, lock held", false, folder{".set.staging-a1", &other, 1000}, true, false, 0, false, "cannot be checked from here"},
		{"an older sinter's staging (digits)", false, folder{".set.staging-800326785", nil, 10}, true, true, 10, false, "freed 10 bytes"},
		{"another output's staging", false, folder{".set.staging-1.staging-a1", nil, 1000}, true, false, 0, false, ""},
		{"a staging of an output named like it", false, folder{".sets.staging-a1", nil, 1000}, true, false, 0, false, ""},
		{"a previous set beside the set", false, folder{".set.previous-a1", nil, 1000}, true, true, 1000, false, "freed"},
		{"a previous set, the set missing", true, folder{".set.previous-a1", nil, 1000}, true, true, 0, true, "put back .set.previous-a1 as the output folder"},
		{"a previous set, the set missing, lock busy", true, folder{".set.previous-a1", nil, 1000}, false, false, 0, false, ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			parent := t.TempDir()
			set := filepath.Join(parent, "set")
			if !c.setMissing {
				if err := os.Mkdir(set, 0o777); err != nil {
					t.Fatal(err)
				}
			}
			path := filepath.Join(parent, c.folder.name)
			if err := os.Mkdir(path, 0o777); err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(filepath.Join(path, manifest.FileName), make([]byte, c.folder.bytes), 0o666); err != nil {
				t.Fatal(err)
			}
			var lockBytes int64
			if o := c.folder.owner; o != nil {
				if *o == (Owner{}) {
					*o = endedProcess(t)
				}
				lockBytes = int64(len(o.encode()))
				if err := os.WriteFile(filepath.Join(path, ownerFile), o.encode(), 0o666); err != nil {
					t.Fatal(err)
				}
			}
			var notices []string
			removed := removeLeftovers(parent, "set", c.held, func(msg string) { notices = append(notices, msg) })
			_, err := os.Stat(path)
			if gone := errors.Is(err, os.ErrNotExist); gone != c.gone {
				t.Errorf("removed: %v, want %v", gone, c.gone)
			}
			if c.gone != (len(removed) == 1) {
				t.Fatalf("returned %v", removed)
			}
			if c.gone {
				l := removed[0]
				if want := c.freed + lockBytes; l.Bytes != want || l.Restored != c.restored {
					t.Errorf("%+v; want %d bytes freed, restored %v", l, want, c.restored)
				}
			}
			if c.restored {
				if _, err := os.Stat(filepath.Join(set, manifest.FileName)); err != nil {
					t.Errorf("the previous set is not back: %v", err)
				}
			}
			if text := strings.Join(notices, "\n"); !strings.Contains(text, c.noticeHolds) || c.noticeHolds == "" && text != "" {
				t.Errorf("notices %q, want one holding %q", text, c.noticeHolds)
			}
		})
	}
}

// TestFreedCountsOnlyLastNames: a staging folder's file that is also a
// file of the set (a hard link, as a build keeps unchanged files) frees
// nothing when the folder goes.
func TestFreedCountsOnlyLastNames(t *testing.T) {
	if runtime.GOOS == "windows" || runtime.GOOS == "plan9" {
		t.Skip("link counts are read on Unix")
	}
	parent := t.TempDir()
	staging := filepath.Join(parent, ".set.staging-a1")
	if err := os.Mkdir(staging, 0o777); err != nil {
		t.Fatal(err)
	}
	for name, size := range map[string]int{"only.wav": 300, "shared.wav": 5000} {
		if err := os.WriteFile(filepath.Join(staging, name), make([]byte, size), 0o666); err != nil {
			t.Fatal(err)
		}
	}
	if err := os.Link(filepath.Join(staging, "shared.wav"), filepath.Join(parent, "kept.wav")); err != nil {
		t.Skip("no hard links here:", err)
	}
	if got := freed(staging); got != 300 {
		t.Errorf("freed %d bytes, want 300 (the linked file's 5000 stay with its other name)", got)
	}
}
