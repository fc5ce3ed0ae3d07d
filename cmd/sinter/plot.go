package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"os/signal"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"syscall"

	"sinter/patch"
	"sinter/synth/analysis"
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
	if strings.EqualFold(filepath.Ext(path), ".wav") {
		if given(fs, "velocity") {
			return out.fail(exitUsage, errors.New("--velocity draws a layer of a patch; a recording has one"))
		}
		return plotRecording(out, path, *keyName, *outFile, *width, *height)
	}
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

// plotRecording draws a recording's spectrogram with the partials analyze
// measures in it, beside the spectrogram of the patch analyze would
// write, rendered at the recording's key; it writes no patch.
func plotRecording(out reporter, path, keyName, file string, width, height int) int {
	opts, err := analysisOptions(keyName, 0, analysis.DefaultPartials, analysis.DefaultFloorDB)
	if err != nil {
		return out.fail(exitUsage, err)
	}
	rec, err := readRecording(path, "sum")
	if err != nil {
		return out.fail(exitUsage, err)
	}
	res, err := analysis.Analyze(rec.samples, rec.audio.Info.SampleRate, opts)
	if err != nil {
		return out.fail(exitUsage, fmt.Errorf("%s: %w", path, err))
	}
	draft := res.Draft(patchName(path), analysis.Recording{Name: filepath.Base(path), SHA256: rec.sha256, Channel: rec.channel})
	render, _, err := res.Resynthesis(draft)
	if err != nil {
		return out.fail(exitFailure, err)
	}
	if file == "" {
		file = strings.TrimSuffix(path, filepath.Ext(path)) + ".png"
	}
	if width == 1200 && height == 1500 {
		// The defaults suit the patch picture's three stacked panels;
		// two spectrograms side by side want a wide picture.
		width, height = 1600, 700
	}
	if err := drawAnalysis(file, rec, res, render, width, height); err != nil {
		return out.fail(exitFailure, err)
	}
	fmt.Fprintf(out.stdout, "drew %s: %s, %s, beside the patch analyze writes rendered at %s, into %s\n",
		path, count(len(res.Partials), "partial"), res.PitchText(), patch.NoteName(res.Key), file)
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
