package sampleset

import (
	"fmt"
	"os"
	"path/filepath"

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
	// SpillBytes are the dense notes a set levelled as a whole keeps on
	// disk between its passes, in the staging folder beside the set: the
	// most it keeps, since notes an earlier set already measured are not
	// rendered in the first pass.
	SpillBytes int64
}

// EstimatePlan adds up what plan will produce. Its partial-samples leave
// out the continuation of crossfade loops (see synth.WorkLooped), which
// would need every note's loop planned.
func EstimatePlan(plan *patch.Plan) Estimate {
	all := make([]int, len(plan.Notes))
	for i := range all {
		all[i] = i
	}
	return estimate(plan, all)
}

// estimate adds up what the notes idx of plan will produce.
func estimate(plan *patch.Plan, idx []int) Estimate {
	e := Estimate{Files: len(idx)}
	norm := plan.Normalize
	twoPasses := norm.Measure != patch.MeasureOff && norm.Scope != patch.ScopeFile
	for _, i := range idx {
		n := &plan.Notes[i]
		e.AudioSeconds += float64(n.Frames) / float64(n.SampleRate)
		sampler := &wav.Sampler{}
		if n.Loop.Mode != patch.LoopOff {
			sampler.Loops = make([]wav.Loop, 1) // every looped note gets one loop
		}
		e.Bytes += wav.Size(n.Frames, wav.Options{SampleRate: n.SampleRate, BitDepth: plan.BitDepth, Channels: n.Channels,
			Sampler: sampler, Instrument: &wav.Instrument{}})
		work := synth.Work(n)
		e.PartialSamples += work.Nominal
		if !twoPasses {
			continue
		}
		// What twoPasses keeps goes by the work RenderLooped does, a
		// crossfade loop's continuation included.
		if loop, looped := synth.PlanLoop(n); looped && loop.Crossfade > 0 {
			work = synth.WorkLooped(n, loop)
		}
		if dense(work, n) {
			e.SpillBytes += int64(synth.Frames(n)) * 8
		}
	}
	return e
}

// RoomError is a build that needs more space than the file system of its
// output folder has free.
type RoomError struct {
	Dir          string
	Needed       int64 // the set and the notes kept between the passes
	Spill        int64 // of Needed, the notes kept between the passes
	Free         int64
	FileSystemAt string // the folder whose file system was asked
}

// Error names the bytes needed and the bytes free.
func (e *RoomError) Error() string {
	spill := ""
	if e.Spill > 0 {
		spill = fmt.Sprintf(", %s of them for the dense notes kept between the passes", sizeText(e.Spill))
	}
	return fmt.Sprintf("not enough free space for %s: the render needs %d bytes (%s%s), and the file system of %s has %d bytes (%s) free",
		e.Dir, e.Needed, sizeText(e.Needed), spill, e.FileSystemAt, e.Free, sizeText(e.Free))
}

// freeSpaceAt is the free space of a folder's file system; tests replace
// it.
var freeSpaceAt = freeSpace

// checkRoom returns a *RoomError if the set e describes, with the notes
// kept between its passes, would not fit in the free space of the file
// system that will hold dir (that of its nearest existing folder), so a
// render fails at once rather than after minutes. Where the free space
// cannot be read, it lets the render try.
func checkRoom(dir string, e Estimate) error {
	at, err := filepath.Abs(dir)
	if err != nil {
		return nil
	}
	for {
		if _, err := os.Stat(at); err == nil || filepath.Dir(at) == at {
			break
		}
		at = filepath.Dir(at)
	}
	free, ok := freeSpaceAt(at)
	needed := e.Bytes + e.SpillBytes
	if !ok || needed <= free {
		return nil
	}
	return &RoomError{Dir: dir, Needed: needed, Spill: e.SpillBytes, Free: free, FileSystemAt: at}
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
