package main

import (
	"flag"
	"fmt"
	"io"
	"path/filepath"

	"sinter/patch"
	"sinter/synth/chart"
)

func plotNote(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("plot", flag.ContinueOnError)
	keyName := fs.String("key", "", "root key to draw (default: the patch's key nearest C4)")
	velocity := fs.Int("velocity", 0, "velocity layer to draw (default: the loudest)")
	outFile := fs.String("o", "", "PNG file to write (default: NAME_KEY.png beside the patch)")
	width := fs.Int("width", 1200, "picture width in pixels")
	height := fs.Int("height", 1500, "picture height in pixels")
	path, ok := parseArgs(fs, args, stderr)
	if !ok {
		return exitUsage
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
	plan, err := p.Expand(patch.ExpandOptions{Keys: []int{key}})
	if err != nil {
		return out.fail(exitUsage, err)
	}
	note := &plan.Notes[len(plan.Notes)-1] // the loudest layer's last variation
	if *velocity != 0 {
		note = nil
		for i := range plan.Notes {
			if plan.Notes[i].Velocity == *velocity && plan.Notes[i].Variation == 0 {
				note = &plan.Notes[i]
			}
		}
		if note == nil {
			return out.fail(exitUsage, fmt.Errorf("--velocity %d is not one of the patch's layers %v", *velocity, p.Velocities))
		}
	}
	file := *outFile
	if file == "" {
		file = filepath.Join(filepath.Dir(path), fmt.Sprintf("%s_%s.png", plan.Name, patch.FileNoteName(key)))
	}
	if err := chart.WriteFile(file, note, chart.Options{Width: *width, Height: *height}); err != nil {
		return out.fail(exitFailure, err)
	}
	fmt.Fprintf(stdout, "drew %s, velocity %d, into %s\n", patch.NoteName(key), note.Velocity, file)
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
