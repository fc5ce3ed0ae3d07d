// Package sampleset renders a whole patch.Plan into a folder: the WAV files,
// the SFZ mapping and manifest.json. The folder is replaced as a unit: the
// set is rendered into a staging folder beside it and swapped in only when
// complete and on disk, so a failed, interrupted or killed render, or a
// power loss, leaves the previous set as it was. One build writes a folder
// at a time (a lock file beside it), and each removes what builds of the
// same folder that were killed left beside it.
package sampleset

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"sync"

	"sinter/patch"
	"sinter/synth"
	"sinter/synth/flac"
	"sinter/synth/kernel"
	"sinter/synth/loudness"
	"sinter/synth/manifest"
	"sinter/synth/mapping"
	"sinter/synth/wav"
)

// Options controls a build.
type Options struct {
	Jobs    int    // notes rendered at once; 0 or less means 1
	Version string // sinter version recorded in the manifest
	// Progress, if set, is called after each file is written, from one
	// goroutine at a time.
	Progress func(done, total int, file string)
	// Limits, if not zero, refuse a plan that would pass them before
	// anything is written.
	Limits Limits
	// Force renders every note, even those the set in the output folder
	// already holds.
	Force bool
	// Shard, if its Count is above 1, renders one slice of the set (see
	// Shard); Merge joins the slices.
	Shard Shard
	// NoWait fails with a *BusyError at once while another process writes
	// the output folder, instead of waiting until it is done.
	NoWait bool
	// Notice, if set, is told as it happens what the build does besides
	// rendering: that it waits for the output folder and who holds it,
	// and the leftovers of ended builds it removes (see Leftover).
	Notice func(msg string)
	// Reached, if set, is called as the build passes each Stage, from the
	// goroutine that reaches it.
	Reached func(Stage)
	// Extras, if set, writes more files into a whole set (not a shard)
	// once its files, mapping and manifest are in the staging folder,
	// before it replaces the output folder: the review page.
	Extras Extras
}

// Stage is a point a build passes, told to Options.Reached.
type Stage int

// The stages, in the order a build passes them; a build in one pass (no
// levelling, or a gain per file) skips Measured and Spilled.
const (
	Measured Stage = iota + 1 // the first pass measured a note
	Spilled                   // the first pass kept a note on disk for the second
	Wrote                     // a WAV file is synced and in place in the staging folder
	Swapping                  // the staging folder is synced and about to replace the output folder
	Swapped                   // the new set is in place and synced; the old one is about to go
)

var stageNames = [...]string{Measured: "measured", Spilled: "spilled", Wrote: "wrote", Swapping: "swapping", Swapped: "swapped"}

// String is the stage's name: measured, spilled, wrote, swapping or
// swapped.
func (s Stage) String() string {
	if s > 0 && int(s) < len(stageNames) {
		return stageNames[s]
	}
	return "stage " + strconv.Itoa(int(s))
}

// Result describes a finished build.
type Result struct {
	Dir      string
	Manifest *manifest.Manifest
	// Stats is the work of one render of every note rendered;
	// Again that of the notes rendered a second time (see Rerendered).
	Stats, Again synth.Stats
	// Rerendered counts the notes rendered a second time because their
	// levelling gain was only known after the whole set was measured and
	// reading them back would have cost more than rendering them again.
	Rerendered int
	// Rendered counts the notes rendered at all; Reused the files kept
	// from the set already in the output folder, unchanged.
	Rendered, Reused int
	Warnings         []string
	// Removed are the leftovers of ended builds of the same output folder
	// that this build removed before it began.
	Removed []Leftover
}

// silentDBFS stands for the level of a file with no signal, which has no
// finite value in decibels.
const silentDBFS = -200.0

// spillPartials is the average number of partials computed per sample at
// which a measured note is kept on disk for the second pass rather than
// rendered again. Writing and reading back 8 bytes a sample cost about
// 4 ns a sample on the machine the figures in the README come from, in
// which the AVX-512 kernel computes about 50 partials, the AVX2 one 20 and
// the plain one 5. Either way the second pass gets the same bits.
var spillPartials = func() int64 {
	return map[kernel.ISA]int64{kernel.Plain: 5, kernel.AVX2: 20, kernel.AVX512: 50}[kernel.Active()]
}

// dense reports whether a note whose render did the work stats is kept on
// disk between the passes. A note with noise bands always is: making a
// band's noise costs some 20 ns a sample of it (its transform, measured
// by synth's BenchmarkNoise), several times writing and reading it back.
func dense(stats synth.Stats, n *patch.Note) bool {
	return stats.NoiseSamples > 0 || stats.PartialSamples >= spillPartials()*int64(n.Frames)
}

// Build renders plan into plan.OutputDir.
//
// Levelling with one gain for the set (or per key) needs the level of
// every file before the first is written, so such a build runs in two
// passes: the first renders and measures each note and, when the note is
// dense enough, keeps its samples in a file in the staging folder; the
// second reads them back (or renders the note again), applies the gain
// and writes the WAV file. Without levelling, or with a gain per file,
// each note is rendered, measured and written in one pass. Either way
// memory holds one note per job however large the set is.
func Build(ctx context.Context, plan *patch.Plan, opts Options) (*Result, error) {
	dir := plan.OutputDir
	est := EstimatePlan(plan)
	if err := opts.Limits.Check(est); err != nil {
		return nil, err
	}
	if err := checkReplaceable(dir); err != nil {
		return nil, err
	}
	out, err := claim(ctx, dir, opts)
	if err != nil {
		return nil, err
	}
	defer out.release()
	own, measure := opts.Shard.slice(plan)
	if opts.Shard.Count > 1 {
		est = estimate(plan, own)
	}
	if err := checkRoom(dir, est); err != nil {
		return nil, err
	}
	notes := plan.Notes
	res := &Result{Dir: dir, Removed: out.removed}
	b := &build{plan: plan, opts: opts, out: out, own: own, measure: measure, workers: newWorkers(opts.Jobs),
		loops: make([]synth.Loop, len(notes)), looped: make([]bool, len(notes)),
		gains: make([]float64, len(notes)), stats: make([]synth.Stats, len(notes)),
		clipped: make([]bool, len(notes)), warnings: make([][]string, len(notes)),
		keys: make([]string, len(notes)), measured: make([]*manifest.Measured, len(notes)),
		rendered: make([]bool, len(notes)), reused: make([]bool, len(notes)),
	}
	if !opts.Force {
		b.previous = loadPrevious(dir)
	}
	// Loops and render keys on every worker: a render key hashes the whole
	// note, which for dense notes is worth sharing out.
	err = forEach(ctx, b.workers, len(notes), func(_ *worker, i int) error {
		b.loops[i], b.looped[i] = synth.PlanLoop(&notes[i])
		b.gains[i] = 1
		b.keys[i] = renderKey(plan, &notes[i], opts.Version)
		return nil
	})
	if err != nil {
		return nil, err
	}
	staging, err := out.newStaging()
	if err != nil {
		return nil, err
	}
	defer os.RemoveAll(staging) // after a successful swap it no longer exists
	b.staging = staging
	ctx, fail := context.WithCancelCause(ctx)
	defer fail(nil)
	b.commits = &commits{slots: make(chan struct{}, 2*len(b.workers)), fail: fail}
	b.manifest = newManifest(plan, opts.Version, make([]manifest.File, len(notes)))

	norm := plan.Normalize
	if norm.Measure == patch.MeasureOff || norm.Scope == patch.ScopeFile {
		truePeak, loudness := needs(norm)
		err = b.each(ctx, b.own, func(w *worker, i int) error {
			if lv, ok := b.previous.measured(b.keys[i], truePeak, loudness); ok || norm.Measure == patch.MeasureOff {
				// The gain follows from the note alone, so an unchanged
				// note keeps its file.
				if err := b.level(i, lv); err != nil {
					return err
				}
				if f, ok := b.previous.file(b.keys[i], b.gains[i]); ok {
					return b.keep(i, f)
				}
			}
			buf := b.render(w, i)
			if norm.Measure != patch.MeasureOff {
				lv := w.measure(buf, &notes[i], truePeak, loudness)
				b.measured[i] = measuredEntry(lv, truePeak, loudness)
				if err := b.level(i, lv); err != nil {
					return err
				}
			}
			return b.finish(w, i, buf)
		})
	} else {
		err = b.twoPasses(ctx, res)
	}
	// Every file is synced and in place, or has failed, before the set
	// is finished or the staging folder removed.
	if cerr := b.commits.wait(); err == nil {
		err = cerr
	}
	if err != nil {
		return nil, err
	}
	for i, s := range b.stats {
		res.Stats.Add(s)
		if b.rendered[i] {
			res.Rendered++
		}
		if b.reused[i] {
			res.Reused++
		}
		res.Warnings = append(res.Warnings, b.warnings[i]...)
		if b.clipped[i] {
			res.Warnings = append(res.Warnings, fmt.Sprintf("%s clips: its peak is above full scale (normalize is off)", notes[i].File))
		}
	}
	m := b.manifest
	if opts.Shard.Count > 1 {
		b.shardManifest()
	} else if err := writeMapping(filepath.Join(staging, m.Mapping), plan, b.loops, b.looped); err != nil {
		return nil, err
	}
	if err := writeAtomically(filepath.Join(staging, manifest.FileName), func(w io.Writer) error { return manifest.Write(w, m) }); err != nil {
		return nil, err
	}
	if opts.Extras != nil && opts.Shard.Count <= 1 {
		if err := opts.Extras(staging, writerIn(staging)); err != nil {
			return nil, err
		}
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if err := out.swap(staging); err != nil {
		return nil, err
	}
	res.Manifest = m
	return res, nil
}

// each calls fn for the notes idx on the build's workers, as forEach
// does.
func (b *build) each(ctx context.Context, idx []int, fn func(w *worker, i int) error) error {
	return forEach(ctx, b.workers, len(idx), func(w *worker, j int) error { return fn(w, idx[j]) })
}

// newManifest is the manifest of plan's set, rendered by sinter version,
// holding files.
func newManifest(plan *patch.Plan, version string, files []manifest.File) *manifest.Manifest {
	norm := plan.Normalize
	ceiling := &manifest.Ceiling{Level: norm.Ceiling, Unit: "dBFS"}
	if norm.CeilingTruePeak {
		ceiling.Unit = "dBTP"
	}
	if norm.Measure == patch.MeasureOff {
		// Without levelling nothing lowers a file, and full scale is
		// where an integer file clips.
		ceiling.Level = 0
		ceiling.Unit = "dBFS"
	}
	return &manifest.Manifest{
		Sinter:    version,
		Patch:     manifestPatch(plan),
		Levelling: norm.String(),
		Mapping:   plan.Name + ".sfz",
		Ceiling:   ceiling,
		Files:     files,
	}
}

// build is the state of one Build, indexed by note. Workers write only
// their own notes' entries, so no entry needs a lock.
type build struct {
	plan     *patch.Plan
	opts     Options
	out      *output
	commits  *commits
	staging  string
	loops    []synth.Loop
	looped   []bool
	gains    []float64
	stats    []synth.Stats
	clipped  []bool
	warnings [][]string
	manifest *manifest.Manifest
	// keys are the notes' render keys; measured the levels levelling read;
	// rendered and reused say what became of each note.
	keys     []string
	measured []*manifest.Measured
	rendered []bool
	reused   []bool
	previous *previous // the set already in the output folder, or nil
	workers  []*worker // one per job, for every pass
	// own are the notes this build writes, measure those it measures (all
	// of them unless it is a shard).
	own, measure []int

	progressMu sync.Mutex
	done       int
}

// twoPasses measures every note, sets the gains and then writes the notes.
func (b *build) twoPasses(ctx context.Context, res *Result) error {
	notes := b.plan.Notes
	measured := make([]levels, len(notes))
	kept := newSpills(b.staging, len(notes))
	defer kept.remove() // on failure; the staging folder goes as well
	truePeak, loudness := needs(b.plan.Normalize)
	err := b.each(ctx, b.measure, func(w *worker, i int) error {
		if lv, ok := b.previous.measured(b.keys[i], truePeak, loudness); ok {
			measured[i] = lv
			b.measured[i] = measuredEntry(lv, truePeak, loudness)
			return nil
		}
		buf := b.render(w, i)
		measured[i] = w.measure(buf, &notes[i], truePeak, loudness)
		b.measured[i] = measuredEntry(measured[i], truePeak, loudness)
		b.out.stage(Measured)
		if !slices.Contains(b.own, i) || !dense(b.stats[i], &notes[i]) {
			return nil
		}
		if err := kept.keep(w, i, buf); err != nil {
			return err
		}
		b.out.stage(Spilled)
		return nil
	})
	if err != nil {
		return err
	}
	gains, warnings, err := levelGains(b.plan.Normalize, notes, measured)
	if err != nil {
		return err
	}
	copy(b.gains, gains)
	res.Warnings = append(res.Warnings, warnings...)
	rerendered := make([]bool, len(notes))
	again := make([]synth.Stats, len(notes))
	err = b.each(ctx, b.own, func(w *worker, i int) error {
		if f, ok := b.previous.file(b.keys[i], b.gains[i]); ok {
			return b.keep(i, f)
		}
		if kept.kept(i) {
			buf, err := kept.read(w, i, synth.Frames(&notes[i]))
			if err != nil {
				return err
			}
			return b.finish(w, i, buf)
		}
		twice := b.rendered[i]
		stats := b.stats[i]
		buf := b.render(w, i)
		if twice {
			again[i], b.stats[i] = b.stats[i], stats
			rerendered[i] = true
		}
		return b.finish(w, i, buf)
	})
	if err != nil {
		return err
	}
	for i, r := range rerendered {
		if r {
			res.Rerendered++
			res.Again.Add(again[i])
		}
	}
	return kept.remove()
}

// render renders note i into the worker's buffer and records its work.
func (b *build) render(w *worker, i int) []float64 {
	buf := w.render(&b.plan.Notes[i], b.loops[i])
	b.stats[i] = w.stats
	b.rendered[i] = true
	return buf
}

// level sets note i's gain from its own levels (no levelling, or a gain
// per file).
func (b *build) level(i int, lv levels) error {
	if b.plan.Normalize.Measure == patch.MeasureOff {
		return nil
	}
	gains, warnings, err := levelGains(b.plan.Normalize, b.plan.Notes[i:i+1], []levels{lv})
	if err != nil {
		return err
	}
	b.gains[i], b.warnings[i] = gains[0], warnings
	return nil
}

// keep takes note i's file, unchanged, from the set already in the output
// folder.
func (b *build) keep(i int, f manifest.File) error {
	if err := b.previous.reuse(f, b.staging); err != nil {
		return err
	}
	b.reused[i] = true
	b.manifest.Files[i] = f
	b.progress(f.Path)
	return nil
}

// finish applies note i's gain to buf, trims its tail, measures it and
// writes its sample file and manifest entry.
func (b *build) finish(w *worker, i int, buf []float64) error {
	n := &b.plan.Notes[i]
	synth.Scale(buf, b.gains[i])
	frames := n.Frames
	if n.TailUntil > 0 {
		notBefore := n.NoteOff
		if b.looped[i] {
			notBefore = max(notBefore, b.loops[i].End+1)
		}
		frames = synth.TrimTail(buf, n.Channels, n.SampleRate, n.TailUntil, notBefore)
		buf = buf[:frames*n.Channels]
	}
	lv := w.measure(buf, n, true, true)
	b.clipped[i] = lv.peak > 1 && b.plan.BitDepth != 32
	var loop *synth.Loop
	if b.looped[i] {
		loop = &b.loops[i]
	}
	sum, commit, err := writeSamples(filepath.Join(b.staging, n.File), buf, n, b.plan, loop)
	if err != nil {
		return err
	}
	f := manifestEntry(n, b.plan.BitDepth, frames, b.gains[i], lv, buf, loop)
	f.CrestFactorDB = math.Round(synth.CrestFactor(buf)*1000) / 1000
	f.RenderKey, f.Measured = b.keys[i], b.measured[i]
	f.SHA256 = sum
	b.manifest.Files[i] = f
	b.commits.start(func() error {
		if err := commit(); err != nil {
			return err
		}
		b.out.stage(Wrote)
		b.progress(n.File)
		return nil
	})
	return nil
}

// progress reports one more file done.
func (b *build) progress(file string) {
	if b.opts.Progress != nil {
		b.progressMu.Lock()
		b.done++
		b.opts.Progress(b.done, len(b.plan.Notes), file)
		b.progressMu.Unlock()
	}
}

// roundDB rounds a level for the manifest, writing silence as silentDBFS
// since JSON has no infinity.
func roundDB(db float64) float64 {
	if math.IsInf(db, -1) || db < silentDBFS {
		return silentDBFS
	}
	return math.Round(db*1000) / 1000
}

func manifestEntry(n *patch.Note, bitDepth, frames int, gain float64, lv levels, buf []float64, loop *synth.Loop) manifest.File {
	f := manifest.File{
		Path: n.File, Key: n.Key, Note: patch.NoteName(n.Key), F0Hz: n.F0, Velocity: n.Velocity,
		KeyRange: [2]int{n.KeyLow, n.KeyHigh}, VelocityRange: [2]int{n.VelLow, n.VelHigh},
		SampleRate: n.SampleRate, BitDepth: bitDepth, Channels: n.Channels, Frames: frames,
		Variation: n.Variation + 1, Variations: n.Variations,
		PeakDBFS: roundDB(decibels(lv.peak)), TruePeakDBTP: roundDB(decibels(lv.truePeak)),
		LoudnessLUFS: roundDB(lv.loudness), GainDB: decibels(gain), Partials: len(n.Partials),
	}
	f.VelocityFadeIn, f.VelocityFadeOut = fades(n)
	if loop != nil {
		seam, inside := synth.SeamStep(buf, n.Channels, *loop)
		ratio := 0.0
		if inside > 0 {
			ratio = math.Round(seam/inside*1000) / 1000
		}
		f.Loop = &manifest.Loop{Start: loop.Start, End: loop.End, Crossfade: loop.Crossfade,
			PitchErrorCents: loop.Cents, RetuneCents: loop.Retune, SeamRatio: ratio}
	}
	return f
}

// worker owns the scratch memory of one goroutine.
type worker struct {
	renderer synth.Renderer
	buf      []float64
	stats    synth.Stats
	meter    *loudness.Meter
	spill    *spillWriter // the first pass's spill file, once it has one
}

func (w *worker) render(n *patch.Note, loop synth.Loop) []float64 {
	size := synth.Frames(n)
	if cap(w.buf) < size {
		w.buf = make([]float64, size)
	}
	w.buf = w.buf[:size]
	w.stats = w.renderer.RenderLooped(w.buf, n, loop)
	return w.buf
}

// measure takes the sample peak, and the true peak and loudness if asked.
func (w *worker) measure(buf []float64, n *patch.Note, truePeak, loud bool) levels {
	if w.meter == nil {
		w.meter = loudness.NewMeter(n.Channels, n.SampleRate)
	}
	lv := levels{peak: synth.Peak(buf), loudness: math.Inf(-1)}
	if truePeak {
		lv.truePeak = w.meter.TruePeak(buf)
	}
	if loud {
		lv.loudness = w.meter.Integrated(buf)
	}
	return lv
}

// newWorkers returns jobs workers, which keep their buffers, renderers
// and meters from one pass to the next: a second pass that made its own
// would allocate and fault in the same memory again.
func newWorkers(jobs int) []*worker {
	w := make([]*worker, max(1, jobs))
	for i := range w {
		w[i] = &worker{}
	}
	return w
}

// forEach calls fn for every index below count on one goroutine per
// worker (or fewer, if count is smaller), each with its own worker. It
// stops handing out indices after the first error or when ctx is
// cancelled, and returns that error. Results must be stored by index,
// which keeps the output independent of the number of workers.
func forEach(ctx context.Context, workers []*worker, count int, fn func(w *worker, i int) error) error {
	ctx, cancel := context.WithCancelCause(ctx)
	defer cancel(nil)
	next := make(chan int)
	var wg sync.WaitGroup
	for _, w := range workers[:min(len(workers), max(count, 1))] {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				if err := fn(w, i); err != nil {
					cancel(err)
				}
			}
		}()
	}
feed:
	for i := range count {
		if ctx.Err() != nil {
			break
		}
		select {
		case next <- i:
		case <-ctx.Done():
			break feed
		}
	}
	close(next)
	wg.Wait()
	return context.Cause(ctx)
}

// writeSamples encodes one note in the plan's format and returns the
// file's SHA-256 in hex, and commit, which syncs the file and gives it
// its name (see writeUnsynced).
func writeSamples(path string, buf []float64, n *patch.Note, plan *patch.Plan, loop *synth.Loop) (sum string, commit func() error, err error) {
	sampler := &wav.Sampler{UnityNote: uint8(n.Key)}
	if loop != nil {
		sampler.Loops = []wav.Loop{{Start: uint32(loop.Start), End: uint32(loop.End)}}
		if loop.Retune > 0 {
			// The smpl pitch fraction is unsigned, "up from the unity note";
			// a note retuned down keeps its unity note and the manifest
			// records the retune.
			sampler.PitchFraction = uint32(loop.Retune / 100 * (1 << 32))
		}
	}
	opts := wav.Options{
		SampleRate: n.SampleRate, BitDepth: plan.BitDepth, Channels: n.Channels,
		Dither: plan.Dither && plan.BitDepth != 32, DitherSeed: n.Seed,
		Sampler: sampler,
		Instrument: &wav.Instrument{
			UnshiftedNote: uint8(n.Key),
			LowNote:       uint8(n.KeyLow), HighNote: uint8(n.KeyHigh),
			LowVelocity: uint8(n.VelLow), HighVelocity: uint8(n.VelHigh),
		},
	}
	encode := func(w io.Writer) error { return wav.Encode(w, buf, opts) }
	if plan.Format == patch.FormatFLAC {
		encode = func(w io.Writer) error {
			return flac.Encode(w, buf, flac.Options{SampleRate: opts.SampleRate, BitDepth: opts.BitDepth, Channels: opts.Channels,
				Dither: opts.Dither, DitherSeed: opts.DitherSeed, Sampler: opts.Sampler, Instrument: opts.Instrument})
		}
	}
	h := sha256.New()
	commit, err = writeUnsynced(path, func(w io.Writer) error { return encode(io.MultiWriter(w, h)) })
	return hex.EncodeToString(h.Sum(nil)), commit, err
}

func writeMapping(path string, plan *patch.Plan, loops []synth.Loop, looped []bool) error {
	var regions []mapping.Region
	release := 0.0
	for i, n := range plan.Notes {
		regions = append(regions, noteRegions(&n, plan.Tuning, mapping.Region{Sample: n.File, Root: n.Key, LowKey: n.KeyLow, HighKey: n.KeyHigh, LowVel: n.VelLow, HighVel: n.VelHigh,
			Looped: looped[i], LoopStart: loops[i].Start, LoopEnd: loops[i].End,
			SeqPosition: n.Variation + 1, SeqLength: n.Variations})...)
		release = max(release, n.LongestRelease())
	}
	return writeAtomically(path, func(w io.Writer) error {
		return mapping.WriteSFZ(w, regions, mapping.Options{Title: plan.Name + ", rendered by sinter", Release: release})
	})
}
