package synth

import (
	"sort"

	"sinter/patch"
)

// Work returns the oscillator work Render does for n, without rendering:
// for each partial, the blocks from the start up to the last one in which
// it can reach SilenceLevel. That span is a prefix, because after its
// attack an envelope never rises, so a binary search over the blocks
// finds it in a dozen envelope evaluations. RenderLooped adds the
// continuation after a crossfade loop, which Work leaves out.
func Work(n *patch.Note) Stats {
	stats := Stats{Nominal: int64(len(n.Partials)) * int64(n.Frames)}
	blocks := (n.Frames + BlockFrames - 1) / BlockFrames
	for _, p := range n.Partials {
		o := oscillator{amp: p.Amplitude, env: newEnvelope(p.Envelope, float64(n.SampleRate), float64(n.NoteOff)), endPos: -1}
		audible := sort.Search(blocks, func(b int) bool { return !o.audible(b * BlockFrames) })
		stats.PartialSamples += int64(min(n.Frames, audible*BlockFrames))
	}
	return stats
}
