// Package mapping writes the sampler mapping of a sample set as an SFZ file,
// the open text format in which each <region> names a sample and the keys
// and velocities it answers, and reads one back for verification.
package mapping

import (
	"bufio"
	"fmt"
	"io"
	"strings"
)

// Region is one sample and the part of the keyboard it covers.
type Region struct {
	Sample          string // path relative to the SFZ file, '/'-separated
	Root            int    // MIDI key at which the sample plays unshifted
	LowKey, HighKey int
	LowVel, HighVel int
	// LoopStart and LoopEnd are the sustain loop in frames, End inclusive
	// as SFZ's loop_end counts it; Looped says whether there is one.
	Looped             bool
	LoopStart, LoopEnd int
	// SeqPosition (1-based) and SeqLength place the sample in a round-robin
	// cycle; a SeqLength of 1 or less means no round robin.
	SeqPosition, SeqLength int
}

// Options describes the whole mapping.
type Options struct {
	Title string // written as a comment at the top
	// Release is the amplifier release in seconds when a key is let go
	// (ampeg_release); 0 leaves the player's default.
	Release float64
}

// WriteSFZ writes one <region> per entry of regions, in order. Sample paths
// containing '=' or a line break are rejected, since SFZ cannot express them.
func WriteSFZ(w io.Writer, regions []Region, opts Options) error {
	for _, r := range regions {
		if strings.ContainsAny(r.Sample, "=\n\r") {
			return fmt.Errorf("mapping: sample path %q cannot be written in SFZ (it holds '=' or a line break)", r.Sample)
		}
	}
	bw := bufio.NewWriter(w)
	if opts.Title != "" {
		fmt.Fprintf(bw, "// %s\n", strings.ReplaceAll(opts.Title, "\n", " "))
	}
	// Keys are written as MIDI numbers, not note names: players disagree on
	// which octave C4 is, but not on the numbers.
	bw.WriteString("<group>")
	if opts.Release > 0 {
		fmt.Fprintf(bw, " ampeg_release=%.4g", opts.Release)
	}
	bw.WriteString("\n")
	for _, r := range regions {
		fmt.Fprintf(bw, "<region> sample=%s pitch_keycenter=%d lokey=%d hikey=%d lovel=%d hivel=%d",
			r.Sample, r.Root, r.LowKey, r.HighKey, r.LowVel, r.HighVel)
		if r.Looped {
			// loop_sustain: loop while the key is held, then play on into the
			// release rendered after the loop.
			fmt.Fprintf(bw, " loop_mode=loop_sustain loop_start=%d loop_end=%d", r.LoopStart, r.LoopEnd)
		} else {
			bw.WriteString(" loop_mode=no_loop")
		}
		if r.SeqLength > 1 {
			fmt.Fprintf(bw, " seq_length=%d seq_position=%d", r.SeqLength, r.SeqPosition)
		}
		bw.WriteString("\n")
	}
	return bw.Flush()
}
