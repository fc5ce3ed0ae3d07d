// Package mapping writes the sampler mapping of a sample set as an SFZ file,
// the open text format in which each <region> names a sample and the keys
// and velocities it answers, and reads one back for verification.
package mapping

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"slices"
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
	// Transpose (semitones) and Tune (cents) move the region's pitch from
	// what 12-TET repitching from Root gives; see PitchOffset.
	Transpose, Tune int
	// FadeIn and FadeOut are velocity crossfades, xfin_lovel/xfin_hivel
	// and xfout_lovel/xfout_hivel: silent at FadeIn[0], full at FadeIn[1],
	// full at FadeOut[0], silent at FadeOut[1]; {0, 0} for none.
	FadeIn, FadeOut [2]int
}

// PitchOffset splits an offset in cents from 12-TET repitching into the
// whole semitones of transpose and the whole cents of tune, the units the
// SFZ format gives them (sfzformat.com: transpose −127..127 semitones,
// tune −100..100 cents; many players read both as whole numbers), tune
// kept within ±50 so no player's range is exceeded. What whole cents
// cannot hold, at most half a cent, is lost.
func PitchOffset(cents float64) (transpose, tune int) {
	transpose = int(math.Round(cents / 100))
	return transpose, int(math.Round(cents - 100*float64(transpose)))
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
	if slices.ContainsFunc(regions, func(r Region) bool { return r.FadeIn != [2]int{} || r.FadeOut != [2]int{} }) {
		// Layers that cross-fade are different recordings, not phase
		// aligned: the equal-power curve keeps their sum's level.
		bw.WriteString(" xf_velcurve=power")
	}
	bw.WriteString("\n")
	for _, r := range regions {
		fmt.Fprintf(bw, "<region> sample=%s pitch_keycenter=%d lokey=%d hikey=%d", r.Sample, r.Root, r.LowKey, r.HighKey)
		if r.Transpose != 0 {
			fmt.Fprintf(bw, " transpose=%d", r.Transpose)
		}
		if r.Tune != 0 {
			fmt.Fprintf(bw, " tune=%d", r.Tune)
		}
		fmt.Fprintf(bw, " lovel=%d hivel=%d", r.LowVel, r.HighVel)
		if r.FadeIn != [2]int{} {
			fmt.Fprintf(bw, " xfin_lovel=%d xfin_hivel=%d", r.FadeIn[0], r.FadeIn[1])
		}
		if r.FadeOut != [2]int{} {
			fmt.Fprintf(bw, " xfout_lovel=%d xfout_hivel=%d", r.FadeOut[0], r.FadeOut[1])
		}
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
