// Package analysis measures a recorded tone as the patch language
// describes one: the partials it holds (frequency, level, starting phase),
// the rule their frequencies follow (a harmonic series, a stiff string or
// free ratios), and each one's envelope (attack, decay, sustain and
// release, or breakpoints), so the tone can be written back as a patch.
// It is pure computation: samples in, measurements out.
//
// The analysis runs in two passes. The first cuts the recording into
// frames of about 85 ms, finds the spectral peaks of each and joins them
// into tracks; tracks too quiet or too short are dropped, and the
// loudest are kept. The second measures each partial through a window
// just long enough to keep its nearest neighbour out of its main lobe:
// its complex amplitude frame by frame, the frequency from the steady
// advance of its phase, and the envelope fitted to its level in decibels
// with the smoothing of that window taken into account, so times shorter
// than a frame still come out right.
package analysis

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"sinter/patch"
)

// Options tune an analysis; the zero value takes every default.
type Options struct {
	// F0 is the reference frequency in Hz that ratios are taken to;
	// Key, when F0 is 0, names it as a MIDI key (−1 or 0 with KeyGiven
	// false: none). With neither, the analysis finds the fundamental, or
	// takes the lowest strong partial for a sound without one.
	F0       float64
	Key      int
	KeyGiven bool
	// A4 tunes key names and frequencies (default 440 Hz).
	A4 float64
	// Partials is the most partials kept, the loudest (default 64).
	Partials int
	// FloorDB drops partials whose peak lies further below the loudest
	// partial's, in dB (default −80).
	FloorDB float64
}

// Defaults.
const (
	DefaultPartials = 64
	DefaultFloorDB  = -80
)

// Result is what an analysis measured.
type Result struct {
	SampleRate int
	Length     float64 // seconds
	// Onset is when the note starts, seconds from the recording's start;
	// every other time is from the onset.
	Onset float64
	// NoteOff is when the release starts, where Released.
	NoteOff  float64
	Released bool
	// Pitched says the partials form a series of a fundamental; else
	// Reference is the lowest strong partial.
	Pitched bool
	// Reference is the frequency ratios are taken to, Hz; Given says it
	// came from the options.
	Reference float64
	Given     bool
	Key       int     // the MIDI key nearest Reference
	Cents     float64 // Reference's offset from Key
	Law       Law
	Partials  []Partial // lowest first
	// ResidualDB is the energy outside the partials' spectral lines
	// (breath, bow, noise, partials dropped), against the recording's,
	// past the onset's first window.
	ResidualDB float64
	// TransientDB is the energy of the first moments of the note that the
	// partials leave unexplained (a knock, a pluck's noise), against the
	// whole of those moments; NaN where it was not measured.
	TransientDB float64
	// Dropped counts partials above the floor that the cap left out.
	Dropped int
	// Window is the first pass's window, samples.
	Window int
	// NoiseDB is the white noise the quietest bins point to, dB of full
	// scale RMS.
	NoiseDB float64
}

// Partial is one measured partial.
type Partial struct {
	Hz       float64
	ErrCents float64 // standard error of Hz, cents
	Ratio    float64 // Hz / Reference
	// Harmonic is its number n in the law, 0 for a partial outside it.
	Harmonic int
	Level    float64 // peak amplitude, full scale 1
	// Phase is its starting phase at the onset in degrees, as the patch
	// language counts it: 0 is a rising zero crossing of a sine.
	Phase    float64
	Envelope Envelope
	// Close says no window kept its nearest neighbour out of its main
	// lobe, so its level and envelope are less sure.
	Close bool
	// ReleaseUnheard says the partial had fallen into the noise by the
	// note-off, so no frame shows its release: Envelope.Release is the
	// median of the releases heard, and any other would sound the same.
	ReleaseUnheard bool
	// Times and Levels are its frames: centres in seconds from the
	// recording's start, levels in dB of full scale.
	Times, Levels []float64
	// Window is the length of its frames, samples.
	Window int
}

// LevelDB is the partial's peak level in dB of full scale.
func (p *Partial) LevelDB() float64 { return 20 * math.Log10(p.Level) }

// ErrNoPartial says a recording holds no partial that lasts.
var ErrNoPartial = errors.New("no stable partial was found")

// InputError says a recording cannot be analysed as it is.
type InputError struct{ Msg string }

// Error says what is wrong with the recording.
func (e *InputError) Error() string { return e.Msg }

func inputError(format string, args ...any) error {
	return &InputError{fmt.Sprintf(format, args...)}
}

// minFrames is how many frames of the first pass a track must last: a
// burst shows in the frames of a window's length either side of it (four
// frames), so eight keep a click or a puff of noise from passing for a
// partial; a partial must sound for about a window, 85 ms, to count.
const minFrames = 8

// Analyze measures the recording x, one channel sampled at rate Hz.
func Analyze(x []float64, rate int, opts Options) (*Result, error) {
	if opts.A4 == 0 {
		opts.A4 = 440
	}
	if opts.Partials == 0 {
		opts.Partials = DefaultPartials
	}
	if opts.FloorDB == 0 {
		opts.FloorDB = DefaultFloorDB
	}
	if err := checkInput(x, rate); err != nil {
		return nil, err
	}
	n0 := firstWindow(rate)
	res := &Result{SampleRate: rate, Length: float64(len(x)) / float64(rate), Window: n0}
	sv := newSurvey(x, rate, n0)
	res.NoiseDB = 10 * math.Log10(sv.noiseVar+1e-300)
	if sv.loudest == 0 {
		return nil, fmt.Errorf("%w: the recording holds no tone, only noise", ErrNoPartial)
	}
	floorAmp := sv.loudest * math.Pow(10, opts.FloorDB/20)
	cands := gather(sv.link(floorAmp, minFrames), sv.binHz)
	if len(cands) == 0 {
		return nil, fmt.Errorf("%w: nothing held a steady frequency for %.0f ms", ErrNoPartial, 1000*float64(minFrames*sv.st.hop)/float64(rate))
	}
	if len(cands) > opts.Partials {
		res.Dropped = len(cands) - opts.Partials
		cands = cands[:opts.Partials]
	}
	slices.SortFunc(cands, func(a, b candidate) int { return cmpFloat(a.hz, b.hz) })
	res.Onset = onset(x, rate, sv.noiseVar)
	parts := measure(x, rate, n0, cands, sv.noiseVar, int(math.Round(res.Onset*float64(rate))), len(x))
	res.ResidualDB = residual(sv, cands, int(math.Round(res.Onset*float64(rate))))

	floorDB := 20*math.Log10(floorAmp) - 6
	data := make([]*envData, len(parts))
	for i := range parts {
		p := &parts[i]
		// A frame of noise alone passes 13 dB over its mean power with
		// probability e^{−20} (its power is exponentially distributed), so
		// frames below that are the noise's as much as the partial's; above
		// it, the noise's power, which adds to the partial's on average, is
		// taken off.
		d := &envData{floor: max(floorDB, p.noiseDB+13), noiseDB: p.noiseDB, sm: newSmoother(float64(p.win-1) / 2 / float64(rate)), noteOff: math.Inf(1)}
		noisePow := math.Pow(10, p.noiseDB/10)
		res.Partials = append(res.Partials, Partial{Times: p.times})
		for m, t := range p.times {
			res.Partials[i].Levels = append(res.Partials[i].Levels, 20*math.Log10(p.amp[m]+1e-300))
			// A frame whose window holds the onset reads, besides its own
			// partial, the spray every other partial's sudden start
			// leaks across the spectrum, and one that runs past the end
			// the spray of the cut; the fit leaves both out.
			if t-res.Onset < d.sm.half || t+d.sm.half > res.Length {
				continue
			}
			d.times = append(d.times, t-res.Onset)
			d.db = append(d.db, 10*math.Log10(max(p.amp[m]*p.amp[m]-noisePow, 0)+1e-300))
			d.weight = append(d.weight, 1)
		}
		d.thin()
		data[i] = d
	}
	// Every partial fitted as if never released; then the note-off, if
	// the recording has one, and the fits again with it.
	fits := make([]fitted, len(parts))
	for i, d := range data {
		fits[i].env, fits[i].peakDB, fits[i].cost = d.fitADSR()
	}
	res.NoteOff, res.Released = findNoteOff(data, parts, fits)
	noteOff := math.Inf(1)
	if res.Released {
		noteOff = res.NoteOff
		for i, d := range data {
			d.noteOff = noteOff
			fits[i].env, fits[i].peakDB = d.withRelease(fits[i])
		}
	}
	// Attacks too short for the frames, and the onset to a fraction of a
	// sample, from the waveform; the fits again with those held.
	onsetSample := int(math.Round(res.Onset * float64(rate)))
	ops := make([]onsetPartial, len(parts))
	for i, p := range parts {
		omega := 2 * math.Pi * p.hz / float64(rate)
		ops[i] = onsetPartial{omega: omega, phase: p.phase + omega*float64(onsetSample), peakDB: fits[i].peakDB,
			env: fits[i].env, longest: 2 * data[i].sm.half}
		ops[i].short = fits[i].env.Attack < ops[i].longest
		// Past any attack the frames cannot see, how well does the
		// language's envelope fit?
		ops[i].unknown = data[i].worstFrom(&fits[i].env, fits[i].peakDB, 2*ops[i].longest) > 1
	}
	attacks, shift, transient := fitAttacks(x, rate, onsetSample, noteOff, ops)
	res.TransientDB = transient
	res.Onset = float64(onsetSample)/float64(rate) + shift
	for i, a := range attacks {
		if !ops[i].short {
			continue
		}
		d := data[i]
		d.attackFixed, d.attack = true, a
		e := fits[i].env
		e.Attack = a
		fits[i].env, fits[i].peakDB, fits[i].cost = d.fitFrom(e, fits[i].peakDB)
	}
	unheard := make([]bool, len(fits))
	if res.Released {
		unheard = unheardReleases(data, fits, noteOff)
	}
	for i := range parts {
		p := &parts[i]
		d := data[i]
		env, peakDB := fits[i].env, fits[i].peakDB
		env.FitDB = d.worst(&env, peakDB)
		if env.FitDB > 1 {
			if pts, pdb := d.fitPoints(env, peakDB); pts.FitDB < env.FitDB {
				env, peakDB = pts, pdb
			}
		}
		onsetPhase := p.phase + 2*math.Pi*p.hz*res.Onset
		out := &res.Partials[i]
		out.Hz, out.ErrCents = p.hz, 1200/math.Ln2*p.errHz/p.hz
		out.Level, out.Envelope, out.Close, out.Window = math.Pow(10, peakDB/20), env, p.close, p.win
		out.ReleaseUnheard = unheard[i]
		// cos(θ) = sin(θ + π/2): the language's phase is the sine's.
		out.Phase = math.Mod(math.Mod((onsetPhase+math.Pi/2)*180/math.Pi, 360)+360, 360)
	}
	res.reference(opts)
	return res, nil
}

// unheardReleases gives the partials that have fallen below the floor by
// the note-off, whose release no frame shows, the median of the releases
// the others show: the release is the player's, the same for every
// partial as far as the recording can tell. It returns which partials
// those are; none where no release is heard at all.
func unheardReleases(data []*envData, fits []fitted, noteOff float64) []bool {
	var heard []float64
	unheard := make([]bool, len(fits))
	for i, f := range fits {
		level := f.peakDB + 20*math.Log10(f.env.At(noteOff-1e-9, noteOff)+1e-300)
		unheard[i] = level < data[i].floor+6
		if !unheard[i] && f.env.Release > 0 {
			heard = append(heard, f.env.Release)
		}
	}
	if len(heard) == 0 {
		return make([]bool, len(fits))
	}
	slices.Sort(heard)
	for i := range fits {
		if unheard[i] {
			fits[i].env.Release = heard[len(heard)/2]
		}
	}
	return unheard
}

// firstWindow is the first pass's window: the power of two nearest
// 0.085 s, 4096 samples at 44.1 and 48 kHz, which tells apart partials
// about 50 Hz apart at 48 kHz.
func firstWindow(rate int) int {
	n := 256
	for float64(n)*1.41 < 0.085*float64(rate) {
		n *= 2
	}
	return n
}

func cmpFloat(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// checkInput refuses what cannot be measured: a recording too short to
// hold a partial, a silent one, and a clipped one, whose flattened peaks
// would read as partials that are not in the sound.
func checkInput(x []float64, rate int) error {
	if rate < patch.MinSampleRate || rate > patch.MaxSampleRate {
		return inputError("its sample rate of %d Hz is outside the %d to %d Hz the analysis reads", rate, patch.MinSampleRate, patch.MaxSampleRate)
	}
	if len(x) == 0 {
		return inputError("it holds no samples")
	}
	if secs := float64(len(x)) / float64(rate); secs < 0.1 {
		return inputError("it lasts %.0f ms; a tone needs at least 100 ms to be measured", 1000*secs)
	}
	peak := 0.0
	for _, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return inputError("it holds samples that are not numbers (NaN or infinity)")
		}
		peak = max(peak, math.Abs(v))
	}
	if peak == 0 {
		return fmt.Errorf("%w: the recording is silent", ErrNoPartial)
	}
	if runs, longest, at := clipping(x); runs > 0 {
		return inputError("it is clipped: %d runs of samples held at full scale, the longest %d samples at %.3f s; record it again at a lower level", runs, longest, float64(at)/float64(rate))
	}
	return nil
}

// clipping counts the runs of three or more equal samples at 0.999 of
// full scale or beyond: a sine sampled at 8 kHz or more changes between
// samples unless its period is hundreds of samples long, so flat tops at
// full scale are a recorder that ran out of range (common practice).
func clipping(x []float64) (runs, longest, at int) {
	for i := 0; i < len(x); {
		j := i + 1
		for j < len(x) && x[j] == x[i] {
			j++
		}
		if n := j - i; n >= 3 && math.Abs(x[i]) >= 0.999 {
			runs++
			if n > longest {
				longest, at = n, i
			}
		}
		i = j
	}
	return runs, longest, at
}

// onset is when the note starts, in seconds: the first millisecond whose
// RMS stands four times above the noise (and 60 dB under the peak at
// most), then the first sample in it that reaches half that level.
func onset(x []float64, rate int, noiseVar float64) float64 {
	l := max(1, rate/1000)
	peak := 0.0
	for _, v := range x {
		peak = max(peak, math.Abs(v))
	}
	thr := max(4*math.Sqrt(noiseVar), 1e-3*peak)
	sum := 0.0
	for i, v := range x {
		sum += v * v
		if i >= l {
			sum -= x[i-l] * x[i-l]
		}
		if sum/float64(l) >= thr*thr {
			for j := max(0, i-l+1); j <= i; j++ {
				if math.Abs(x[j]) >= thr/2 {
					return float64(j) / float64(rate)
				}
			}
		}
	}
	return 0
}

// residual is the energy outside the kept partials' main lobes against
// the whole, in dB, over the first pass's frames from the onset on, less
// those whose window holds the onset or the end: their windows cut the
// partials short, which sprays them over the whole spectrum.
func residual(sv *survey, cands []candidate, onset int) float64 {
	inside := func(m int) bool {
		return sv.st.start(m) >= onset && sv.st.start(m)+sv.st.win.n <= len(sv.st.x)
	}
	if len(sv.st.x)-onset < sv.st.win.n {
		// A recording shorter than a window after its onset: every frame.
		inside = func(int) bool { return true }
	}
	total, lines := 0.0, 0.0
	for m, f := range sv.frames {
		if inside(m) {
			total += f.total
		}
	}
	for _, c := range cands {
		for _, p := range c.points {
			if inside(p.frame) {
				lines += p.lobe
			}
		}
	}
	if total == 0 {
		return -300 // no energy at all, as far as −300 dB goes
	}
	// The zero-padded transform's bins overlap, but lobe and total count
	// them alike.
	return 10 * math.Log10(max(total-lines, total*1e-12)/total)
}

// reference decides the reference frequency, the key and cents, the law
// and each partial's ratio and harmonic number.
func (res *Result) reference(opts Options) {
	var ms []member
	loudest := 0.0
	for _, p := range res.Partials {
		loudest = max(loudest, p.Level)
	}
	var strong []member
	for i, p := range res.Partials {
		m := member{index: i, hz: p.Hz, energy: p.Level * p.Level, errCent: p.ErrCents}
		ms = append(ms, m)
		if p.Level >= loudest*0.01 {
			strong = append(strong, m)
		}
	}
	f0, pitched := findPitch(strong)
	res.Pitched = pitched
	switch {
	case opts.F0 > 0:
		res.Reference, res.Given = opts.F0, true
	case opts.KeyGiven:
		res.Reference, res.Given = patch.KeyFrequency(opts.Key, opts.A4), true
	case pitched:
		res.Reference = f0
	default:
		res.Reference = strong[0].hz
	}
	if pitched {
		harmonic, hm := fitLaw(slices.Clone(ms), f0, false)
		stiff, sm := fitLaw(slices.Clone(ms), f0, true)
		law, members := harmonic, hm
		// The simpler law wins unless the stiff string holds clearly more
		// of the sound, on at least three partials: its two parameters
		// pass through any two exactly, which proves nothing.
		if energyOf(sm) > 1.01*energyOf(hm) && stiff.B > 0 && len(sm) >= 3 {
			law, members = stiff, sm
		}
		if len(members) >= 2 || len(res.Partials) == 1 {
			res.Law = law
			for _, m := range members {
				res.Partials[m.index].Harmonic = m.n
			}
			// The law's fundamental, fitted to each member by its own
			// error, is finer than the search's, which weighs all alike.
			if !res.Given {
				res.Reference = law.F0
			}
		}
	}
	key := int(math.Round(69 + 12*math.Log2(res.Reference/opts.A4)))
	res.Key = min(127, max(0, key))
	res.Cents = cents(res.Reference, patch.KeyFrequency(res.Key, opts.A4))
	for i := range res.Partials {
		res.Partials[i].Ratio = res.Partials[i].Hz / res.Reference
	}
}

// Mix picks what is analysed of a recording's channels: the one channel
// of a mono recording whatever is asked; of a stereo one "left",
// "right", or "sum", their average (the middle of the stereo image, at the
// level a centred source has in each channel). Recordings of more than
// two channels are refused: which of them holds the tone is not the
// analysis's to guess.
func Mix(channels [][]float64, which string) ([]float64, string, error) {
	switch which {
	case "left", "right", "sum":
	default:
		return nil, "", fmt.Errorf("--channel %q: choose left, right or sum", which)
	}
	switch len(channels) {
	case 1:
		return channels[0], "mono", nil
	case 2:
	default:
		return nil, "", inputError("it has %d channels; analyze reads mono or stereo recordings (take the channel that holds the tone out first)", len(channels))
	}
	switch which {
	case "left":
		return channels[0], which, nil
	case "right":
		return channels[1], which, nil
	}
	sum := make([]float64, len(channels[0]))
	for i := range sum {
		sum[i] = (channels[0][i] + channels[1][i]) / 2
	}
	return sum, which, nil
}

// Spans are the stretches of time, in seconds from the onset, over which
// the partial's frames read floorDB or more.
func (p *Partial) Spans(onset, floorDB float64) [][2]float64 {
	var spans [][2]float64
	open := false
	for m, t := range p.Times {
		on := p.Levels[m] >= floorDB && t >= onset
		switch {
		case on && !open:
			spans = append(spans, [2]float64{t - onset, t - onset})
			open = true
		case on:
			spans[len(spans)-1][1] = t - onset
		default:
			open = false
		}
	}
	return spans
}
