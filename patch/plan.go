package patch

import (
	"encoding/hex"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sync"
	"sync/atomic"
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
	Dither      bool // TPDF dither for integer formats
	Format      Format
	OutputDir   string
	Includes    []Include // files the patch pulled partial groups from
	Notes       []Note
	// Tuning is the scale that tunes the keyboard; nil for 12-TET.
	Tuning *Tuning
}

// Note is one output file: a root key played at one velocity.
type Note struct {
	File       string // file name inside the output folder
	Key        int    // MIDI root key
	Velocity   int    // MIDI velocity the layer was rendered at
	Variation  int    // round-robin variation, 0 for the first
	Variations int    // round-robin variations of this key and layer
	Seed       uint64 // derived from the patch seed, key, velocity and variation
	KeyLow     int    // lowest MIDI key this file serves in a sampler
	KeyHigh    int    // highest MIDI key this file serves
	VelLow     int    // lowest velocity this file serves
	VelHigh    int    // highest velocity this file serves
	// VelocityFade is where the layer cross-fades with its neighbours;
	// nil without a crossfade (left out of the render key's encoding, so
	// notes without one key as they always have).
	VelocityFade *VelocityFade `json:",omitempty"`

	F0         float64 // fundamental in Hz
	SampleRate int
	Channels   int
	Frames     int // length of the file in sample frames; with TailUntil, the most
	NoteOff    int // frame at which the note is released
	// TailUntil, when above zero, ends the file once the signal, after
	// levelling, stays below this linear level.
	TailUntil float64
	Loop      LoopRequest

	Partials []Partial // the partials below the band limit
	Dropped  int       // partials removed for reaching the band limit
	Faded    int       // partials attenuated by the fade below the limit
	// Noise are the note's noise bands that start below the band limit;
	// NoiseDropped counts those that do not. Both are left out of the
	// render key's encoding when empty, so notes without noise key as
	// they always have.
	Noise        []NoiseBand `json:",omitempty"`
	NoiseDropped int         `json:",omitempty"`
}

// NoiseBand is one band of noise: Amplitude · env(t) · noise(t), where the
// noise's power spectral density runs from Low to High Hz, tilted by Slope
// dB per octave, with the power of a sine of amplitude Amplitude (an RMS
// of Amplitude/√2) before Gain shapes it.
type NoiseBand struct {
	Low, High float64 // Hz, Low below High; the band limit clips what lies above it
	Slope     float64 // dB per octave of the power spectral density
	Amplitude float64 // linear; may be negative (a sign flip)
	Envelope  Envelope
	Group     int     // index in the patch's partials list
	Pan       float64 // −1 left … 1 right, for stereo files
	// Width is how far apart the two channels' noise is: 1 independent, 0
	// the same, between them correlated by 1 − Width.
	Width float64
	Seed  uint64 // draws the band's phases
	// Limit and FadeFrom are the note's band limit and the start of the
	// fade below it, and Body the patch's spectral envelope, which Gain
	// applies as the partials get them.
	Limit, FadeFrom float64
	Body            []BodyPoint `json:",omitempty"`
}

// Gain is what the band limit and the body do to the band's amplitude at
// hz: the body's gain there, times the raised-cosine fade that partials
// get from 1 at FadeFrom to 0 at Limit, and 0 at and above the limit.
func (b *NoiseBand) Gain(hz float64) float64 {
	g := bodyGain(b.Body, hz)
	switch {
	case hz >= b.Limit:
		return 0
	case hz > b.FadeFrom:
		g *= 0.5 * (1 + math.Cos(math.Pi*(hz-b.FadeFrom)/(b.Limit-b.FadeFrom)))
	}
	return g
}

// MaxGain is the most Gain reaches anywhere: the body's loudest point, or
// 1 without a body, since the fade only lowers it.
func (b *NoiseBand) MaxGain() float64 {
	if len(b.Body) == 0 {
		return 1
	}
	most := math.Inf(-1)
	for _, p := range b.Body {
		most = max(most, p.DB)
	}
	return math.Pow(10, most/20)
}

// Faded reports whether the band reaches into the fade below the band
// limit; Clipped whether it reaches past the limit, which cuts it off.
func (b *NoiseBand) Faded() bool   { return b.High > b.FadeFrom }
func (b *NoiseBand) Clipped() bool { return b.High > b.Limit }

// Partial is one sine: Amplitude · env(t) · sin(2π·Hz·t + Phase).
type Partial struct {
	Hz        float64
	Amplitude float64 // linear, the band-limit fade included; may be negative
	Phase     float64 // radians; 0 starts at a rising zero crossing
	Envelope  Envelope
	Group     int     // index in the patch's partials list
	Harmonic  float64 // n in expressions: harmonic number, 1 for a ratio partial
	Pan       float64 // −1 left … 1 right, for stereo files
	// Motion moves the partial's frequency over time; nil holds it at Hz.
	Motion *Motion
}

// Motion is a partial's frequency motion: its deviation from Hz in cents
// at time t is the pitch envelope plus the vibrato plus the drift.
type Motion struct {
	Pitch   []PitchPoint // linear between points, held before the first and after the last
	Vibrato Vibrato
	Drift   Drift
	// MaxCents is the most the three together can raise the partial: what
	// the band limit is checked against.
	MaxCents float64
}

// PitchPoint is one breakpoint of a pitch envelope.
type PitchPoint struct {
	Time  float64 // seconds from note-on
	Cents float64
}

// Vibrato is a sine deviation of Depth cents at Rate Hz that starts after
// Delay seconds and grows to full depth over Fade seconds.
type Vibrato struct {
	Rate, Depth, Delay, Fade float64
}

// Drift is a slow random deviation within ±Depth cents whose value changes
// about Rate times a second: smooth value noise, drawn from Seed.
type Drift struct {
	Rate, Depth float64
	Seed        uint64
}

// LoopRequest is the sustain loop asked for one note, in frames; the
// renderer chooses the exact points.
type LoopRequest struct {
	Mode      LoopMode
	Start     int // first frame the loop may start at; the envelopes and motions have settled there
	MaxLength int // the longest loop wanted
	Crossfade int // crossfade length for inharmonic notes
	Exact     bool
}

// Envelope is an ADSR envelope: times in seconds, Sustain a level in 0..1.
type Envelope struct {
	Attack, Decay, Sustain, Release float64
	// Linear makes the decay and release (and the segments between
	// Points) straight lines instead of the exponential curve.
	Linear bool
	// Points, when set, replace attack, decay and sustain: the level runs
	// through them (their times multiplied by Stretch), holds the last one
	// until note-off and then releases. Sustain is then the last level.
	Points  []EnvelopePoint
	Stretch float64
}

// EnvelopePoint is one breakpoint of an amplitude envelope.
type EnvelopePoint struct {
	Time  float64 // seconds from note-on, before Stretch
	Level float64 // 0..1
}

// Settled is when the envelope reaches the level it holds until note-off.
func (e Envelope) Settled() float64 {
	if len(e.Points) > 0 {
		return e.Points[len(e.Points)-1].Time * e.Stretch
	}
	return e.Attack + e.Decay
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
		Normalize: p.Normalize, Dither: p.Dither, OutputDir: p.OutputDir, Includes: p.Includes,
		Tuning: p.Tuning, Format: p.Format,
	}
	rate := float64(p.SampleRate)
	frames := max(1, int(math.Round((p.Hold+p.Tail)*rate)))
	noteOff := int(math.Round(p.Hold * rate))
	for ki, key := range keys {
		keyLow, keyHigh := splitRange(keys, ki)
		for vi, vel := range p.Velocities {
			velLow, velHigh, fade := layerRange(p.Velocities, vi, p.LayerCrossfade)
			for variation := range p.RoundRobin {
				plan.Notes = append(plan.Notes, Note{
					File: fileName(p.Name, key, vel, variation, p.RoundRobin) + p.Format.Ext(),
					Key:  key, Velocity: vel, Variation: variation, Variations: p.RoundRobin,
					Seed:   deriveSeed(p.Seed, uint64(key), uint64(vel), uint64(variation)),
					KeyLow: keyLow, KeyHigh: keyHigh, VelLow: velLow, VelHigh: velHigh, VelocityFade: fade,
					F0: p.keyHz(key), SampleRate: p.SampleRate, Channels: p.Channels,
					Frames: frames, NoteOff: noteOff,
				})
			}
		}
	}
	// Each note's partials are its own work, so the notes are shared out
	// among the processor's cores; each keeps its own errors, and they are
	// listed in note order, each place once, as one expander would.
	errs := make([]ErrorList, len(plan.Notes))
	next := atomic.Int64{}
	var wg sync.WaitGroup
	for range min(runtime.GOMAXPROCS(0), len(plan.Notes)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := int(next.Add(1) - 1); i < len(plan.Notes); i = int(next.Add(1) - 1) {
				x := expander{patch: p, reported: map[string]bool{}}
				x.note(&plan.Notes[i], frames, noteOff, rate)
				errs[i] = x.errs
			}
		}()
	}
	wg.Wait()
	var list ErrorList
	reported := map[string]bool{}
	for _, noteErrs := range errs {
		for _, e := range noteErrs {
			if !reported[e.Path] {
				reported[e.Path] = true
				list = append(list, e)
			}
		}
	}
	if len(list) > 0 {
		return nil, list
	}
	return plan, nil
}

// note resolves one note's partials, tail and loop.
func (x *expander) note(n *Note, frames, noteOff int, rate float64) {
	p := x.patch
	x.partials(n)
	if p.RoundRobin > 1 {
		x.randomizePhases(n)
	}
	if p.TailUntil > 0 {
		// The release curves land exactly on zero, so nothing is
		// heard after the longest one ends.
		n.TailUntil = p.TailUntil
		n.Frames = min(frames, noteOff+int(math.Ceil(n.LongestRelease()*rate))+1)
	}
	x.loop(n)
}

// fileName builds NAME_KKK_NOTE_vVVV, with _rrK (1-based) when the set
// has round-robin variations; the format's extension follows.
func fileName(name string, key, vel, variation, variations int) string {
	base := fmt.Sprintf("%s_%03d_%s_v%03d", name, key, FileNoteName(key), vel)
	if variations > 1 {
		base += fmt.Sprintf("_rr%d", variation+1)
	}
	return base
}

// LongestRelease is the longest release time among the note's partials and
// noise bands, in seconds.
func (n *Note) LongestRelease() float64 {
	longest := 0.0
	for _, p := range n.Partials {
		longest = max(longest, p.Envelope.Release)
	}
	for _, b := range n.Noise {
		longest = max(longest, b.Envelope.Release)
	}
	return longest
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

// expander evaluates the groups for each note, reporting each failing
// setting once (at its first failing partial) rather than once per partial.
type expander struct {
	patch    *Patch
	errs     ErrorList
	reported map[string]bool
}

// seed labels for patch-wide random draws, so each kind of draw has its
// own stream.
const (
	seedCluster = iota + 1
	seedPan
	seedPhase
	seedSchroederShift
	seedDrift
	seedNoise
)

// source is one partial of a group before shaping: its number n in the
// group, its ratio to the fundamental and the weight its kind gives it.
type source struct {
	n, ratio, weight float64
	index            int // position in the group, from 0
}

// sources lists the partials group g makes, in order.
func (x *expander) sources(g *Group, gi int) []source {
	var out []source
	switch g.Kind {
	case KindSeries:
		for i := range g.Count {
			h := float64(g.First + i*g.Step)
			out = append(out, source{n: h, ratio: h, weight: 1, index: i})
		}
	case KindRatio:
		out = append(out, source{n: 1, ratio: g.Ratio, weight: 1})
	case KindRatios:
		for i, r := range g.Ratios {
			out = append(out, source{n: float64(i + 1), ratio: r, weight: 1, index: i})
		}
	case KindModes:
		for i, r := range modeTables[g.Table][:g.Count] {
			out = append(out, source{n: float64(i + 1), ratio: r, weight: 1, index: i})
		}
	case KindSpectrum:
		for i := range g.Count {
			out = append(out, spectrumPartial(g.Spectrum, i))
		}
	case KindCluster:
		c := g.Cluster
		for i := range c.Count {
			u := unitFloat(deriveSeed(x.patch.Seed, seedCluster, uint64(gi), uint64(i)))
			r := c.From * math.Pow(c.To/c.From, u)
			out = append(out, source{n: float64(i + 1), ratio: r, weight: 1, index: i})
		}
	}
	return out
}

// spectrumPartial is partial i (from 0) of a waveform's Fourier series,
// weighted so the fundamental is 1: sawtooth Σ (−1)^(n+1) sin(nx)/n over
// every n (ProofWiki, "Fourier Series/Sawtooth Wave"), square Σ sin(nx)/n
// over odd n (MathWorld, "Fourier Series--Square Wave"), triangle
// Σ (−1)^((n−1)/2) sin(nx)/n² over odd n (MathWorld, "Fourier
// Series--Triangle Wave").
func spectrumPartial(name string, i int) source {
	switch name {
	case "square":
		h := float64(2*i + 1)
		return source{n: h, ratio: h, weight: 1 / h, index: i}
	case "triangle":
		h := float64(2*i + 1)
		sign := 1.0
		if i%2 == 1 {
			sign = -1
		}
		return source{n: h, ratio: h, weight: sign / (h * h), index: i}
	}
	h := float64(i + 1)
	sign := 1.0
	if i%2 == 1 {
		sign = -1
	}
	return source{n: h, ratio: h, weight: sign / h, index: i}
}

// unitFloat maps a 64-bit seed to [0, 1).
func unitFloat(seed uint64) float64 { return float64(seed>>11) / (1 << 53) }

func (x *expander) partials(n *Note) {
	p := x.patch
	limit := p.BandLimit * float64(p.SampleRate)
	fadeStart := limit * (1 - p.BandFade)
	vars := make([]float64, varCount)
	vars[varF0], vars[varKey], vars[varVel] = n.F0, float64(n.Key), float64(n.Velocity)/127
	for gi := range p.Groups {
		g := &p.Groups[gi]
		if g.Kind == KindNoise {
			x.noiseBand(n, g, gi, vars, limit, fadeStart)
			continue
		}
		srcs := x.sources(g, gi)
		logLow, logHigh := ratioSpan(srcs)
		first := len(n.Partials)
		for _, src := range srcs {
			ratio := src.ratio
			vars[varN], vars[varRatio], vars[varHz] = src.n, ratio, ratio*n.F0
			if g.Kind == KindSeries || g.Kind == KindSpectrum {
				b := 0.0
				if !x.eval(&b, g.Stiffness, vars, n, stiffnessRule) {
					continue
				}
				// Fletcher (1964): a stiff string's partial n sits at
				// n·f0·sqrt(1 + B·n²).
				ratio *= math.Sqrt(1 + b*src.n*src.n)
				vars[varRatio], vars[varHz] = ratio, ratio*n.F0
			}
			var detune, tilt, pan float64
			ok := x.eval(&detune, g.Detune, vars, n, detuneRule)
			ok = x.eval(&tilt, g.Tilt, vars, n, tiltRule) && ok
			if g.PanRule == PanValue {
				ok = x.eval(&pan, g.Pan, vars, n, panRule) && ok
			} else {
				pan = x.panByRule(g, gi, src, logLow, logHigh)
			}
			if !ok {
				continue
			}
			voices := g.Unison.Voices
			for v := range voices {
				cents := detune
				if voices > 1 {
					spread := float64(v)/float64(voices-1) - 0.5
					cents += g.Unison.Spread * spread
				}
				hz := ratio * n.F0 * math.Exp2(cents/1200)
				vars[varHz] = hz
				motion, ok := x.motion(g, gi, src, v, vars, n)
				if !ok {
					continue
				}
				// The band limit holds for the highest frequency the partial
				// reaches as it moves, so no motion can alias.
				top := hz
				if motion != nil {
					top *= math.Exp2(motion.MaxCents / 1200)
				}
				if top >= limit {
					n.Dropped++
					continue
				}
				part := Partial{Hz: hz, Group: gi, Harmonic: src.n, Pan: pan, Motion: motion}
				if voices > 1 {
					// Copies fan out across the field around the partial.
					part.Pan = max(-1, min(1, pan+g.Unison.Width*(2*float64(v)/float64(voices-1)-1)))
				}
				if !x.shape(&part, g, src, vars, n) {
					continue
				}
				part.Amplitude *= src.weight * math.Pow(10, tilt*math.Log2(ratio)/20) * bodyGain(p.Body, hz) / math.Sqrt(float64(voices))
				if part.Amplitude == 0 {
					continue
				}
				if g.PhaseRule == PhaseRandom {
					part.Phase = 2 * math.Pi * unitFloat(deriveSeed(n.Seed, seedPhase, uint64(gi), uint64(src.index), uint64(v)))
				}
				if top > fadeStart {
					// Raised-cosine taper from 1 at fadeStart to 0 at the limit, so a
					// partial fades out gradually as roots rise instead of vanishing.
					part.Amplitude *= 0.5 * (1 + math.Cos(math.Pi*(top-fadeStart)/(limit-fadeStart)))
					n.Faded++
				}
				n.Partials = append(n.Partials, part)
			}
		}
		if g.PhaseRule == PhaseSchroeder {
			shift := 0.0
			if n.Variations > 1 {
				shift = unitFloat(deriveSeed(n.Seed, seedSchroederShift, uint64(gi)))
			}
			schroederPhases(n.Partials[first:], n.F0, shift)
		}
	}
}

// noiseBand resolves a noise group for one note. Its expressions see the
// band's centre, the geometric mean of its edges, as ratio and hz, and n
// as 1. A band that starts at or above the band limit is dropped.
func (x *expander) noiseBand(n *Note, g *Group, gi int, vars []float64, limit, fadeStart float64) {
	spec := g.Noise
	low, high := spec.Low.At(n.F0), spec.High.At(n.F0)
	if low >= high {
		path := fmt.Sprintf("partials[%d].noise", gi)
		if !x.reported[path] {
			x.reported[path] = true
			x.errs = append(x.errs, &Error{File: spec.File, Line: spec.Line, Column: spec.Column, Path: path,
				Msg: fmt.Sprintf("at key %s (%.2f Hz) the band runs from %s (%.2f Hz) down to %s (%.2f Hz); give low below high at every key",
					NoteName(n.Key), n.F0, spec.Low, low, spec.High, high)})
		}
		return
	}
	if low >= limit {
		n.NoiseDropped++
		return
	}
	centre := math.Sqrt(low * high)
	vars[varN], vars[varRatio], vars[varHz] = 1, centre/n.F0, centre
	var shaped Partial
	ok := x.shape(&shaped, g, source{n: 1, ratio: centre / n.F0, weight: 1}, vars, n)
	pan := 0.0
	if g.PanRule == PanValue {
		ok = x.eval(&pan, g.Pan, vars, n, panRule) && ok
	} else {
		pan = x.panByRule(g, gi, source{n: 1, ratio: centre / n.F0}, 0, 0)
	}
	if !ok || shaped.Amplitude == 0 {
		return
	}
	n.Noise = append(n.Noise, NoiseBand{Low: low, High: high, Slope: spec.Slope, Amplitude: shaped.Amplitude,
		Envelope: shaped.Envelope, Group: gi, Pan: pan, Width: spec.Width,
		Seed:  deriveSeed(n.Seed, seedNoise, uint64(gi)),
		Limit: limit, FadeFrom: fadeStart, Body: x.patch.Body})
}

// motion evaluates a group's motion for one partial; nil when it has none.
func (x *expander) motion(g *Group, gi int, src source, voice int, vars []float64, n *Note) (*Motion, bool) {
	if len(g.Pitch) == 0 && g.Vibrato == nil && g.Drift == nil {
		return nil, true
	}
	m := &Motion{Pitch: g.Pitch}
	ok := true
	if v := g.Vibrato; v != nil {
		ok = x.eval(&m.Vibrato.Rate, v.Rate, vars, n, vibRateRule) && ok
		ok = x.eval(&m.Vibrato.Depth, v.Depth, vars, n, vibDepthRule) && ok
		ok = x.eval(&m.Vibrato.Delay, v.Delay, vars, n, vibDelayRule) && ok
		ok = x.eval(&m.Vibrato.Fade, v.Fade, vars, n, vibFadeRule) && ok
	}
	if d := g.Drift; d != nil {
		ok = x.eval(&m.Drift.Rate, d.Rate, vars, n, driftRateRule) && ok
		ok = x.eval(&m.Drift.Depth, d.Depth, vars, n, driftDepthRule) && ok
		m.Drift.Seed = deriveSeed(n.Seed, seedDrift, uint64(gi), uint64(src.index), uint64(voice))
	}
	highest := 0.0
	for _, p := range m.Pitch {
		highest = max(highest, p.Cents)
	}
	m.MaxCents = highest + m.Vibrato.Depth + m.Drift.Depth
	return m, ok
}

// shape evaluates a partial's amplitude, phase and envelope.
func (x *expander) shape(part *Partial, g *Group, src source, vars []float64, n *Note) bool {
	ok := x.eval(&part.Amplitude, g.Amplitude, vars, n, anyNumber)
	if len(g.Amplitudes) > 0 {
		a := 0.0
		ok = x.eval(&a, g.Amplitudes[src.index], vars, n, anyNumber) && ok
		part.Amplitude *= a
	}
	if g.PhaseRule == PhaseValue {
		phaseDeg := 0.0
		ok = x.eval(&phaseDeg, g.Phase, vars, n, phaseRule) && ok
		part.Phase = phaseDeg * math.Pi / 180
	}
	e := &g.Envelope
	if len(e.Points) > 0 {
		last := e.Points[len(e.Points)-1]
		// The last point, stretched, may come no later than MaxSeconds.
		stretch := &Rule{Min: stretchRule.Min, Max: min(stretchRule.Max, MaxSeconds/max(last.Time, 1e-9))}
		ok = x.eval(&part.Envelope.Stretch, e.Stretch, vars, n, stretch) && ok
		part.Envelope.Points, part.Envelope.Sustain = e.Points, last.Level
	} else {
		ok = x.eval(&part.Envelope.Attack, e.Attack, vars, n, timeRule) && ok
		ok = x.eval(&part.Envelope.Decay, e.Decay, vars, n, timeRule) && ok
		ok = x.eval(&part.Envelope.Sustain, e.Sustain, vars, n, sustainRule) && ok
	}
	ok = x.eval(&part.Envelope.Release, e.Release, vars, n, timeRule) && ok
	part.Envelope.Linear = e.Linear
	return ok
}

// ratioSpan is the range of log ratios of a group's partials, for the
// ratio pan rule.
func ratioSpan(srcs []source) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, s := range srcs {
		lo, hi = min(lo, math.Log(s.ratio)), max(hi, math.Log(s.ratio))
	}
	return lo, hi
}

// panByRule places a partial by its group's pan rule. Positions depend on
// the partial's place in its group and the patch seed only, so a partial
// stays where it is from key to key.
func (x *expander) panByRule(g *Group, gi int, src source, logLow, logHigh float64) float64 {
	w := g.PanWidth
	switch g.PanRule {
	case PanAlternate:
		if src.index%2 == 0 {
			return -w
		}
		return w
	case PanRandom:
		return w * (2*unitFloat(deriveSeed(x.patch.Seed, seedPan, uint64(gi), uint64(src.index))) - 1)
	case PanRatio:
		if logHigh <= logLow {
			return 0
		}
		return w * (2*(math.Log(src.ratio)-logLow)/(logHigh-logLow) - 1)
	}
	return 0
}

// schroederPhases sets the phases of parts by Schroeder's rule for a low
// peak factor (M. R. Schroeder, "Synthesis of low-peak-factor signals and
// binary sequences with low autocorrelation", IEEE Trans. Information
// Theory 16, 1970): φ_k = −2π Σ_{l<k} (k − l)·p_l, with p_l the share of
// partial l in the total power; for N equal partials this is
// φ_k = −π·k(k − 1)/N. shift, a fraction of the fundamental's period,
// moves the whole waveform in time, which keeps its peak factor: round
// robins use it to differ.
func schroederPhases(parts []Partial, f0, shift float64) {
	power := 0.0
	for _, p := range parts {
		power += p.Amplitude * p.Amplitude
	}
	if power == 0 {
		return
	}
	// Σ_{l<k} (k−l)·p_l grows by Σ_{l<k} p_l from k to k+1.
	sum, below := 0.0, 0.0
	for k := range parts {
		parts[k].Phase = math.Mod(-2*math.Pi*sum+2*math.Pi*parts[k].Hz/f0*shift, 2*math.Pi)
		below += parts[k].Amplitude * parts[k].Amplitude / power
		sum += below
	}
}

// anyNumber is the rule of a setting that may be any finite number: an
// amplitude.
var anyNumber = &Rule{Min: math.Inf(-1), Max: math.Inf(1)}

// eval computes one setting for one partial and checks it is finite and
// within rule's range.
func (x *expander) eval(dst *float64, v Value, vars []float64, n *Note, rule *Rule) bool {
	r := v.eval(vars)
	if !math.IsNaN(r) && !math.IsInf(r, 0) && r >= rule.Min && r <= rule.Max {
		*dst = r
		return true
	}
	if !x.reported[v.path] {
		x.reported[v.path] = true
		what := fmt.Sprintf("%v is outside %g..%g%s", r, rule.Min, rule.Max, rule.Unit)
		if math.IsNaN(r) || math.IsInf(r, 0) {
			what = fmt.Sprintf("is %v, not a finite number,", r)
		}
		x.errs = append(x.errs, v.at(x.patch.File, "%q %s for harmonic n=%g (ratio %g, %.2f Hz) at key %s, velocity %d",
			v.String(), what, vars[varN], vars[varRatio], vars[varHz], NoteName(n.Key), n.Velocity))
	}
	return false
}

// loop turns the patch's loop request into frames for one note: the loop
// may start once every envelope has reached its sustain level (and, for a
// crossfade, one crossfade later, since the fade reads the signal before
// the start) and must end before note-off.
func (x *expander) loop(n *Note) {
	spec := x.patch.Loop
	if spec.Mode == LoopOff {
		return
	}
	rate := float64(n.SampleRate)
	settled := 0.0
	for _, p := range n.Partials {
		settled = max(settled, p.Envelope.Settled())
		if m := p.Motion; m != nil {
			settled = max(settled, m.Settled())
		}
	}
	for _, b := range n.Noise {
		settled = max(settled, b.Envelope.Settled())
	}
	req := LoopRequest{Mode: spec.Mode, Crossfade: max(1, int(math.Round(spec.Crossfade*rate))), Exact: spec.Exact}
	settledFrame := int(math.Ceil(settled * rate))
	req.Start = settledFrame + req.Crossfade
	if spec.Start >= 0 {
		req.Start = int(math.Round(spec.Start * rate))
		if req.Start < settledFrame+req.Crossfade {
			x.loopError(fmt.Sprintf("the loop starts at %.3f s, but at key %s the envelopes settle only at %.3f s and the crossfade needs %.3f s before the start",
				spec.Start, NoteName(n.Key), settled, spec.Crossfade))
			return
		}
	}
	req.MaxLength = min(int(math.Round(spec.Length*rate)), n.NoteOff-req.Start)
	if req.MaxLength < max(int(math.Round(loopLengthRule.Min*rate)), 2*req.Crossfade) {
		x.loopError(fmt.Sprintf("no room for a loop at key %s: it can start at %.3f s (envelopes settled plus the crossfade) but the note is released at %.3f s; raise hold or shorten attack, decay or crossfade",
			NoteName(n.Key), float64(req.Start)/rate, float64(n.NoteOff)/rate))
		return
	}
	n.Loop = req
}

func (x *expander) loopError(msg string) {
	if x.reported["loop"] {
		return
	}
	x.reported["loop"] = true
	spec := x.patch.Loop
	x.errs = append(x.errs, &Error{File: x.patch.File, Line: spec.Line, Column: spec.Column, Path: "loop", Msg: msg})
}

// Settled is when the pitch envelope has reached its last point and the
// vibrato its full depth; drift never settles.
func (m *Motion) Settled() float64 {
	t := 0.0
	if len(m.Pitch) > 0 {
		t = m.Pitch[len(m.Pitch)-1].Time
	}
	if m.Vibrato.Depth != 0 {
		t = max(t, m.Vibrato.Delay+m.Vibrato.Fade)
	}
	return t
}

// Cents returns the motion's deviation in cents at t seconds after
// note-on: the pitch envelope, plus the vibrato once its delay has passed
// (its depth growing linearly over the fade), plus the drift, value noise
// whose knots, one every 1/Rate seconds, are uniform in ±1 and joined by
// smoothstep curves, so it never leaves ±Depth.
func (m *Motion) Cents(t float64) float64 {
	c := 0.0
	if pts := m.Pitch; len(pts) > 0 {
		c = heldLinear(len(pts), t, func(i int) (float64, float64) { return pts[i].Time, pts[i].Cents })
	}
	if v := m.Vibrato; v.Depth != 0 && t > v.Delay {
		depth := v.Depth
		if v.Fade > 0 {
			depth *= min(1, (t-v.Delay)/v.Fade)
		}
		c += depth * math.Sin(2*math.Pi*v.Rate*(t-v.Delay))
	}
	if d := m.Drift; d.Depth != 0 && d.Rate > 0 {
		x := t * d.Rate
		k := math.Floor(x)
		f := x - k
		knot := func(k float64) float64 { return 2*unitFloat(deriveSeed(d.Seed, uint64(int64(k)))) - 1 }
		a, b := knot(k), knot(k+1)
		c += d.Depth * (a + (b-a)*f*f*(3-2*f))
	}
	return c
}
