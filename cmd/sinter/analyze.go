package main

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"text/tabwriter"

	"sinter/patch"
	"sinter/synth/analysis"
	"sinter/synth/chart"
	"sinter/synth/wav"
)

// analyzeHeader opens every patch analyze writes; analyze overwrites no
// other file.
const analyzeHeader = "# Measured by sinter analyze"

// recording is a WAV file read for analysis.
type recording struct {
	path    string
	sha256  string
	audio   wav.Audio
	samples []float64 // the channel analysed
	channel string
}

// readRecording reads path and picks the channel to analyse; every error
// names the file.
func readRecording(path, channel string) (*recording, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("cannot read %s: %w", path, errors.Unwrap(err))
	}
	sum := sha256.Sum256(data)
	a, err := wav.Decode(data)
	if err != nil {
		return nil, fmt.Errorf("%s: not a WAV file analyze can read: %w", path, err)
	}
	x, ch, err := analysis.Mix(a.Samples, channel)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return &recording{path: path, sha256: hex.EncodeToString(sum[:]), audio: a, samples: x, channel: ch}, nil
}

// format names the recording's sample format.
func (r *recording) format() string {
	kind := "PCM"
	if r.audio.Info.SubFormat == 3 {
		kind = "float"
	}
	ch := map[int]string{1: "mono", 2: "stereo"}[r.audio.Info.Channels]
	return fmt.Sprintf("%d-bit %s %s", r.audio.Info.ValidBits, kind, ch)
}

// analysisOptions reads the flags both analyze and plot take for a
// recording.
func analysisOptions(keyName string, f0 float64, partials int, floor float64) (analysis.Options, error) {
	opts := analysis.Options{F0: f0, Partials: partials, FloorDB: floor}
	switch {
	case keyName != "" && f0 != 0:
		return opts, errors.New("give --key or --f0, not both: each sets the frequency ratios are taken to")
	case f0 < 0 || math.IsNaN(f0) || f0 > 100000:
		return opts, fmt.Errorf("--f0 %g: give a frequency in Hz above 0", f0)
	case partials < 1 || partials > patch.MaxSeries:
		return opts, fmt.Errorf("--partials %d: keep 1 to %d", partials, patch.MaxSeries)
	case !(floor < 0) || floor < -200:
		return opts, fmt.Errorf("--floor %g: give a level below the loudest partial, -200 to below 0 dB", floor)
	}
	if keyName != "" {
		k, err := patch.ParseNote(keyName)
		if err != nil {
			return opts, fmt.Errorf("--key: %w", err)
		}
		opts.Key, opts.KeyGiven = k, true
	}
	return opts, nil
}

// analyzeReport is what analyze prints: as text, or as JSON with --json.
type analyzeReport struct {
	Recording      string           `json:"recording"`
	SHA256         string           `json:"sha256"`
	Format         string           `json:"format"`
	SampleRate     int              `json:"sample_rate"`
	Seconds        float64          `json:"seconds"`
	Channel        string           `json:"channel"`
	Onset          float64          `json:"onset_s"`
	NoteOff        *float64         `json:"note_off_s"` // from the onset; null where never released
	Pitched        bool             `json:"pitched"`
	Reference      float64          `json:"reference_hz"`
	ReferenceGiven bool             `json:"reference_given"`
	Key            string           `json:"key"`
	MIDIKey        int              `json:"midi_key"`
	Cents          float64          `json:"cents"`
	Law            lawReport        `json:"law"`
	Partials       []partialReport  `json:"partials"`
	Dropped        int              `json:"partials_left_out"`
	ResidualDB     float64          `json:"residual_db"`
	TransientDB    *float64         `json:"onset_transient_db"` // null where not measured
	Resynthesis    resynthesisTotal `json:"resynthesis"`
	Patch          string           `json:"patch"`
	Groups         int              `json:"groups"`
}

type lawReport struct {
	Kind     string  `json:"kind"`
	F0       float64 `json:"f0_hz,omitempty"`
	B        float64 `json:"b,omitempty"`
	RMSCents float64 `json:"rms_cents"`
	MaxCents float64 `json:"max_cents"`
}

type partialReport struct {
	Ratio     float64  `json:"ratio"`
	Hz        float64  `json:"hz"`
	ErrCents  float64  `json:"error_cents"`
	Harmonic  int      `json:"harmonic,omitempty"`
	LevelDB   float64  `json:"level_dbfs"`
	Attack    float64  `json:"attack_s"`
	T60       float64  `json:"t60_s"`
	SustainDB *float64 `json:"sustain_db"` // null for none
	Release   float64  `json:"release_t60_s,omitempty"`
	// ReleaseUnheard: the partial had died away by the note-off, and
	// Release is the median of the releases heard.
	ReleaseUnheard bool    `json:"release_unheard,omitempty"`
	Points         int     `json:"points,omitempty"`
	FitDB          float64 `json:"fit_db"`
	Phase          float64 `json:"phase_deg"`
}

type resynthesisTotal struct {
	SpectralDB float64    `json:"spectral_distance_db"`
	Band       [2]float64 `json:"band_hz"`
	EnergyDB   float64    `json:"energy_ratio_db"`
}

func analyze(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("analyze", flag.ContinueOnError)
	outFile := fs.String("o", "", "write the patch to `PATCH.yaml` (default: the recording's name with .yaml, beside it)")
	keyName := fs.String("key", "", "take ratios to the frequency of key `NOTE`, such as A3 (default: the pitch measured)")
	f0 := fs.Float64("f0", 0, "take ratios to `HZ` (default: the pitch measured)")
	partials := fs.Int("partials", analysis.DefaultPartials, "keep the `N` loudest partials at most")
	floor := fs.Float64("floor", analysis.DefaultFloorDB, "drop partials more than `DB` below the loudest")
	channel := fs.String("channel", "sum", "of a stereo recording, analyse `left`, right or their sum")
	asJSON := fs.Bool("json", false, "print the report, or the errors, as JSON on stdout")
	plotFile := fs.String("plot", "", "also draw the spectrograms of the recording and the patch into `FILE.png`")
	path, code, ok := parseArgs(fs, args, stdout, stderr)
	if !ok {
		return code
	}
	out := reporter{json: *asJSON, stdout: stdout, stderr: stderr, command: "analyze"}
	opts, err := analysisOptions(*keyName, *f0, *partials, *floor)
	if err == nil && *channel != "left" && *channel != "right" && *channel != "sum" {
		err = fmt.Errorf("--channel %q: choose left, right or sum", *channel)
	}
	if err != nil {
		return out.fail(exitUsage, err)
	}
	target := *outFile
	if target == "" {
		target = strings.TrimSuffix(path, filepath.Ext(path)) + ".yaml"
	}
	if err := mayWritePatch(target); err != nil {
		return out.fail(exitUsage, err)
	}
	rec, err := readRecording(path, *channel)
	if err != nil {
		return out.fail(exitUsage, err)
	}
	res, err := analysis.Analyze(rec.samples, rec.audio.Info.SampleRate, opts)
	if err != nil {
		return out.fail(exitUsage, fmt.Errorf("%s: %w", path, err))
	}
	name := patchName(path)
	draft := res.Draft(name, analysis.Recording{Name: filepath.Base(path), SHA256: rec.sha256, Channel: rec.channel})
	render, _, err := res.Resynthesis(draft)
	if err != nil {
		return out.fail(exitFailure, err)
	}
	cmp := res.Compare(rec.samples, render)
	draft.Comment = append(draft.Comment, fmt.Sprintf("Rendered at %s against the recording: spectral distance %.2f dB over %.0f-%.0f Hz,",
		patch.NoteName(res.Key), cmp.SpectralDB, cmp.LowHz, cmp.HighHz),
		fmt.Sprintf("recording over difference %.1f dB.", cmp.EnergyDB))
	if err := writeFileAtomically(target, draft.YAML()); err != nil {
		return out.fail(exitFailure, err)
	}
	if *plotFile != "" {
		if err := drawAnalysis(*plotFile, rec, res, render, 0, 0); err != nil {
			return out.fail(exitFailure, err)
		}
	}
	report := newAnalyzeReport(rec, res, cmp, target, len(draft.Groups))
	if out.json {
		return out.emit(report)
	}
	printAnalysis(stdout, &report)
	if *plotFile != "" {
		fmt.Fprintf(stdout, "drew %s\n", *plotFile)
	}
	return exitOK
}

// mayWritePatch refuses a target that exists and is not a patch analyze
// wrote, so a mistyped -o cannot replace a designer's own patch.
func mayWritePatch(target string) error {
	data, err := os.ReadFile(target)
	switch {
	case errors.Is(err, os.ErrNotExist):
		return nil
	case err != nil:
		return fmt.Errorf("cannot read %s to check it before replacing it: %w", target, err)
	case !strings.HasPrefix(string(data), analyzeHeader):
		return fmt.Errorf("%s exists and was not written by sinter analyze; analyze replaces only its own patches (choose another -o)", target)
	}
	return nil
}

// writeFileAtomically writes data to path through a temporary name.
func writeFileAtomically(path string, data []byte) error {
	tmp := path + ".partial"
	if err := os.WriteFile(tmp, data, 0o644); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("cannot write %s: %w", path, err)
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("cannot write %s: %w", path, err)
	}
	return nil
}

// patchName makes a set name from the recording's file name: lower case,
// runs of anything else than a-z, 0-9, '.', '_' and '-' turned into '-'.
func patchName(path string) string {
	base := strings.ToLower(strings.TrimSuffix(filepath.Base(path), filepath.Ext(path)))
	var b strings.Builder
	dash := false
	for _, r := range base {
		ok := r >= 'a' && r <= 'z' || r >= '0' && r <= '9' || r == '.' || r == '_' || r == '-'
		if !ok {
			if !dash && b.Len() > 0 {
				b.WriteByte('-')
			}
			dash = true
			continue
		}
		b.WriteRune(r)
		dash = false
	}
	name := strings.Trim(b.String(), "-._")
	if patch.CheckName(name) != nil {
		name = "recording"
	}
	return name
}

func newAnalyzeReport(rec *recording, res *analysis.Result, cmp analysis.Comparison, target string, groups int) analyzeReport {
	r := analyzeReport{
		Recording: rec.path, SHA256: rec.sha256, Format: rec.format(), SampleRate: res.SampleRate,
		Seconds: res.Length, Channel: rec.channel, Onset: res.Onset, Pitched: res.Pitched,
		Reference: res.Reference, ReferenceGiven: res.Given, Key: patch.NoteName(res.Key), MIDIKey: res.Key,
		Cents: res.Cents, Dropped: res.Dropped, ResidualDB: res.ResidualDB, Patch: target, Groups: groups,
		Law:         lawReport{Kind: res.Law.Kind.String(), RMSCents: res.Law.RMSCents, MaxCents: res.Law.MaxCents},
		Resynthesis: resynthesisTotal{SpectralDB: cmp.SpectralDB, Band: [2]float64{cmp.LowHz, cmp.HighHz}, EnergyDB: cmp.EnergyDB},
	}
	if res.Released {
		r.NoteOff = &res.NoteOff
	}
	if !math.IsNaN(res.TransientDB) {
		r.TransientDB = &res.TransientDB
	}
	if res.Law.Kind != analysis.Free {
		r.Law.F0, r.Law.B = res.Law.F0, res.Law.B
	}
	for _, p := range res.Partials {
		e := p.Envelope
		pr := partialReport{Ratio: p.Ratio, Hz: p.Hz, ErrCents: p.ErrCents, Harmonic: p.Harmonic, LevelDB: p.LevelDB(),
			Attack: e.Attack, T60: e.Decay, Release: e.Release, ReleaseUnheard: p.ReleaseUnheard, Points: len(e.Points), FitDB: e.FitDB, Phase: p.Phase}
		if len(e.Points) > 0 {
			pr.Attack, pr.T60 = 0, 0
		}
		if e.Sustain > 0 {
			s := 20 * math.Log10(e.Sustain)
			pr.SustainDB = &s
		}
		r.Partials = append(r.Partials, pr)
	}
	return r
}

// printAnalysis writes the report as text.
func printAnalysis(w io.Writer, r *analyzeReport) {
	off := "is not released before it ends"
	if r.NoteOff != nil {
		off = fmt.Sprintf("is released %.3f s after that", *r.NoteOff)
	}
	fmt.Fprintf(w, "%s: %s, %d Hz, %.3f s (analysed: %s); the note starts at %.3f s and %s\n",
		r.Recording, r.Format, r.SampleRate, r.Seconds, r.Channel, r.Onset, off)
	pitch := fmt.Sprintf("pitch: %s %+.2f cents (%.3f Hz)", r.Key, r.Cents, r.Reference)
	switch {
	case r.ReferenceGiven:
		pitch = fmt.Sprintf("reference: %s %+.2f cents (%.3f Hz), as given", r.Key, r.Cents, r.Reference)
	case !r.Pitched:
		pitch = fmt.Sprintf("unpitched: no series fits; ratios are to the lowest strong partial, %.3f Hz (%s %+.2f cents)", r.Reference, r.Key, r.Cents)
	}
	fmt.Fprintln(w, pitch)
	law := "law: free ratios (no harmonic or stiff-string series fits within the measured error)"
	switch r.Law.Kind {
	case analysis.Harmonic.String():
		law = fmt.Sprintf("law: harmonic series of %.4f Hz; fit error %.4f cents RMS, %.4f at most", r.Law.F0, r.Law.RMSCents, r.Law.MaxCents)
	case analysis.Stiff.String():
		law = fmt.Sprintf("law: stiff string, f0 %.4f Hz, B = %.4g; fit error %.4f cents RMS, %.4f at most", r.Law.F0, r.Law.B, r.Law.RMSCents, r.Law.MaxCents)
	}
	fmt.Fprintln(w, law)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "n\tratio\tHz\t±cents\tlevel dB\tattack s\tT60 s\tsustain dB\trelease s\tfit dB\t")
	unheard := false
	for _, p := range r.Partials {
		n := "-"
		if p.Harmonic > 0 {
			n = fmt.Sprint(p.Harmonic)
		}
		sus := "none"
		if p.SustainDB != nil {
			sus = fmt.Sprintf("%.2f", *p.SustainDB)
		}
		rel := "-"
		switch {
		case p.ReleaseUnheard:
			rel = fmt.Sprintf("(%.3f)", p.Release)
			unheard = true
		case p.Release > 0:
			rel = fmt.Sprintf("%.3f", p.Release)
		}
		attack, t60 := fmt.Sprintf("%.4f", p.Attack), fmt.Sprintf("%.3f", p.T60)
		if p.Points > 0 {
			attack, t60, sus = fmt.Sprintf("%d points", p.Points), "", ""
		}
		fmt.Fprintf(tw, "%s\t%.6f\t%.3f\t%.4f\t%.2f\t%s\t%s\t%s\t%s\t%.2f\t\n", n, p.Ratio, p.Hz, p.ErrCents, p.LevelDB, attack, t60, sus, rel, p.FitDB)
	}
	tw.Flush()
	if unheard {
		fmt.Fprintln(w, "(release): the partial had died away by the note-off; the median of the releases heard")
	}
	if r.Dropped > 0 {
		fmt.Fprintf(w, "%s above the floor left out (--partials %d)\n", count(r.Dropped, "quieter partial"), len(r.Partials))
	}
	fmt.Fprintf(w, "residual: %.1f dB of the recording lies outside the partials (breath, bow, noise)", r.ResidualDB)
	if r.TransientDB != nil {
		fmt.Fprintf(w, "; of its onset, %.1f dB (a knock, a pluck's noise)", *r.TransientDB)
	}
	fmt.Fprintln(w)
	fmt.Fprintf(w, "resynthesis at %s: spectral distance %.2f dB over %.0f-%.0f Hz; recording over difference %.1f dB\n",
		r.Key, r.Resynthesis.SpectralDB, r.Resynthesis.Band[0], r.Resynthesis.Band[1], r.Resynthesis.EnergyDB)
	fmt.Fprintf(w, "wrote %s (%s)\n", r.Patch, count(r.Groups, "group"))
}

// drawAnalysis draws the recording's spectrogram and the render's side by
// side, each with the partials' tracks, into file.
func drawAnalysis(file string, rec *recording, res *analysis.Result, render []float64, width, height int) error {
	onset := int(math.Round(res.Onset * float64(res.SampleRate)))
	from := rec.samples[min(onset, len(rec.samples)):]
	a := analysis.Spectrogram(from, res.SampleRate, res.Window)
	b := analysis.Spectrogram(render[:min(len(render), len(from))], res.SampleRate, res.Window)
	var tracks []chart.Track
	lo, hi, top := math.Inf(1), 0.0, math.Inf(-1)
	for _, p := range res.Partials {
		lo, hi, top = min(lo, p.Hz), max(hi, p.Hz), max(top, p.LevelDB())
	}
	for _, p := range res.Partials {
		tracks = append(tracks, chart.Track{Hz: p.Hz, Spans: p.Spans(res.Onset, top-60)})
	}
	name := filepath.Base(rec.path)
	panels := []chart.Spectrogram{
		{Title: fmt.Sprintf("%s from its onset, with the %s measured", name, count(len(res.Partials), "partial")), Times: a.Times, BinHz: a.BinHz, DB: a.DB, Tracks: tracks},
		{Title: fmt.Sprintf("the patch rendered at %s", patch.NoteName(res.Key)), Times: b.Times, BinHz: b.BinHz, DB: b.DB, Tracks: tracks},
	}
	return chart.WriteSpectrogramFile(file, panels, chart.SpectrogramOptions{Width: width, Height: height,
		LowHz: max(lo/2, 10), HighHz: min(hi*1.5, float64(res.SampleRate)/2), TopDB: math.Ceil(top/6) * 6, RangeDB: 100})
}
