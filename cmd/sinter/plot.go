package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"os/signal"
	"path/filepath"
	"runtime"
	"slices"
	"syscall"

	"sinter/patch"
	"sinter/synth/chart"
	"sinter/synth/sampleset"
)

func plotNote(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("plot", flag.ContinueOnError)
	keyName := fs.String("key", "", "the root key to draw, such as `C4` (default: the patch's key nearest C4)")
	velocity := fs.Int("velocity", 0, "velocity layer `V` to draw (default: the loudest)")
	outFile := fs.String("o", "", "the `FILE.png` to write (default: NAME_KEY.png beside the patch)")
	width := fs.Int("width", 1200, "picture width `W` in pixels")
	height := fs.Int("height", 1500, "picture height `H` in pixels")
	path, code, ok := parseArgs(fs, args, stdout, stderr)
	if !ok {
		return code
	}
	out := reporter{stdout: stdout, stderr: stderr, command: "plot"}
	p, err := patch.Load(path)
	if err != nil {
		return out.fail(exitUsage, err)
	}
	key := nearest(p.Keys, 60)
	if *keyName != "" {
		if key, err = patch.ParseNote(*keyName); err != nil {
			return out.fail(exitUsage, fmt.Errorf("--key: %w", err))
		}
	}
	if !slices.Contains(p.Keys, key) {
		_, err := p.Expand(patch.ExpandOptions{Keys: []int{key}}) // says which keys there are
		return out.fail(exitUsage, err)
	}
	// The whole plan, since the note's levelling gain may depend on every
	// note of the set.
	plan, err := p.Expand(patch.ExpandOptions{})
	if err != nil {
		return out.fail(exitUsage, err)
	}
	index := -1
	for i, n := range plan.Notes {
		// The loudest layer's last variation, or the first variation of
		// the layer asked for.
		if n.Key == key && (*velocity == 0 || n.Velocity == *velocity && n.Variation == 0) {
			index = i
		}
	}
	if index < 0 {
		return out.fail(exitUsage, fmt.Errorf("--velocity %d is not one of the patch's layers %v", *velocity, p.Velocities))
	}
	note := &plan.Notes[index]
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	gain, err := sampleset.Gain(ctx, plan, index, runtime.NumCPU())
	if err != nil {
		return out.fail(exitFailure, err)
	}
	file := *outFile
	if file == "" {
		file = filepath.Join(filepath.Dir(path), fmt.Sprintf("%s_%s.png", plan.Name, patch.FileNoteName(key)))
	}
	if err := chart.WriteFile(file, note, chart.Options{Width: *width, Height: *height, Gain: gain}); err != nil {
		return out.fail(exitFailure, err)
	}
	fmt.Fprintf(stdout, "drew %s, velocity %d, at its levelling gain of %+.2f dB, into %s\n", patch.NoteName(key), note.Velocity, 20*math.Log10(gain), file)
	return exitOK
}

// nearest returns the key of keys closest to want, the lower on a tie.
func nearest(keys []int, want int) int {
	best := keys[0]
	for _, k := range keys {
		if abs(k-want) < abs(best-want) {
			best = k
		}
	}
	return best
}

func abs(x int) int { return max(x, -x) }
