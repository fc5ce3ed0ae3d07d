package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"sinter/synth/sampleset"
)

// The patches the output-folder tests render: a small set, and a larger
// one levelled as a whole whose notes are dense enough (96 partials
// sounding throughout, above the threshold of every kernel) to be kept on
// disk between the passes, so a render of it passes every Stage.
const (
	smallSet = "name: s\nsample_rate: 8000\nkeys: [C4, G4]\nhold: 0.2\ntail: 0.1\npartials: [{harmonics: 4}]\n"
	denseSet = "name: s\nsample_rate: 22050\nkeys: [C1, G1, C2, G2]\nvelocities: [60, 120]\nhold: 0.4\ntail: 0.1\npartials: [{harmonics: 96, amplitude: \"1/n\"}]\n"
)

// stderrWatch collects a child's stderr and lets a test wait for a line.
type stderrWatch struct {
	mu      sync.Mutex
	text    strings.Builder
	changed chan struct{} // closed and replaced at every write
}

func (w *stderrWatch) Write(p []byte) (int, error) {
	w.mu.Lock()
	defer w.mu.Unlock()
	w.text.Write(p)
	close(w.changed)
	w.changed = make(chan struct{})
	return len(p), nil
}

func (w *stderrWatch) String() string {
	w.mu.Lock()
	defer w.mu.Unlock()
	return w.text.String()
}

// child is a render or verify run as a real process.
type child struct {
	cmd    *exec.Cmd
	stderr *stderrWatch
	done   chan struct{} // closed once the process has ended and been reaped
	err    error         // of Wait, once done
}

// startChild starts the test binary as sinter with args and the extra
// environment env. The test kills it at its end if it still runs: only
// processes a test started are ever killed.
func startChild(t *testing.T, env []string, args ...string) *child {
	t.Helper()
	c := &child{cmd: command(args...), stderr: &stderrWatch{changed: make(chan struct{})}, done: make(chan struct{})}
	c.cmd.Env = append(c.cmd.Env, env...)
	c.cmd.Stdout = io.Discard
	c.cmd.Stderr = c.stderr
	if err := c.cmd.Start(); err != nil {
		t.Fatal(err)
	}
	go func() {
		c.err = c.cmd.Wait()
		close(c.done)
	}()
	t.Cleanup(func() {
		select {
		case <-c.done:
		default:
			c.cmd.Process.Kill()
			<-c.done
		}
	})
	return c
}

// waitFor waits until the child has said text on stderr; false if it ends
// or a minute passes first.
func (c *child) waitFor(text string) bool {
	deadline := time.After(time.Minute)
	for {
		c.stderr.mu.Lock()
		said, changed := strings.Contains(c.stderr.text.String(), text), c.stderr.changed
		c.stderr.mu.Unlock()
		if said {
			return true
		}
		select {
		case <-changed:
		case <-c.done:
			return strings.Contains(c.stderr.String(), text)
		case <-deadline:
			return false
		}
	}
}

// exitCode waits (a minute at most) for the child to end by itself and
// returns its exit status.
func (c *child) exitCode(t *testing.T) int {
	t.Helper()
	select {
	case <-c.done:
	case <-time.After(time.Minute):
		t.Fatalf("%v still runs after a minute; stderr:\n%s", c.cmd.Args[1:], c.stderr)
	}
	var exit *exec.ExitError
	if errors.As(c.err, &exit) {
		return exit.ExitCode()
	}
	if c.err != nil {
		t.Fatal(c.err)
	}
	return 0
}

// kill sends SIGKILL, which no process can catch or clean up after, and
// reaps the child.
func (c *child) kill(t *testing.T) {
	t.Helper()
	if err := c.cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	<-c.done
	if ws, ok := c.cmd.ProcessState.Sys().(syscall.WaitStatus); !ok || !ws.Signaled() || ws.Signal() != syscall.SIGKILL {
		t.Fatalf("the render ended with %v, not by SIGKILL; stderr:\n%s", c.err, c.stderr)
	}
}

// sinter runs the command to its end and returns its status and stderr.
func sinter(t *testing.T, env []string, args ...string) (int, string) {
	t.Helper()
	c := startChild(t, env, args...)
	return c.exitCode(t), c.stderr.String()
}

// writeFile writes text to name in dir and returns its path.
func writeFile(t *testing.T, dir, name, text string) string {
	t.Helper()
	path := filepath.Join(dir, name)
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// hidden lists what starts with a dot in dir: staging folders, sets set
// aside, lock files.
func hidden(t *testing.T, dir string) []string {
	t.Helper()
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, e := range entries {
		if strings.HasPrefix(e.Name(), ".") {
			names = append(names, e.Name())
		}
	}
	return names
}

// sameSet fails unless dir holds exactly the files of want, byte for byte,
// and each matches the manifest (sampleset.Verify, which reads them with
// go-audio/wav as well).
func sameSet(t *testing.T, dir string, want map[string][32]byte, which string) {
	t.Helper()
	got := fileHashes(t, dir)
	if len(got) != len(want) {
		t.Errorf("%s holds %d files, %s has %d", dir, len(got), which, len(want))
	}
	for name, sum := range want {
		if got[name] != sum {
			t.Errorf("%s differs from %s's", name, which)
		}
	}
	problems, err := sampleset.Verify(dir)
	if err != nil || len(problems) > 0 {
		t.Errorf("verify %s: %v %v", dir, err, problems)
	}
}

// TestKilledRenderLeavesNothingForLong kills a real render with SIGKILL at
// each stage a build passes — in the first pass, after keeping a dense
// note on disk, after writing a file, just before the swap and just after
// it — and checks that the folder holds the old set (or, after the swap,
// the whole new one) with every file matching its manifest, and that the
// next verify or render removes what the killed one left, says how much it
// freed, and leaves nothing beside the set. Before the lock files in the
// staging folders, the staging folder stayed for good.
func TestKilledRenderLeavesNothingForLong(t *testing.T) {
	if testing.Short() {
		t.Skip("runs renders in child processes")
	}
	for _, point := range []sampleset.Stage{sampleset.Measured, sampleset.Spilled, sampleset.Wrote, sampleset.Swapping, sampleset.Swapped} {
		for _, cleaner := range []string{"render", "verify"} {
			t.Run(point.String()+"/"+cleaner, func(t *testing.T) {
				root := t.TempDir()
				out := filepath.Join(root, "set")
				small := writeFile(t, root, "small.yaml", smallSet)
				dense := writeFile(t, root, "dense.yaml", denseSet)
				ref := filepath.Join(t.TempDir(), "ref")
				for _, r := range [][]string{{small, out}, {dense, ref}} {
					if code, stderr := sinter(t, nil, "render", r[0], "-o", r[1], "--quiet"); code != exitOK {
						t.Fatalf("render %s: exit %d\n%s", r[0], code, stderr)
					}
				}
				oldSet, newSet := fileHashes(t, out), fileHashes(t, ref)

				killed := startChild(t, []string{stopAtEnv + "=" + point.String()}, "render", dense, "-o", out, "--quiet", "--jobs", "2")
				if !killed.waitFor("stopped at " + point.String()) {
					t.Fatalf("the render did not reach %s; stderr:\n%s", point, killed.stderr)
				}
				killed.kill(t)
				if point == sampleset.Swapped {
					sameSet(t, out, newSet, "the new set")
				} else {
					sameSet(t, out, oldSet, "the old set")
				}
				if len(hidden(t, root)) == 0 {
					t.Fatalf("the render killed at %s left nothing beside the set", point)
				}

				removed := "removed .set.staging-"
				if point < sampleset.Swapping {
					// Its lock file names it until the swap.
					removed = fmt.Sprintf("left by process %d on ", killed.cmd.Process.Pid)
				}
				if cleaner == "verify" {
					code, stderr := sinter(t, nil, "verify", out)
					if code != exitOK || !strings.Contains(stderr, removed) || !strings.Contains(stderr, "freed") {
						t.Fatalf("verify: exit %d, stderr %q; want the leftover removed and what it freed", code, stderr)
					}
					if left := hidden(t, root); len(left) > 0 {
						t.Errorf("left after verify: %v", left)
					}
				}
				code, stdout, stderr := runCLI("render", dense, "-o", out, "--json")
				var report struct {
					Result struct {
						Leftovers []leftover `json:"leftovers_removed"`
					} `json:"result"`
				}
				if err := json.Unmarshal([]byte(stdout), &report); code != exitOK || err != nil {
					t.Fatalf("the next render: exit %d, %v\n%s", code, err, stderr)
				}
				if cleaner == "render" {
					if !strings.Contains(stderr, removed) || !strings.Contains(stderr, "freed") {
						t.Errorf("the next render's stderr %q; want the leftover removed and what it freed", stderr)
					}
					if l := report.Result.Leftovers; len(l) != 1 || !strings.Contains(l[0].Path, ".set.staging-") || l[0].Freed <= 0 {
						t.Errorf("--json reports leftovers_removed %+v; want the staging folder and the bytes it freed", l)
					}
				}
				sameSet(t, out, newSet, "the new set")
				if left := hidden(t, root); len(left) > 0 {
					t.Errorf("left beside the set: %v", left)
				}
			})
		}
	}
}

// TestOneWriterAtATime runs renders of one folder in three processes:
// while the first is stopped part way through, a second with --no-wait
// fails at once with status 1 naming the first, and a third waits, saying
// who holds the folder. Once the first is killed, the third takes over
// its stale lock, removes its staging folder and finishes the set. Before
// the lock, both later renders went ahead and the last swap won.
func TestOneWriterAtATime(t *testing.T) {
	if testing.Short() {
		t.Skip("runs renders in child processes")
	}
	root := t.TempDir()
	out := filepath.Join(root, "set")
	dense := writeFile(t, root, "dense.yaml", denseSet)
	first := startChild(t, []string{stopAtEnv + "=wrote"}, "render", dense, "-o", out, "--quiet")
	if !first.waitFor("stopped at wrote") {
		t.Fatalf("the first render did not reach wrote; stderr:\n%s", first.stderr)
	}
	holder := fmt.Sprintf("process %d on ", first.cmd.Process.Pid)

	code, stderr := sinter(t, nil, "render", dense, "-o", out, "--quiet", "--no-wait")
	if code != exitFailure || !strings.Contains(stderr, "is being written by another sinter ("+holder) || !strings.Contains(stderr, "--no-wait") {
		t.Errorf("render --no-wait: exit %d, stderr %q; want status 1 naming %s", code, stderr, holder)
	}

	waiter := startChild(t, nil, "render", dense, "-o", out, "--quiet")
	if !waiter.waitFor("waiting for " + out + ", which another sinter (" + holder) {
		t.Fatalf("the second render did not wait for the first; stderr:\n%s", waiter.stderr)
	}
	select {
	case <-waiter.done:
		t.Fatalf("the second render ended while the first held the folder; stderr:\n%s", waiter.stderr)
	default:
	}
	first.kill(t)
	if code := waiter.exitCode(t); code != exitOK {
		t.Fatalf("the waiting render, once the first was killed: exit %d\n%s", code, waiter.stderr)
	}
	for _, want := range []string{"took over the lock of " + out + " from " + holder, "removed .set.staging-", "freed"} {
		if !strings.Contains(waiter.stderr.String(), want) {
			t.Errorf("the waiting render's stderr lacks %q:\n%s", want, waiter.stderr)
		}
	}
	if problems, err := sampleset.Verify(out); err != nil || len(problems) > 0 {
		t.Errorf("verify: %v %v", err, problems)
	}
	if left := hidden(t, root); len(left) > 0 {
		t.Errorf("left beside the set: %v", left)
	}
}

// TestModesFollowTheUmask renders with several umasks, each in a process
// of its own since the umask belongs to a process, into a folder whose
// parents do not exist yet, then over the set: folders get 0777 and files
// 0666 less the umask, as other tools make them (common practice; open(2)
// and mkdir(2) apply the umask to the mode asked for). Before, the set's
// folder kept its staging folder's 0700.
func TestModesFollowTheUmask(t *testing.T) {
	if testing.Short() {
		t.Skip("runs renders in child processes")
	}
	for _, mask := range []os.FileMode{0o022, 0o027, 0o002} {
		t.Run(fmt.Sprintf("%03o", mask), func(t *testing.T) {
			root := t.TempDir()
			out := filepath.Join(root, "a", "b", "set")
			env := []string{umaskEnv + "=" + strconv.FormatUint(uint64(mask), 8)}
			for _, patch := range []string{smallSet, denseSet} {
				path := writeFile(t, root, "p.yaml", patch)
				if code, stderr := sinter(t, env, "render", path, "-o", out, "--quiet"); code != exitOK {
					t.Fatalf("render: exit %d\n%s", code, stderr)
				}
				for _, d := range []string{filepath.Join(root, "a"), filepath.Join(root, "a", "b"), out} {
					info, err := os.Stat(d)
					if err != nil {
						t.Fatal(err)
					}
					if info.Mode().Perm() != 0o777&^mask {
						t.Errorf("%s: mode %v, want %v", d, info.Mode().Perm(), 0o777&^mask)
					}
				}
				entries, err := os.ReadDir(out)
				if err != nil {
					t.Fatal(err)
				}
				for _, e := range entries {
					info, err := e.Info()
					if err != nil {
						t.Fatal(err)
					}
					if info.Mode().Perm() != 0o666&^mask {
						t.Errorf("%s: mode %v, want %v", e.Name(), info.Mode().Perm(), 0o666&^mask)
					}
				}
			}
		})
	}
}

// TestRenderRefusesWithoutRoom renders, with --allow-large, a set that
// needs 35 TB — 6400 stereo float files of 600 s at 384 kHz, 12 TB, dense
// enough to be kept on disk between the passes, twice that again — which
// no test machine has room for: render fails at once with status 1, naming what it needs
// (what check estimates: the set and the notes kept between the passes)
// and what is free, and writes nothing.
func TestRenderRefusesWithoutRoom(t *testing.T) {
	if runtime.GOOS != "linux" && runtime.GOOS != "darwin" && runtime.GOOS != "freebsd" {
		// Elsewhere the free space is not read, and the render would
		// start.
		t.Skip("sampleset reads free space on Linux, macOS and FreeBSD")
	}
	root := t.TempDir()
	path := writeFile(t, root, "huge.yaml", `name: huge
sample_rate: 384000
bit_depth: 32
channels: 2
keys: {from: 0, to: 127}
velocities: [10, 20, 30, 40, 50, 60, 70, 80, 90, 100]
round_robin: 5
hold: 590
tail: 10
partials: [{harmonics: 64}]
`)
	code, stdout, stderr := runCLI("check", path, "--json")
	var plan struct {
		Result struct {
			Bytes      int64 `json:"bytes"`
			SpillBytes int64 `json:"spill_bytes"`
		} `json:"result"`
	}
	if err := json.Unmarshal([]byte(stdout), &plan); code != exitOK || err != nil || plan.Result.SpillBytes == 0 {
		t.Fatalf("check: exit %d, %v, %+v\n%s", code, err, plan, stderr)
	}
	out := filepath.Join(root, "set")
	code, _, stderr = runCLI("render", path, "-o", out, "--allow-large", "--quiet")
	needed := fmt.Sprintf("needs %d bytes", plan.Result.Bytes+plan.Result.SpillBytes)
	if code != exitFailure || !strings.Contains(stderr, "not enough free space for "+out) || !strings.Contains(stderr, needed) || !strings.Contains(stderr, "bytes (") || !strings.Contains(stderr, " free") {
		t.Errorf("exit %d, stderr %q; want status 1 naming %q and the free space", code, stderr, needed)
	}
	if entries, _ := os.ReadDir(root); len(entries) != 1 {
		t.Errorf("render wrote beside the patch: %v", entries)
	}
}
