package patch

import (
	"encoding/hex"
	"fmt"
	"math"
	"slices"
)

// Plan is everything needed to render a sample set: one Note per output
// file, each with its partials fully resolved. It holds no YAML and no
// expressions, so the renderer depends on nothing but these numbers.
type Plan struct {
	Name        string
	PatchFile   string
	PatchSHA256 string // hex
	SampleRate  int
	BitDepth    int
	Channels    int
	Normalize   Normalize
	OutputDir   string
	Notes       []Note
}

// Note is one output file: a root key played at one velocity.
type Note struct {
	File      string // file name inside the output folder
	Key       int    // MIDI root key
	Velocity  int    // MIDI velocity the layer was rendered at
	Variation int    // round-robin variation, 0 for the first
	KeyLow    int    // lowest MIDI key this file serves in a sampler
	KeyHigh   int    // highest MIDI key this file serves
	VelLow    int    // lowest velocity this file serves
	VelHigh   int    // highest velocity this file serves

	F0         float64 // fundamental in Hz
	SampleRate int
	Channels   int
	Frames     int // length of the file in sample frames
	NoteOff    int // frame at which the note is released

	Partials []Partial // the partials below the band limit
	Dropped  int       // partials removed for reaching the band limit
	Faded    int       // partials attenuated by the fade below the limit
}

// Partial is one sine: Amplitude · env(t) · sin(2π·Hz·t + Phase).
type Partial struct {
	Hz        float64
	Amplitude float64 // linear, the band-limit fade included; may be negative
	Phase     float64 // radians; 0 starts at a rising zero crossing
	Envelope  Envelope
	Group     int     // index in the patch's partials list
	Harmonic  float64 // n in expressions: harmonic number, 1 for a ratio partial
}

// Envelope is an ADSR envelope: times in seconds, Sustain a level in 0..1.
type Envelope struct {
	Attack, Decay, Sustain, Release float64
}

// ExpandOptions narrows a plan.
type ExpandOptions struct {
	// Keys, when not empty, renders only these root keys; each must be one
	// of the patch's keys.
	Keys []int
}

// KeyFrequency is the 12-tone equal-tempered frequency of MIDI key m with
// A4 (MIDI 69) at a4 Hz: f = a4 · 2^((m−69)/12).
func KeyFrequency(m int, a4 float64) float64 {
	return a4 * math.Exp2(float64(m-69)/12)
}

// Expand resolves the patch into a plan. Expressions are evaluated for
// every partial of every key and layer; a result that is not finite, or a
// time or level out of range, is an error naming the group and partial.
func (p *Patch) Expand(opts ExpandOptions) (*Plan, error) {
	keys := p.Keys
	if len(opts.Keys) > 0 {
		keys = nil
		for _, k := range opts.Keys {
			if !slices.Contains(p.Keys, k) {
				return nil, ErrorList{{File: p.File, Msg: fmt.Sprintf("key %s (%d) is not one of the patch's keys %s", NoteName(k), k, keyList(p.Keys))}}
			}
			if !slices.Contains(keys, k) {
				keys = append(keys, k)
			}
		}
		slices.Sort(keys)
	}
	plan := &Plan{
		Name: p.Name, PatchFile: p.File, PatchSHA256: hex.EncodeToString(p.SHA256[:]),
		SampleRate: p.SampleRate, BitDepth: p.BitDepth, Channels: p.Channels,
		Normalize: p.Normalize, OutputDir: p.OutputDir,
	}
	x := expander{patch: p, reported: map[string]bool{}}
	frames := max(1, int(math.Round((p.Hold+p.Tail)*float64(p.SampleRate))))
	noteOff := int(math.Round(p.Hold * float64(p.SampleRate)))
	for ki, key := range keys {
		keyLow, keyHigh := splitRange(keys, ki)
		for vi, vel := range p.Velocities {
			velLow, velHigh := splitLayers(p.Velocities, vi)
			n := Note{
				File: fmt.Sprintf("%s_%03d_%s_v%03d.wav", p.Name, key, FileNoteName(key), vel),
				Key:  key, Velocity: vel, KeyLow: keyLow, KeyHigh: keyHigh, VelLow: velLow, VelHigh: velHigh,
				F0: KeyFrequency(key, p.A4), SampleRate: p.SampleRate, Channels: p.Channels,
				Frames: frames, NoteOff: noteOff,
			}
			x.partials(&n)
			plan.Notes = append(plan.Notes, n)
		}
	}
	if len(x.errs) > 0 {
		return nil, x.errs
	}
	return plan, nil
}

func keyList(keys []int) string {
	if len(keys) > 8 {
		return fmt.Sprintf("(%d keys from %s to %s)", len(keys), NoteName(keys[0]), NoteName(keys[len(keys)-1]))
	}
	names := make([]string, len(keys))
	for i, k := range keys {
		names[i] = NoteName(k)
	}
	return fmt.Sprint(names)
}

// splitRange gives root i of the ascending roots the keys between it and
// its neighbours: the keys between two roots are shared half and half, the
// odd middle key going to the upper root, so it is reached by pitching down.
// The outermost roots cover only themselves on their outer side.
func splitRange(roots []int, i int) (low, high int) {
	low, high = roots[i], roots[i]
	if i > 0 {
		low = roots[i-1] + (roots[i]-roots[i-1]-1)/2 + 1
	}
	if i+1 < len(roots) {
		high = roots[i] + (roots[i+1]-roots[i]-1)/2
	}
	return low, high
}

// splitLayers gives velocity layer i the velocities above the layer below
// it up to its own; the top layer reaches 127.
func splitLayers(vels []int, i int) (low, high int) {
	low, high = 1, vels[i]
	if i > 0 {
		low = vels[i-1] + 1
	}
	if i == len(vels)-1 {
		high = 127
	}
	return low, high
}

// expander evaluates the groups for each note, reporting each failing
// setting once (at its first failing partial) rather than once per partial.
type expander struct {
	patch    *Patch
	errs     ErrorList
	reported map[string]bool
}

func (x *expander) partials(n *Note) {
	p := x.patch
	limit := p.BandLimit * float64(p.SampleRate)
	fadeStart := limit * (1 - p.BandFade)
	vars := make([]float64, varCount)
	vars[varF0], vars[varKey], vars[varVel] = n.F0, float64(n.Key), float64(n.Velocity)/127
	for gi := range p.Groups {
		g := &p.Groups[gi]
		count := 1
		if g.Series {
			count = g.Count
		}
		for i := range count {
			harmonic, ratio := 1.0, g.Ratio
			if g.Series {
				harmonic = float64(g.First + i*g.Step)
				ratio = harmonic
			}
			hz := ratio * n.F0
			if hz >= limit {
				n.Dropped++
				continue
			}
			vars[varN], vars[varRatio], vars[varHz] = harmonic, ratio, hz
			part := Partial{Hz: hz, Group: gi, Harmonic: harmonic}
			ok := x.eval(&part.Amplitude, g.Amplitude, vars, n, math.Inf(-1), math.Inf(1), "")
			phaseDeg := 0.0
			ok = x.eval(&phaseDeg, g.Phase, vars, n, math.Inf(-1), math.Inf(1), "") && ok
			part.Phase = phaseDeg * math.Pi / 180
			e := &g.Envelope
			ok = x.eval(&part.Envelope.Attack, e.Attack, vars, n, 0, MaxSeconds, " s") && ok
			ok = x.eval(&part.Envelope.Decay, e.Decay, vars, n, 0, MaxSeconds, " s") && ok
			ok = x.eval(&part.Envelope.Sustain, e.Sustain, vars, n, 0, 1, "") && ok
			ok = x.eval(&part.Envelope.Release, e.Release, vars, n, 0, MaxSeconds, " s") && ok
			if !ok || part.Amplitude == 0 {
				continue
			}
			if hz > fadeStart {
				// Raised-cosine taper from 1 at fadeStart to 0 at the limit, so a
				// partial fades out gradually as roots rise instead of vanishing.
				part.Amplitude *= 0.5 * (1 + math.Cos(math.Pi*(hz-fadeStart)/(limit-fadeStart)))
				n.Faded++
			}
			n.Partials = append(n.Partials, part)
		}
	}
}

// eval computes one setting for one partial and checks it is finite and
// within lo..hi.
func (x *expander) eval(dst *float64, v Value, vars []float64, n *Note, lo, hi float64, unit string) bool {
	r := v.eval(vars)
	if !math.IsNaN(r) && !math.IsInf(r, 0) && r >= lo && r <= hi {
		*dst = r
		return true
	}
	if !x.reported[v.path] {
		x.reported[v.path] = true
		what := fmt.Sprintf("%v is outside %g..%g%s", r, lo, hi, unit)
		if math.IsNaN(r) || math.IsInf(r, 0) {
			what = fmt.Sprintf("is %v, not a finite number,", r)
		}
		x.errs = append(x.errs, v.at(x.patch.File, "%q %s for harmonic n=%g (ratio %g, %.2f Hz) at key %s, velocity %d",
			v.String(), what, vars[varN], vars[varRatio], vars[varHz], NoteName(n.Key), n.Velocity))
	}
	return false
}
