package main

import (
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"syscall"
	"testing"
)

// runAsCLI, set in the environment, makes the test binary act as the
// sinter command, so tests can run it as a real process: to read its peak
// memory, or to interrupt it with a signal.
const runAsCLI = "SINTER_TEST_RUN_AS_CLI"

func TestMain(m *testing.M) {
	if os.Getenv(runAsCLI) == "1" {
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
