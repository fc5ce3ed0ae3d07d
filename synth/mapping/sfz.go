// Package mapping writes the sampler mapping of a sample set as an SFZ file,
// the open text format in which each <region> names a sample and the keys
// and velocities it answers.
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
}

// Options describes the whole mapping.
type Options struct {
	Title string // written as a comment at the top
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
	bw.WriteString("<group>\n")
	for _, r := range regions {
		fmt.Fprintf(bw, "<region> sample=%s pitch_keycenter=%d lokey=%d hikey=%d lovel=%d hivel=%d\n",
			r.Sample, r.Root, r.LowKey, r.HighKey, r.LowVel, r.HighVel)
	}
	return bw.Flush()
}
