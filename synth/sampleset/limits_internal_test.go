package sampleset

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestRoomBeforeWork: a build that needs more than the free space — the
// set plus the dense notes kept between its passes — fails at once with a
// *RoomError naming both numbers, having written nothing; with exactly
// enough room it builds. The free space is the seam freeSpaceAt.
func TestRoomBeforeWork(t *testing.T) {
	plan := expand(t, `name: room
sample_rate: 22050
keys: [24, 36, 108]
hold: 0.3
tail: 0.1
partials:
  - harmonics: 96
    amplitude: "1 / n"
`, "")
	est := EstimatePlan(plan)
	// 96 partials sound throughout on the two low keys, above every
	// kernel's threshold; the band limit leaves 2 on the high one.
	if want := 2 * int64(plan.Notes[0].Frames) * 8; est.SpillBytes != want {
		t.Fatalf("spill estimate %d bytes; want %d, the two low keys' notes as float64", est.SpillBytes, want)
	}
	needed := est.Bytes + est.SpillBytes
	saved := freeSpaceAt
	defer func() { freeSpaceAt = saved }()
	for _, c := range []struct {
		free int64
		fits bool
	}{{needed - 1, false}, {needed, true}} {
		t.Run(fmt.Sprint(c.free), func(t *testing.T) {
			freeSpaceAt = func(string) (int64, bool) { return c.free, true }
			parent := t.TempDir()
			plan.OutputDir = filepath.Join(parent, "set")
			_, err := Build(context.Background(), plan, Options{Jobs: 2, Version: "test"})
			var room *RoomError
			if c.fits {
				if err != nil {
					t.Fatalf("with exactly enough room: %v", err)
				}
				return
			}
			if !errors.As(err, &room) || room.Needed != needed || room.Free != c.free {
				t.Fatalf("error %v; want a RoomError of %d needed, %d free", err, needed, c.free)
			}
			for _, n := range []int64{needed, c.free} {
				if !strings.Contains(err.Error(), fmt.Sprint(n)) {
					t.Errorf("%q does not name %d", err, n)
				}
			}
			if entries, _ := os.ReadDir(parent); len(entries) != 0 {
				t.Errorf("written beside the set: %v", entries)
			}
		})
	}
}

// TestSpillEstimateIsWhatIsKept: the bytes the estimate gives for the
// notes kept between the passes are the bytes the first pass keeps, for
// every levelling scope (none without two passes), for dense partials and
// for a few partials with a noise band (which are kept for the noise).
func TestSpillEstimateIsWhatIsKept(t *testing.T) {
	groups := map[string]string{
		"partials": "  - harmonics: 96\n    amplitude: \"vel / n\"\n    envelope: {attack: 0.01, decay: \"0.05 * n\", sustain: 0.3, release: 0.1}\n",
		"noise":    "  - harmonics: 2\n  - noise: {low: 2, high: 3}\n",
	}
	for _, scope := range []string{"set", "key", "file"} {
		for name, group := range groups {
			t.Run(scope+"/"+name, func(t *testing.T) {
				spillCase(t, scope, name, group)
			})
		}
	}
}

// spillCase builds the set of one scope and group for
// TestSpillEstimateIsWhatIsKept and compares the bytes kept with the
// estimate.
func spillCase(t *testing.T, scope, name, group string) {
	plan := expand(t, fmt.Sprintf(`name: spill
sample_rate: 22050
keys: [24, 36, 60, 108]
velocities: [60, 120]
hold: 0.3
tail: 0.1
normalize: {peak: -1 dBFS, scope: %s}
partials:
%s`, scope, group), filepath.Join(t.TempDir(), "set"))
	var kept int64 = -1
	// One job, so the hook runs in one goroutine at a time.
	opts := Options{Jobs: 1, Version: "test", Reached: func(s Stage) {
		// The first file written: the first pass is over and
		// its spill files are complete.
		if s != Wrote || kept >= 0 {
			return
		}
		spills, _ := filepath.Glob(filepath.Join(filepath.Dir(plan.OutputDir), ".set.staging-*", ".spill-*.f64"))
		kept = 0
		for _, f := range spills {
			if info, err := os.Stat(f); err == nil {
				kept += info.Size()
			}
		}
	}}
	if _, err := Build(context.Background(), plan, opts); err != nil {
		t.Fatal(err)
	}
	est := EstimatePlan(plan)
	if kept != est.SpillBytes {
		t.Errorf("the first pass kept %d bytes; the estimate says %d", kept, est.SpillBytes)
	}
	if (scope == "file") != (est.SpillBytes == 0) {
		t.Errorf("%s: estimate %d bytes kept with scope %s; want none with a gain per file (one pass) only", name, est.SpillBytes, scope)
	}
}
