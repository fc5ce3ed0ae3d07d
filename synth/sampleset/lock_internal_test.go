package sampleset

import (
	"context"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"testing"
	"time"
)

// endedProcess runs the test binary with no tests and returns who it was:
// a process on this host that has ended and been reaped.
func endedProcess(t *testing.T) Owner {
	t.Helper()
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	if err := cmd.Run(); err != nil {
		t.Fatal(err)
	}
	return Owner{PID: cmd.Process.Pid, Host: self().Host, Started: self().Started}
}

// TestOwnerGone: an owner is gone when it ran on this host and its process
// has ended, even if not yet reaped, or its id now belongs to a process
// started at another time; a process on another host cannot be checked
// and counts as running.
func TestOwnerGone(t *testing.T) {
	zombie := exec.Command(os.Args[0], "-test.run=^$")
	if err := zombie.Start(); err != nil {
		t.Fatal(err)
	}
	// Ended but not reaped until Wait: a zombie, which signal 0 still
	// finds. Its end is waited for through /proc, not with a timer.
	defer zombie.Wait()
	for deadline := time.Now().Add(time.Minute); runtime.GOOS == "linux"; {
		if _, running := processStart(zombie.Process.Pid); !running || time.Now().After(deadline) {
			break
		}
		time.Sleep(time.Millisecond)
	}
	me := self()
	cases := []struct {
		name  string
		owner Owner
		gone  bool
	}{
		{"this process", me, false},
		{"an ended process", endedProcess(t), true},
		{"an ended process, not reaped", Owner{PID: zombie.Process.Pid, Host: me.Host}, runtime.GOOS == "linux"},
		{"this id, started an hour before", Owner{PID: me.PID, Host: me.Host, Started: me.Started.Add(-time.Hour)}, runtime.GOOS == "linux"},
		{"this id and start within a second", Owner{PID: me.PID, Host: me.Host, Started: me.Started.Add(time.Second)}, false},
		{"an ended process on another host", Owner{PID: endedProcess(t).PID, Host: me.Host + "-elsewhere"}, false},
		{"no process id", Owner{Host: me.Host}, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := c.owner.gone(); got != c.gone {
				t.Errorf("gone() = %v for %+v, want %v", got, c.owner, c.gone)
			}
		})
	}
}

// TestLockSchemes takes the lock both ways — flock where the system has
// it (tryLock) and the exclusive file used elsewhere (tryExclusive) — and
// checks each: a free lock is taken and names this process; a held one is
// refused, naming its holder; one left by a process that has ended is
// taken over, naming that process; release removes the file.
func TestLockSchemes(t *testing.T) {
	schemes := []struct {
		name string
		try  func(path string) (*lock, Owner, bool, error)
	}{{"tryLock", tryLock}, {"tryExclusive", tryExclusive}}
	for _, s := range schemes {
		t.Run(s.name, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), ".set.lock")
			first, _, _, err := s.try(path)
			if err != nil {
				t.Fatal(err)
			}
			if o, ok := readOwner(path); !ok || !o.is(self()) {
				t.Errorf("the lock file names %+v, want this process", o)
			}
			if first.tookOver != nil {
				t.Errorf("a new lock took over from %v", *first.tookOver)
			}
			_, holder, known, err := s.try(path)
			if !errors.Is(err, errHeld) || !known || !holder.is(self()) {
				t.Errorf("a held lock: %v, holder %+v (known %v); want errHeld naming this process", err, holder, known)
			}
			first.release()
			if _, err := os.Stat(path); !errors.Is(err, os.ErrNotExist) {
				t.Errorf("release left the lock file: %v", err)
			}

			ended := endedProcess(t)
			if err := os.WriteFile(path, ended.encode(), 0o666); err != nil {
				t.Fatal(err)
			}
			l, _, _, err := s.try(path)
			if err != nil {
				t.Fatalf("a lock left by an ended process: %v", err)
			}
			if l.tookOver == nil || !l.tookOver.is(ended) {
				t.Errorf("took over from %v, want %v", l.tookOver, ended)
			}
			l.release()
		})
	}
}

// TestExclusiveUnnamedLock: where the lock is an exclusive file, one that
// names nobody is held while young (its creator may not have written it
// yet) and taken over once old.
func TestExclusiveUnnamedLock(t *testing.T) {
	path := filepath.Join(t.TempDir(), ".set.lock")
	if err := os.WriteFile(path, nil, 0o666); err != nil {
		t.Fatal(err)
	}
	if _, _, known, err := tryExclusive(path); !errors.Is(err, errHeld) || known {
		t.Errorf("a young empty lock file: %v (known %v), want errHeld by an unknown holder", err, known)
	}
	old := time.Now().Add(-2 * unnamedLockAge)
	if err := os.Chtimes(path, old, old); err != nil {
		t.Fatal(err)
	}
	l, _, _, err := tryExclusive(path)
	if err != nil {
		t.Fatalf("an old empty lock file: %v", err)
	}
	l.release()
}

// TestTakeLockWaits: with noWait a held lock is a *BusyError naming the
// holder; without it takeLock says once who holds it and takes it as soon
// as it is released, or gives up when its context ends.
func TestTakeLockWaits(t *testing.T) {
	path := filepath.Join(t.TempDir(), ".set.lock")
	holder, _, _, err := tryLock(path)
	if err != nil {
		t.Fatal(err)
	}
	var busy *BusyError
	if _, err := takeLock(context.Background(), path, "set", true, nil); !errors.As(err, &busy) || !busy.Holder.is(self()) {
		t.Fatalf("noWait: %v, want a BusyError naming this process", err)
	}

	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := takeLock(ctx, path, "set", false, nil); !errors.Is(err, context.Canceled) {
		t.Errorf("a wait whose context ended: %v, want context.Canceled", err)
	}

	told := make(chan *BusyError, 2)
	got := make(chan error)
	go func() {
		l, err := takeLock(context.Background(), path, "set", false, func(b *BusyError) { told <- b })
		if err == nil {
			l.release()
		}
		got <- err
	}()
	if b := <-told; !b.Known || !b.Holder.is(self()) {
		t.Errorf("told %+v, want this process", b)
	}
	holder.release()
	if err := <-got; err != nil {
		t.Errorf("the waiting takeLock, once released: %v", err)
	}
	if len(told) > 0 {
		t.Errorf("told %d more times", len(told))
	}
}
