package sampleset

import (
	"fmt"

	"sinter/patch"
	"sinter/synth"
	"sinter/synth/wav"
)

// Estimate is what a plan will produce, worked out before rendering.
type Estimate struct {
	Files          int
	AudioSeconds   float64 // an upper bound where tails end by level
	Bytes          int64   // of the WAV files
	PartialSamples int64   // nominal: partials × frames, before skipping silence
}

// EstimatePlan adds up what plan will produce. Its partial-samples leave
// out the continuation of crossfade loops (see synth.WorkLooped), which
// would need every note's loop planned.
func EstimatePlan(plan *patch.Plan) Estimate {
	e := Estimate{Files: len(plan.Notes)}
	for i := range plan.Notes {
		n := &plan.Notes[i]
		e.AudioSeconds += float64(n.Frames) / float64(n.SampleRate)
		sampler := &wav.Sampler{}
		if n.Loop.Mode != patch.LoopOff {
			sampler.Loops = make([]wav.Loop, 1) // every looped note gets one loop
		}
		e.Bytes += wav.Size(n.Frames, wav.Options{SampleRate: n.SampleRate, BitDepth: plan.BitDepth, Channels: n.Channels,
			Sampler: sampler, Instrument: &wav.Instrument{}})
		e.PartialSamples += synth.Work(n).Nominal
	}
	return e
}

// Limits bound what one Build may produce, so a typing slip in a patch
// (a key range of every key at 100 round robins, say) fails at once
// instead of filling a disk or running for hours. A zero field is no
// limit.
type Limits struct {
	Files          int
	Bytes          int64
	PartialSamples int64
}

// DefaultLimits are well above any instrument we know of — 50 000 files,
// 8 GiB, 5·10^11 partial-samples (about a minute of the vector kernel on
// two cores, twenty on the plain one) — and far below what would hurt.
var DefaultLimits = Limits{Files: 50_000, Bytes: 8 << 30, PartialSamples: 5e11}

// LimitError is a plan beyond a Limits.
type LimitError struct {
	What        string // files, bytes or partial-samples
	Planned     float64
	Limit       float64
	Description string
}

func (e *LimitError) Error() string { return e.Description }

// Check returns a *LimitError for the first limit e passes, or nil.
func (l Limits) Check(e Estimate) error {
	switch {
	case l.Files > 0 && e.Files > l.Files:
		return &LimitError{"files", float64(e.Files), float64(l.Files),
			fmt.Sprintf("the set would have %d files, more than the limit of %d", e.Files, l.Files)}
	case l.Bytes > 0 && e.Bytes > l.Bytes:
		return &LimitError{"bytes", float64(e.Bytes), float64(l.Bytes),
			fmt.Sprintf("the set would take %.1f GiB, more than the limit of %.1f GiB", float64(e.Bytes)/(1<<30), float64(l.Bytes)/(1<<30))}
	case l.PartialSamples > 0 && e.PartialSamples > l.PartialSamples:
		return &LimitError{"partial-samples", float64(e.PartialSamples), float64(l.PartialSamples),
			fmt.Sprintf("the set would take %.3g partial-samples to render, more than the limit of %.3g", float64(e.PartialSamples), float64(l.PartialSamples))}
	}
	return nil
}
