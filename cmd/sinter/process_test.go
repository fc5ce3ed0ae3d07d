package main

import (
	"crypto/sha256"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"sinter/synth/kernel"
	"sinter/synth/sampleset"
)

// runAsCLI, set in the environment, makes the test binary act as the
// sinter command, so tests can run it as a real process: to read its peak
// memory, or to interrupt or kill it.
const runAsCLI = "SINTER_TEST_RUN_AS_CLI"

// Read only by the test binary acting as the command: umaskEnv sets its
// umask (octal) first, since a umask belongs to a process; stopAtEnv
// names a sampleset.Stage at which a render stops — the goroutine that
// reaches it says "stopped at STAGE" on stderr and sleeps, for the test to
// kill the process at that very point.
const (
	umaskEnv  = "SINTER_TEST_UMASK"
	stopAtEnv = "SINTER_TEST_STOP_AT"
)

func TestMain(m *testing.M) {
	if os.Getenv(runAsCLI) == "1" {
		if mask := os.Getenv(umaskEnv); mask != "" {
			m, err := strconv.ParseUint(mask, 8, 32)
			if err != nil {
				fmt.Fprintf(os.Stderr, "%s=%q: %v\n", umaskEnv, mask, err)
				os.Exit(exitUsage)
			}
			syscall.Umask(int(m))
		}
		if stage := os.Getenv(stopAtEnv); stage != "" {
			reached = func(s sampleset.Stage) {
				if s.String() == stage {
					fmt.Fprintf(os.Stderr, "stopped at %s\n", s)
					for {
						time.Sleep(time.Hour)
					}
				}
			}
		}
		os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
	}
	os.Exit(m.Run())
}

// command returns the test binary set up to run as sinter with args.
func command(args ...string) *exec.Cmd {
	cmd := exec.Command(os.Args[0], args...)
	cmd.Env = append(os.Environ(), runAsCLI+"=1")
	return cmd
}

// TestPeakMemoryFlatInFileCount renders a 5-file and a 500-file set of the
// same notes in separate processes and compares their peak resident
// memory: the build keeps one note per job in memory, so a hundred times
// the files may not double it. Each note is 0.5 s at 48 kHz (192 KB as
// float64), so a build that held every note would add about 96 MB.
func TestPeakMemoryFlatInFileCount(t *testing.T) {
	if testing.Short() {
		t.Skip("renders 505 files")
	}
	peak := func(keys string) int64 {
		dir := t.TempDir()
		src := fmt.Sprintf(`name: memory
sample_rate: 48000
keys: %s
velocities: [20, 40, 60, 80, 100]
hold: 0.4
tail: 0.1
partials:
  - harmonics: 8
    amplitude: "vel / n"
`, keys)
		path := filepath.Join(dir, "memory.yaml")
		if err := os.WriteFile(path, []byte(src), 0o644); err != nil {
			t.Fatal(err)
		}
		cmd := command("render", path, "-o", filepath.Join(dir, "out"), "--jobs", "2", "--quiet")
		if out, err := cmd.CombinedOutput(); err != nil {
			t.Fatalf("render %s: %v\n%s", keys, err, out)
		}
		usage, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage)
		if !ok {
			t.Skip("this platform reports no peak memory")
		}
		return usage.Maxrss // KiB on Linux
	}
	five := peak("[60]")
	fiveHundred := peak("{from: 10, to: 109}")
	t.Logf("peak RSS: 5 files %d KiB, 500 files %d KiB", five, fiveHundred)
	if fiveHundred > 2*five {
		t.Errorf("500 files took %d KiB at peak, more than twice the %d KiB of 5 files", fiveHundred, five)
	}
}

// TestInterruptKeepsThePreviousSet interrupts a real render with SIGINT
// and with SIGTERM while it writes over an earlier set: the command exits
// with status 1 saying it was interrupted, every file of the earlier set
// keeps its hash, and no staging folder or partial file is left.
func TestInterruptKeepsThePreviousSet(t *testing.T) {
	if testing.Short() {
		t.Skip("runs renders in child processes")
	}
	for _, sig := range []syscall.Signal{syscall.SIGINT, syscall.SIGTERM} {
		t.Run(sig.String(), func(t *testing.T) {
			root := t.TempDir()
			out := filepath.Join(root, "set")
			small := filepath.Join(root, "small.yaml")
			heavy := filepath.Join(root, "heavy.yaml")
			os.WriteFile(small, []byte("name: s\nsample_rate: 8000\nkeys: [C4, G4]\nhold: 0.2\ntail: 0.1\npartials: [{harmonics: 4}]\n"), 0o644)
			os.WriteFile(heavy, []byte("name: s\nkeys: {from: C2, to: G3}\nvelocities: [60, 120]\nhold: 8\ntail: 2\npartials: [{harmonics: 400, amplitude: \"1/n\"}]\n"), 0o644)
			if b, err := command("render", small, "-o", out, "--quiet").CombinedOutput(); err != nil {
				t.Fatalf("first render: %v\n%s", err, b)
			}
			before := fileHashes(t, out)
			cmd := command("render", heavy, "-o", out, "--quiet")
			var stderr strings.Builder
			cmd.Stderr = &stderr
			if err := cmd.Start(); err != nil {
				t.Fatal(err)
			}
			// Wait until the render is under way: its staging folder exists.
			deadline := time.Now().Add(20 * time.Second)
			for {
				staging, _ := filepath.Glob(filepath.Join(root, ".set.staging-*"))
				if len(staging) > 0 {
					break
				}
				if time.Now().After(deadline) {
					cmd.Process.Kill()
					t.Fatal("no staging folder appeared")
				}
				time.Sleep(5 * time.Millisecond)
			}
			time.Sleep(50 * time.Millisecond)
			cmd.Process.Signal(sig)
			err := cmd.Wait()
			var exit *exec.ExitError
			if !errors.As(err, &exit) || exit.ExitCode() != exitFailure || !strings.Contains(stderr.String(), "interrupted") {
				t.Fatalf("exit %v, stderr %q; want status 1 and the interruption named", err, stderr.String())
			}
			after := fileHashes(t, out)
			if len(after) != len(before) {
				t.Errorf("%d files after the interrupted render, %d before", len(after), len(before))
			}
			for name, sum := range before {
				if after[name] != sum {
					t.Errorf("%s changed", name)
				}
			}
			entries, _ := os.ReadDir(root)
			for _, e := range entries {
				if strings.HasPrefix(e.Name(), ".") {
					t.Errorf("left behind: %s", e.Name())
				}
			}
		})
	}
}

// fileHashes returns the SHA-256 of every file in dir.
func fileHashes(t *testing.T, dir string) map[string][32]byte {
	t.Helper()
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	sums := map[string][32]byte{}
	for _, e := range entries {
		data, err := os.ReadFile(filepath.Join(dir, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		sums[e.Name()] = sha256.Sum256(data)
	}
	return sums
}

// TestKernelChoice runs sinter with SINTER_KERNEL set, in a process of its
// own because the kernel is chosen when the program starts: --version names
// the kernel in use and why; every kernel the processor runs can be
// forced; a name sinter does not know (an empty one too), or a kernel the
// processor cannot run, is refused with exit 2 before anything else
// happens.
func TestKernelChoice(t *testing.T) {
	run := func(env []string, args ...string) (string, int) {
		cmd := command(args...)
		cmd.Env = append(cmd.Env, env...)
		out, _ := cmd.CombinedOutput()
		return string(out), cmd.ProcessState.ExitCode()
	}
	force := func(name string) []string { return []string{kernel.EnvironmentVariable + "=" + name} }
	out, code := run(nil, "--version")
	if code != exitOK || !strings.Contains(out, "("+kernel.Active().String()+" kernel: "+kernel.Reason()+")") {
		t.Errorf("--version: exit %d, %q; want the kernel %s and why", code, out, kernel.Active())
	}
	for _, isa := range kernel.Supported() {
		out, code := run(force(isa.String()), "--version")
		if code != exitOK || !strings.Contains(out, "("+isa.String()+" kernel: forced by SINTER_KERNEL="+isa.String()) {
			t.Errorf("SINTER_KERNEL=%s: exit %d, %q", isa, code, out)
		}
	}
	refused := []string{"neon", ""}
	if best := kernel.Supported()[len(kernel.Supported())-1]; best < kernel.AVX512 {
		refused = append(refused, (best + 1).String())
	}
	for _, name := range refused {
		out, code := run(force(name), "check", "no-such.yaml")
		if code != exitUsage || !strings.Contains(out, "SINTER_KERNEL") {
			t.Errorf("SINTER_KERNEL=%q: exit %d, %q; want exit %d naming the variable", name, code, out, exitUsage)
		}
	}
}
