package main

import (
	"flag"
	"fmt"
	"io"
	"math"
	"strings"
	"text/tabwriter"

	"sinter/patch"
	"sinter/synth"
	"sinter/synth/mapping"
	"sinter/synth/sampleset"
)

func check(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("check", flag.ContinueOnError)
	keyList := fs.String("keys", "", "plan only the keys of `LIST`")
	asJSON := fs.Bool("json", false, "print the plan, or the errors, as JSON on stdout")
	path, code, ok := parseArgs(fs, args, stdout, stderr)
	if !ok {
		return code
	}
	out := reporter{json: *asJSON, stdout: stdout, stderr: stderr, command: "check"}
	plan, p, err := loadPlan(path, *keyList, "")
	if err != nil {
		return out.fail(exitUsage, err)
	}
	summary := summarize(plan, p)
	if out.json {
		return out.emit(summary)
	}
	printPlan(stdout, &summary)
	return exitOK
}

// planSummary is what check reports: printed as text, or as JSON with
// --json.
type planSummary struct {
	Patch        string  `json:"patch"`
	Name         string  `json:"name"`
	Files        int     `json:"files"`
	Keys         int     `json:"keys"`
	Layers       int     `json:"velocity_layers"`
	RoundRobins  int     `json:"round_robins"`
	SampleRate   int     `json:"sample_rate"`
	BitDepth     int     `json:"bit_depth"`
	Channels     int     `json:"channels"`
	FileFormat   string  `json:"file_format"`   // wav or flac
	AudioSeconds float64 `json:"audio_seconds"` // an upper bound when tails end by level
	TailUntilDB  float64 `json:"tail_until_dbfs,omitempty"`
	FileSeconds  float64 `json:"file_seconds"`
	Bytes        int64   `json:"bytes"`
	// SpillBytes are the dense notes a set levelled as a whole keeps
	// beside it between its passes: render needs room for them and the
	// set, and refuses at once without it.
	SpillBytes int64 `json:"spill_bytes"`
	// UpperBounds says that audio_seconds and bytes are the most a render
	// writes: tails end by level, which only rendering finds. Bytes of
	// FLAC files are the most they can take in any case.
	UpperBounds bool `json:"lengths_are_upper_bounds,omitempty"`
	// TwoPasses says levelling needs every note measured before the first
	// is written, so render may render some notes twice.
	TwoPasses bool   `json:"two_passes"`
	OutputDir string `json:"output_dir"`
	Work      work   `json:"partial_samples"`
	// Noise is the work of the noise bands, counted alike; nil without
	// any.
	Noise       *work     `json:"noise_samples,omitempty"`
	BandLimitHz float64   `json:"band_limit_hz"`
	BandFadeHz  float64   `json:"band_fade_from_hz"`
	BandLimit   float64   `json:"band_limit"`
	Levelling   string    `json:"levelling"`
	Dither      bool      `json:"dither"`
	OverLimit   string    `json:"over_limit,omitempty"` // why render would refuse it without --allow-large
	PerKey      []keyPlan `json:"per_key"`
	// LayerCrossfade is how many velocities neighbouring layers share;
	// LayerRanges what each layer serves and where it fades.
	LayerCrossfade int         `json:"layer_crossfade"`
	LayerRanges    []layerPlan `json:"layer_ranges"`
	// Tuning is the scale that tunes the set; nil for 12-TET.
	Tuning *tuningPlan `json:"tuning,omitempty"`
}

// layerPlan is one velocity layer: the velocities it serves and, where it
// cross-fades with a neighbour, the SFZ fade ranges (silent at the first
// velocity of a fade in, full at its second; a fade out the other way).
type layerPlan struct {
	Velocity int     `json:"velocity"`
	Low      int     `json:"low"`
	High     int     `json:"high"`
	FadeIn   *[2]int `json:"fade_in,omitempty"`
	FadeOut  *[2]int `json:"fade_out,omitempty"`
}

// tuningPlan is the scale that tunes the set and every key its mapping
// plays, from the lowest root to the highest.
type tuningPlan struct {
	Scale        string     `json:"scale"`
	ScaleSHA256  string     `json:"scale_sha256"`
	Keymap       string     `json:"keymap,omitempty"`
	KeymapSHA256 string     `json:"keymap_sha256,omitempty"`
	Description  string     `json:"description"`
	Pitches      int        `json:"pitches"`
	PeriodCents  float64    `json:"period_cents"`
	TwelveTone   bool       `json:"twelve_tone"`
	Keys         []tunedKey `json:"keys"`
}

// tunedKey is one key the mapping plays: its frequency under the scale,
// how far that lies from 12-TET at the patch's a4, the root whose file
// plays it, and how far the mapping's whole cents of tune leave it from
// the scale (0 at the roots; at most half a cent).
type tunedKey struct {
	Key          int     `json:"key"`
	Note         string  `json:"note"`
	Hz           float64 `json:"hz"`
	Cents        float64 `json:"cents_from_12tet"`
	Root         int     `json:"root"`
	MappingError float64 `json:"mapping_error_cents"`
}

// work is oscillator work in partial-samples: what the renderer computes,
// and what it would without skipping silent spans. Counts says what the
// figures count, so a pipeline comparing check's with render's knows what
// neither says: check plans one render of each note, a crossfade loop's
// continuation included, and render reports that work for the notes it
// rendered, with the notes a set levelled as a whole renders a second
// time (Again, render's only) apart.
type work struct {
	Computed int64  `json:"computed"`
	Nominal  int64  `json:"nominal"`
	Counts   string `json:"counts"`
	Again    *int64 `json:"second_renders,omitempty"`
	// noise says the figures count noise-band samples, one for each band
	// and channel it sounds in, rather than partial-samples.
	noise bool
}

// What check's and render's work figures count.
const (
	checkCounts  = "one render of each note, loop continuations included; not the second renders of a set levelled as a whole, which render reports as second_renders, nor files render keeps unchanged from an earlier set"
	renderCounts = "one render of each note rendered, loop continuations included; second_renders are the notes a set levelled as a whole rendered again"
)

func (w work) String() string {
	skipped := 0.0
	if w.Nominal > 0 {
		skipped = 100 * float64(w.Nominal-w.Computed) / float64(w.Nominal)
	}
	unit := "partial-samples"
	if w.noise {
		unit = "noise-band samples"
	}
	return fmt.Sprintf("%.3g of %.3g nominal %s (%.1f%% skipped as silent)", float64(w.Computed), float64(w.Nominal), unit, skipped)
}

// noiseWork is the noise bands' work in stats as a work, or nil for a set
// without noise.
func noiseWork(stats synth.Stats, counts string, again *int64) *work {
	if stats.NoiseNominal == 0 {
		return nil
	}
	return &work{Computed: stats.NoiseSamples, Nominal: stats.NoiseNominal, Counts: counts, Again: again, noise: true}
}

// keyPlan is one row of the per-key table; velocity layers and round
// robins share it.
type keyPlan struct {
	Key       int       `json:"key"`
	Note      string    `json:"note"`
	F0        float64   `json:"f0_hz"`
	Kept      int       `json:"partials_kept"`
	Faded     int       `json:"partials_faded"`
	Dropped   int       `json:"partials_dropped"`
	HighestHz float64   `json:"highest_hz"`
	CrestDB   float64   `json:"crest_factor_db"` // of the partials without envelopes
	Loop      *loopPlan `json:"loop,omitempty"`
	// Bands are the key's noise bands, at its first layer; BandsDropped
	// counts those that start above the band limit.
	Bands        []bandPlan `json:"noise_bands,omitempty"`
	BandsDropped int        `json:"noise_bands_dropped,omitempty"`
}

// bandPlan is one noise band of a key: its edges in Hz, its slope, its
// level (that of a sine of the same power, before its envelope), the
// stereo width and position, and what the band limit does to it: kept,
// faded (it reaches into the fade below the limit) or clipped (it
// reaches past the limit, which cuts it off there).
type bandPlan struct {
	Group     int     `json:"group"`
	Low       float64 `json:"low_hz"`
	High      float64 `json:"high_hz"`
	Slope     float64 `json:"slope_db_per_octave"`
	LevelDB   float64 `json:"level_db"`
	Width     float64 `json:"width"`
	Pan       float64 `json:"pan"`
	BandLimit string  `json:"band_limit"`
}

type loopPlan struct {
	Start           float64 `json:"start_s"`
	End             float64 `json:"end_s"`
	Kind            string  `json:"kind"` // whole cycles, retuned, crossfade
	PitchErrorCents float64 `json:"pitch_error_cents,omitempty"`
	RetuneCents     float64 `json:"retune_cents,omitempty"`
}

func summarize(plan *patch.Plan, p *patch.Patch) planSummary {
	s := planSummary{
		Patch: plan.PatchFile, Name: plan.Name, Files: len(plan.Notes), Layers: len(p.Velocities), RoundRobins: p.RoundRobin,
		SampleRate: plan.SampleRate, BitDepth: plan.BitDepth, Channels: plan.Channels, FileFormat: plan.Format.String(), FileSeconds: p.Hold + p.Tail,
		OutputDir: plan.OutputDir, BandLimit: p.BandLimit, BandLimitHz: p.BandLimit * float64(p.SampleRate),
		BandFadeHz: p.BandLimit * (1 - p.BandFade) * float64(p.SampleRate),
		Levelling:  p.Normalize.String(), Dither: plan.Dither && plan.BitDepth != 32,
		TwoPasses: p.Normalize.Measure != patch.MeasureOff && p.Normalize.Scope != patch.ScopeFile,
	}
	if p.TailUntil > 0 {
		s.TailUntilDB = 20 * math.Log10(p.TailUntil)
	}
	est := sampleset.EstimatePlan(plan)
	s.AudioSeconds, s.Bytes, s.SpillBytes, s.UpperBounds = est.AudioSeconds, est.Bytes, est.SpillBytes, p.TailUntil > 0
	if err := sampleset.DefaultLimits.Check(est); err != nil {
		s.OverLimit = err.Error()
	}
	s.Work.Counts = checkCounts
	s.LayerCrossfade, s.LayerRanges = p.LayerCrossfade, layers(plan)
	s.Tuning = tuned(plan, p.A4)
	var total synth.Stats
	for i := range plan.Notes {
		n := &plan.Notes[i]
		loop, looped := synth.PlanLoop(n)
		total.Add(synth.WorkLooped(n, loop))
		if i > 0 && plan.Notes[i-1].Key == n.Key {
			continue
		}
		s.Keys++
		row := keyPlan{Key: n.Key, Note: patch.NoteName(n.Key), F0: n.F0, Kept: len(n.Partials), Faded: n.Faded, Dropped: n.Dropped,
			CrestDB: math.Round(synth.TimbreCrestFactor(n)*100) / 100}
		for _, part := range n.Partials {
			row.HighestHz = max(row.HighestHz, part.Hz)
		}
		if looped {
			rate := float64(n.SampleRate)
			row.Loop = &loopPlan{Start: float64(loop.Start) / rate, End: float64(loop.End+1) / rate, Kind: "whole cycles", PitchErrorCents: loop.Cents}
			if loop.Crossfade > 0 {
				row.Loop.Kind, row.Loop.PitchErrorCents = "crossfade", 0
			} else if loop.Retune != 0 {
				row.Loop.Kind, row.Loop.RetuneCents = "retuned", loop.Retune
			}
		}
		row.Bands, row.BandsDropped = bands(n), n.NoiseDropped
		s.PerKey = append(s.PerKey, row)
	}
	s.Work.Computed, s.Work.Nominal = total.PartialSamples, total.Nominal
	s.Noise = noiseWork(total, checkCounts, nil)
	return s
}

// bands describes a note's noise bands.
func bands(n *patch.Note) []bandPlan {
	var out []bandPlan
	for _, b := range n.Noise {
		state := "kept"
		switch {
		case b.Clipped():
			state = "clipped"
		case b.Faded():
			state = "faded"
		}
		out = append(out, bandPlan{Group: b.Group, Low: b.Low, High: b.High, Slope: b.Slope,
			LevelDB: math.Round(20*math.Log10(math.Abs(b.Amplitude))*100) / 100, Width: b.Width, Pan: b.Pan, BandLimit: state})
	}
	return out
}

// layers lists the velocity layers as the first key's notes have them.
func layers(plan *patch.Plan) []layerPlan {
	var out []layerPlan
	for _, n := range plan.Notes {
		if n.Key != plan.Notes[0].Key {
			break
		}
		if n.Variation > 0 {
			continue
		}
		l := layerPlan{Velocity: n.Velocity, Low: n.VelLow, High: n.VelHigh}
		if f := n.VelocityFade; f != nil {
			if f.In != [2]int{} {
				l.FadeIn = &f.In
			}
			if f.Out != [2]int{} {
				l.FadeOut = &f.Out
			}
		}
		out = append(out, l)
	}
	return out
}

// tuned describes the plan's scale and every key its mapping plays, with
// the root that plays it and what the mapping's whole cents miss by, as
// the mapping writes them.
func tuned(plan *patch.Plan, a4 float64) *tuningPlan {
	t := plan.Tuning
	if t == nil {
		return nil
	}
	tp := &tuningPlan{Scale: t.Scale.Path, ScaleSHA256: t.Scale.SHA256, Description: t.Description, Pitches: t.Pitches,
		PeriodCents: t.PeriodCents, TwelveTone: t.TwelveTone}
	if t.Keymap != nil {
		tp.Keymap, tp.KeymapSHA256 = t.Keymap.Path, t.Keymap.SHA256
	}
	for i, n := range plan.Notes {
		if i > 0 && plan.Notes[i-1].Key == n.Key {
			continue
		}
		for k := n.KeyLow; k <= n.KeyHigh; k++ {
			if !t.Mapped(k) {
				continue
			}
			miss := 0.0
			if !t.TwelveTone {
				off := t.Offset(n.Key, k)
				transpose, tune := mapping.PitchOffset(off)
				miss = float64(100*transpose+tune) - off
			}
			tp.Keys = append(tp.Keys, tunedKey{Key: k, Note: patch.NoteName(k), Hz: t.Hz[k],
				Cents: 1200 * math.Log2(t.Hz[k]/patch.KeyFrequency(k, a4)), Root: n.Key, MappingError: miss})
		}
	}
	return tp
}

func printPlan(w io.Writer, s *planSummary) {
	channels := "mono"
	if s.Channels == 2 {
		channels = "stereo"
	}
	format := fmt.Sprintf("%d-bit PCM", s.BitDepth)
	if s.BitDepth == 32 {
		format = "32-bit float"
	}
	if s.FileFormat == "flac" {
		format = fmt.Sprintf("%d-bit FLAC", s.BitDepth)
	}
	fmt.Fprintf(w, "patch %s (%s)\n", s.Name, s.Patch)
	fmt.Fprintf(w, "  files:    %d (%s x %s x %s)\n", s.Files, count(s.Keys, "key"), count(s.Layers, "velocity layer"), count(s.RoundRobins, "round robin"))
	fmt.Fprintf(w, "  format:   %d Hz, %s, %s\n", s.SampleRate, format, channels)
	if s.TailUntilDB != 0 {
		fmt.Fprintf(w, "  audio:    at most %.1f s in all; each tail ends when the level stays below %.0f dBFS\n", s.AudioSeconds, s.TailUntilDB)
	} else {
		fmt.Fprintf(w, "  audio:    %.1f s in all, %.2f s per file\n", s.AudioSeconds, s.FileSeconds)
	}
	atMost := ""
	if s.UpperBounds || s.FileFormat == "flac" {
		atMost = "at most "
	}
	fmt.Fprintf(w, "  bytes:    %s%d (%.1f MiB) into %s\n", atMost, s.Bytes, float64(s.Bytes)/(1<<20), s.OutputDir)
	if s.SpillBytes > 0 {
		fmt.Fprintf(w, "            and up to %d (%.1f MiB) of dense notes kept beside it between the passes: render needs free space for both\n", s.SpillBytes, float64(s.SpillBytes)/(1<<20))
	}
	fmt.Fprintf(w, "  work:     to compute %s in one render of each note\n", s.Work)
	if s.Noise != nil {
		fmt.Fprintf(w, "            and to add %s\n", s.Noise)
	}
	if s.TwoPasses {
		fmt.Fprintf(w, "            (levelled as a whole, render renders again the notes it keeps no copy of, and reports those apart)\n")
	}
	fmt.Fprintf(w, "  band limit: %.0f Hz (%.3g of the sample rate), fading from %.0f Hz\n", s.BandLimitHz, s.BandLimit, s.BandFadeHz)
	dither := "off"
	if s.Dither {
		dither = "TPDF, ±1 LSB"
	}
	fmt.Fprintf(w, "  levelling: %s; dither %s\n", s.Levelling, dither)
	printLayers(w, s)
	if s.OverLimit != "" {
		fmt.Fprintf(w, "  limits:   %s; render needs --allow-large\n", s.OverLimit)
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "key\tmidi\tf0 Hz\tkept\tfaded\tdropped\thighest Hz\tcrest dB\tloop s\tloop kind\tpitch error\t")
	for _, k := range s.PerKey {
		loopSpan, kind, cents := "-", "-", "-"
		if l := k.Loop; l != nil {
			loopSpan, kind = fmt.Sprintf("%.3f-%.3f", l.Start, l.End), l.Kind
			switch l.Kind {
			case "whole cycles":
				cents = fmt.Sprintf("%.4f c", l.PitchErrorCents)
			case "retuned":
				cents = fmt.Sprintf("%+.4f c", l.RetuneCents)
			}
		}
		fmt.Fprintf(tw, "%s\t%d\t%.2f\t%d\t%d\t%d\t%.0f\t%.1f\t%s\t%s\t%s\t\n", k.Note, k.Key, k.F0, k.Kept, k.Faded, k.Dropped, k.HighestHz, k.CrestDB, loopSpan, kind, cents)
	}
	tw.Flush()
	printBands(w, s.PerKey)
	printTuning(w, s.Tuning)
}

// printBands writes each key's noise bands, if any key has one.
func printBands(w io.Writer, keys []keyPlan) {
	any := false
	for _, k := range keys {
		any = any || len(k.Bands) > 0 || k.BandsDropped > 0
	}
	if !any {
		return
	}
	fmt.Fprintln(w, "noise bands (at each key's first layer; level: a sine's of the same power, before the envelope):")
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "key\tgroup\tlow Hz\thigh Hz\tslope dB/oct\tlevel dB\twidth\tpan\tband limit\t")
	for _, k := range keys {
		for _, b := range k.Bands {
			fmt.Fprintf(tw, "%s\t%d\t%.1f\t%.1f\t%+.1f\t%.1f\t%.2f\t%+.2f\t%s\t\n", k.Note, b.Group, b.Low, b.High, b.Slope, b.LevelDB, b.Width, b.Pan, b.BandLimit)
		}
	}
	tw.Flush()
	for _, k := range keys {
		if k.BandsDropped > 0 {
			fmt.Fprintf(w, "  %s: %s dropped, starting at or above the band limit\n", k.Note, count(k.BandsDropped, "band"))
		}
	}
}

// printLayers writes the velocity layers, and their crossfades.
func printLayers(w io.Writer, s *planSummary) {
	parts := make([]string, len(s.LayerRanges))
	for i, l := range s.LayerRanges {
		var fades []string
		if l.FadeIn != nil {
			fades = append(fades, fmt.Sprintf("in %d-%d", l.FadeIn[0], l.FadeIn[1]))
		}
		if l.FadeOut != nil {
			fades = append(fades, fmt.Sprintf("out %d-%d", l.FadeOut[0], l.FadeOut[1]))
		}
		parts[i] = fmt.Sprintf("v%d %d-%d", l.Velocity, l.Low, l.High)
		if fades != nil {
			parts[i] += " (fades " + strings.Join(fades, ", ") + ")"
		}
	}
	fmt.Fprintf(w, "  layers:   %s\n", strings.Join(parts, ", "))
	switch {
	case s.LayerCrossfade > 0 && len(s.LayerRanges) > 1:
		fmt.Fprintf(w, "            neighbours overlap by %d velocities and cross-fade at constant power (xf_velcurve=power)\n", s.LayerCrossfade)
	case s.LayerCrossfade > 0:
		fmt.Fprintf(w, "            one layer: layer_crossfade has nothing to fade into\n")
	}
}

// printTuning writes the scale and every key the mapping plays.
func printTuning(w io.Writer, t *tuningPlan) {
	if t == nil {
		return
	}
	fmt.Fprintf(w, "tuning: %s (%q), %d pitches, period %.4f cents", t.Scale, t.Description, t.Pitches, t.PeriodCents)
	if t.Keymap != "" {
		fmt.Fprintf(w, "; keymap %s", t.Keymap)
	}
	fmt.Fprintln(w)
	if t.TwelveTone {
		fmt.Fprintln(w, "  every key at its 12-TET pitch: rendered as 12-TET, one region per root as without a scale")
	} else {
		fmt.Fprintln(w, "  each key has its own region, offset by transpose and whole cents of tune; unmapped keys have none")
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "key\tmidi\tHz\tfrom 12-TET\troot\tmapping error\t")
	for _, k := range t.Keys {
		fmt.Fprintf(tw, "%s\t%d\t%.4f\t%+.3f c\t%d\t%+.3f c\t\n", k.Note, k.Key, k.Hz, k.Cents, k.Root, k.MappingError)
	}
	tw.Flush()
}
