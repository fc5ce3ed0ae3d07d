package sampleset_test

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"syscall"
	"testing"

	"sinter/patch"
	"sinter/synth/sampleset"
)

// faultPlan is a small set; amplitude varies so two renders differ.
func faultPlan(t *testing.T, dir string, amplitude float64) *patch.Plan {
	t.Helper()
	src := fmt.Sprintf("name: faults\nsample_rate: 22050\nkeys: [48, 55, 60, 67]\nvelocities: [70, 127]\nhold: 0.2\ntail: 0.1\nnormalize: off\npartials:\n  - {harmonics: 6, amplitude: \"%g / n\"}\n", amplitude)
	p, err := patch.Parse("faults.yaml", []byte(src))
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

// limitedFile fails every write once the build has written budget bytes.
type limitedFile struct {
	f      *os.File
	budget *budget
}

type budget struct {
	mu   sync.Mutex
	left int
}

var (
	errDiskFull   = errors.New("injected: no space left")
	errSyncFailed = errors.New("injected: sync failed")
)

func (l *limitedFile) Write(p []byte) (int, error) {
	l.budget.mu.Lock()
	defer l.budget.mu.Unlock()
	if len(p) > l.budget.left {
		n, _ := l.f.Write(p[:l.budget.left])
		l.budget.left = 0
		return n, errDiskFull
	}
	l.budget.left -= len(p)
	return l.f.Write(p)
}

func (l *limitedFile) Sync() error  { return l.f.Sync() }
func (l *limitedFile) Close() error { return l.f.Close() }

// unsyncable is a file whose data never reaches the disk, as when the
// device fails or a network file system loses the server.
type unsyncable struct{ *os.File }

func (unsyncable) Sync() error { return errSyncFailed }

// faultyDisk is the real file system with files created by open.
type faultyDisk struct {
	sampleset.FileSystem
	open func(path string) (sampleset.File, error)
}

func (d faultyDisk) Create(path string) (sampleset.File, error) { return d.open(path) }

// TestFaultsKeepThePreviousSet: when writing fails part way through a set
// (a writer that fails after some bytes, /dev/full, or a sync that fails
// after every byte was written), the build fails with an error naming the
// file, the previous set keeps every file and hash it had, and nothing
// temporary is left beside it.
func TestFaultsKeepThePreviousSet(t *testing.T) {
	spent := &budget{}
	faults := []struct {
		name   string
		open   func(path string) (sampleset.File, error)
		reason string
	}{
		{"fails after 150 kB", func(path string) (sampleset.File, error) {
			f, err := os.Create(path)
			return &limitedFile{f: f, budget: spent}, err
		}, errDiskFull.Error()},
		{"/dev/full", func(string) (sampleset.File, error) {
			return os.OpenFile("/dev/full", os.O_WRONLY, 0)
		}, syscall.ENOSPC.Error()},
		{"sync fails", func(path string) (sampleset.File, error) {
			f, err := os.Create(path)
			return unsyncable{f}, err
		}, errSyncFailed.Error()},
	}
	saved := *sampleset.Disk
	defer func() { *sampleset.Disk = saved }()
	for _, fault := range faults {
		t.Run(fault.name, func(t *testing.T) {
			if fault.name == "/dev/full" {
				if _, err := os.Stat("/dev/full"); err != nil {
					t.Skip("this platform has no /dev/full")
				}
			}
			root := t.TempDir()
			dir := filepath.Join(root, "set")
			*sampleset.Disk = saved
			if _, err := sampleset.Build(context.Background(), faultPlan(t, dir, 0.3), sampleset.Options{Jobs: 2}); err != nil {
				t.Fatal(err)
			}
			before := snapshot(t, dir)
			spent.left = 150_000
			*sampleset.Disk = faultyDisk{saved, fault.open}
			_, err := sampleset.Build(context.Background(), faultPlan(t, dir, 0.5), sampleset.Options{Jobs: 2})
			*sampleset.Disk = saved
			if err == nil || !strings.Contains(err.Error(), fault.reason) || !strings.Contains(err.Error(), "faults_") {
				t.Fatalf("error %v; want one naming a file of the set and %q", err, fault.reason)
			}
			after := snapshot(t, dir)
			if len(after) != len(before) {
				t.Errorf("the set has %d files after the failed render, %d before", len(after), len(before))
			}
			for name, sum := range before {
				if after[name] != sum {
					t.Errorf("%s changed", name)
				}
			}
			if entries, _ := os.ReadDir(root); len(entries) != 1 {
				t.Errorf("left beside the set: %v", entries)
			}
		})
	}
}
