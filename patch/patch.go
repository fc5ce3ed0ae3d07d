// Package patch reads sinter patch files: YAML documents that describe a
// sample set as groups of sine partials. Load parses and validates a patch,
// reporting every problem with its file, line and column; Patch.Expand turns
// it into a Plan, one entry per output file with its partials fully resolved.
package patch

import (
	"bytes"
	"crypto/sha256"
	_ "embed"
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"

	"gopkg.in/yaml.v3"
)

// Patch is a parsed and validated patch.
type Patch struct {
	File       string   // path the patch was read from
	SHA256     [32]byte // hash of the file's bytes
	Name       string
	SampleRate int
	BitDepth   int
	Channels   int
	A4         float64 // tuning reference in Hz
	Keys       []int   // root keys as MIDI notes, ascending, no repeats
	Velocities []int   // MIDI velocity of each layer, ascending, no repeats
	Hold       float64 // seconds from note-on to note-off
	Tail       float64 // seconds rendered after note-off; with TailUntil, the most
	TailUntil  float64 // linear level below which an automatic tail ends; 0 for a fixed tail
	BandLimit  float64 // highest partial frequency, as a fraction of SampleRate
	BandFade   float64 // width of the fade below the limit, as a fraction of the limit
	Normalize  Normalize
	Loop       LoopSpec
	RoundRobin int    // variations of each key and layer, 1 or more
	Seed       uint64 // base of every derived seed (random phases, dither)
	Dither     bool   // TPDF dither before integer quantisation
	Groups     []Group
	// Body is a spectral envelope fixed in hertz that every partial passes
	// through, interpolated in log frequency; nil for none.
	Body []BodyPoint
	// Tuning, when scale files tune the keyboard, gives every key's
	// frequency; nil for 12-TET from A4.
	Tuning *Tuning
	// LayerCrossfade is how many velocities neighbouring layers overlap
	// by, cross-fading at constant power; 0 for none.
	LayerCrossfade int
	// Includes are the files the partials list pulled groups from, in the
	// order they were read.
	Includes  []Include
	OutputDir string // resolved against the patch file's folder
	Format    Format // the files' format
}

// Format is the file format a set's samples are written in.
type Format int

// The formats: WAV, or FLAC (RFC 9639), lossless and smaller, for integer
// samples only.
const (
	FormatWAV Format = iota
	FormatFLAC
)

// Ext is the format's file extension, with its dot.
func (f Format) Ext() string {
	if f == FormatFLAC {
		return ".flac"
	}
	return ".wav"
}

// String is the format's name in a patch: wav or flac.
func (f Format) String() string { return f.Ext()[1:] }

// Measure is what levelling measures and sets.
type Measure int

// The measures levelling can target.
const (
	MeasureOff      Measure = iota // no gain: samples are written as rendered
	MeasurePeak                    // sample peak, dBFS
	MeasureTruePeak                // true peak, dBTP (ITU-R BS.1770 Annex 2)
	MeasureLoudness                // integrated loudness, LUFS (ITU-R BS.1770)
)

// Scope is the group of files that share one levelling gain.
type Scope int

// The levelling scopes.
const (
	ScopeSet  Scope = iota // one gain for the whole set
	ScopeKey               // one gain per root key: layers keep their balance
	ScopeFile              // one gain per file
)

// Normalize says how the set is levelled: the loudest file of each scope
// lands on Target, and no file may pass the ceiling.
type Normalize struct {
	Measure Measure
	Target  float64 // dBFS, dBTP or LUFS, as Measure says
	Scope   Scope
	// Ceiling is the highest level any file may reach after levelling, in
	// dBFS of sample peak, or dBTP when CeilingTruePeak is set.
	Ceiling         float64
	CeilingTruePeak bool
	// Strict makes a level that would pass the ceiling an error instead of
	// a warning and a lowered gain.
	Strict bool
}

// LoopMode says whether and how files are looped.
type LoopMode int

// The loop modes.
const (
	LoopOff  LoopMode = iota
	LoopAuto          // a whole number of cycles for harmonic notes, else a crossfade
)

// LoopSpec is the sustain loop a patch asks for; times in seconds, a
// negative Start meaning "as soon as every envelope has settled".
type LoopSpec struct {
	Line, Column int
	Mode         LoopMode
	Start        float64
	Length       float64 // the longest loop wanted
	Crossfade    float64 // for inharmonic notes
	Exact        bool    // retune a harmonic note so its loop holds whole cycles exactly
}

// Group is one entry of the patch's partials list: which partials it makes
// (Kind and the fields for it) and how they are shaped.
type Group struct {
	Line, Column int
	Kind         GroupKind
	Count        int       // series, modes, spectrum: number of partials
	First        int       // series: harmonic number of the first
	Step         int       // series: distance between harmonic numbers
	Ratio        float64   // ratio: frequency over the fundamental
	Ratios       []float64 // ratios
	Table        string    // modes: a table of modes.yaml
	Spectrum     string    // spectrum: sawtooth, square or triangle
	Cluster      Cluster   // cluster
	Noise        NoiseSpec // noise
	Amplitude    Value
	Amplitudes   []Value // ratios: one gain per ratio, times Amplitude
	PhaseRule    PhaseRule
	Phase        Value // degrees, for PhaseValue
	Envelope     EnvelopeSpec
	Stiffness    Value // B of f_n = n·f0·sqrt(1 + B·n²), series and spectrum groups
	Tilt         Value // dB per octave of ratio
	Detune       Value // cents
	Unison       Unison
	PanRule      PanRule
	Pan          Value   // −1..1, for PanValue
	PanWidth     float64 // 0..1, for the other pan rules
	Pitch        []PitchPoint
	Vibrato      *VibratoSpec // nil for none
	Drift        *DriftSpec   // nil for none
}

// VibratoSpec is a vibrato as written; each setting a number or an
// expression.
type VibratoSpec struct {
	Rate, Depth, Delay, Fade Value
}

// DriftSpec is a drift as written.
type DriftSpec struct {
	Rate, Depth Value
}

// BodyPoint is one breakpoint of a spectral envelope fixed in frequency.
type BodyPoint struct {
	Hz, DB float64
}

// EnvelopeSpec is an ADSR envelope as written: times in seconds, sustain a
// level from 0 to 1, each a number or an expression.
type EnvelopeSpec struct {
	Attack, Decay, Sustain, Release Value
	Linear                          bool // curve: linear
	// Points, when set, replace attack, decay and sustain; Stretch scales
	// their times.
	Points  []EnvelopePoint
	Stretch Value
}

// Limits on what a patch may ask for; they keep a typing slip from asking
// for hours of audio or a million partials.
const (
	MinSampleRate = 8000
	MaxSampleRate = 384000
	MaxSeconds    = 600 // hold + tail of one file
	MaxSeries     = 4096
	MaxRoundRobin = 100
	// MaxEnvelopePoints bounds a breakpoint envelope.
	MaxEnvelopePoints = 16
	maxPatchBytes     = 4 << 20
	defaultHold       = 2.0
	defaultTail       = 1.0
	defaultBandLim    = 0.45
	defaultFade       = 0.1
)

var namePattern = regexp.MustCompile(nameRule.Pattern)

// CheckName reports whether name can name a set: it starts every file
// name, so it must be safe in one on every system.
func CheckName(name string) error {
	if !namePattern.MatchString(name) {
		return fmt.Errorf("name %q must start with a-z or 0-9 and hold only a-z, 0-9, '.', '_' and '-' (it becomes part of file names)", clip(name))
	}
	if deviceName(name) {
		return fmt.Errorf("name %q is a device name on Windows, where %s.sfz could not be written; choose another", name, name)
	}
	return nil
}

// deviceName reports whether name, before any extension, is one Windows
// reserves for devices (CON, PRN, AUX, NUL, COM1–9, LPT1–9; common
// practice), which no file there may be called.
func deviceName(name string) bool {
	base, _, _ := strings.Cut(name, ".")
	switch base {
	case "con", "prn", "aux", "nul":
		return true
	}
	return len(base) == 4 && (strings.HasPrefix(base, "com") || strings.HasPrefix(base, "lpt")) && base[3] >= '1' && base[3] <= '9'
}

// localPath reports whether dir stays inside the folder it is relative
// to: not absolute, no '..' step, not empty.
func localPath(dir string) bool {
	return dir != "" && filepath.IsLocal(dir) && !strings.HasPrefix(dir, "/") && !strings.Contains(dir, "\\")
}

var topKeys = []string{"name", "sample_rate", "bit_depth", "channels", "tuning", "keys", "velocities",
	"layer_crossfade", "hold", "tail", "band_limit", "band_fade", "normalize", "loop", "round_robin", "seed", "dither",
	"envelope", "partials", "body", "output"}

// Load reads, parses and validates the patch at path. The error, if any, is
// an ErrorList holding every problem found.
func Load(path string) (*Patch, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, ErrorList{{File: path, Msg: fmt.Sprintf("cannot read the patch: %v", err)}}
	}
	return Parse(path, data)
}

// Parse parses and validates patch source; file names it in messages and
// anchors relative output folders.
func Parse(file string, data []byte) (*Patch, error) {
	p := &Patch{File: file, SHA256: sha256.Sum256(data)}
	d := &decoder{file: file, chain: []string{filepath.Clean(file)}, includes: &p.Includes, lines: bytes.Split(data, []byte("\n"))}
	if len(data) > maxPatchBytes {
		return nil, ErrorList{{File: file, Msg: fmt.Sprintf("the patch is %d bytes; patches are limited to %d", len(data), maxPatchBytes)}}
	}
	var doc yaml.Node
	if err := yaml.Unmarshal(data, &doc); err != nil {
		return nil, ErrorList{syntaxError(file, data, err)}
	}
	if doc.Kind == 0 || len(doc.Content) == 0 {
		return nil, ErrorList{{File: file, Line: 1, Column: 1, Msg: "the patch is empty; it needs at least name and partials"}}
	}
	d.patch(doc.Content[0], p)
	if d.overBudget() {
		return nil, ErrorList{{File: file, Line: 1, Column: 1, Msg: fmt.Sprintf("the patch expands to more than %d YAML nodes (aliases nested too deep?)", maxNodeVisits)}}
	}
	if len(d.errs) > 0 {
		d.errs.sortByPosition()
		return nil, d.errs
	}
	return p, nil
}

var yamlLine = regexp.MustCompile(`^yaml: line (\d+): (.*)$`)

// syntaxError turns a YAML parser error, which knows only the line, into an
// Error; the column is the first tab on that line when a tab is the
// complaint, else the line's first non-blank character.
func syntaxError(file string, data []byte, err error) *Error {
	m := yamlLine.FindStringSubmatch(err.Error())
	if m == nil {
		return &Error{File: file, Line: 1, Column: 1, Msg: "not valid YAML: " + strings.TrimPrefix(err.Error(), "yaml: ")}
	}
	line, _ := strconv.Atoi(m[1])
	col := 1
	if lines := bytes.Split(data, []byte("\n")); line >= 1 && line <= len(lines) {
		text := lines[line-1]
		if l, i := tabInIndent(lines, line); l > 0 && strings.Contains(m[2], "tab") {
			// The parser names the line where the scalar or key before the
			// tab began; the tab itself may be on a later line.
			line, col = l, i+1
		} else if trimmed := bytes.TrimLeft(text, " "); len(trimmed) > 0 {
			col = len(text) - len(trimmed) + 1
		}
	}
	return &Error{File: file, Line: line, Column: col, Msg: "not valid YAML: " + m[2]}
}

func (d *decoder) patch(root *yaml.Node, p *Patch) {
	p.SampleRate, p.BitDepth, p.Channels, p.A4 = 48000, 24, 1, 440
	p.Velocities = []int{100}
	p.Hold, p.Tail, p.BandLimit, p.BandFade = defaultHold, defaultTail, defaultBandLim, defaultFade
	p.Normalize = defaultNormalize()
	p.RoundRobin, p.Dither = 1, true
	var keysNode, partialsNode, envelopeNode, tailNode, holdNode *yaml.Node
	var scaleNode, keymapNode, a4Node, crossfadeNode *yaml.Node
	outputDir := ""
	var formatNode *yaml.Node
	d.fields(root, "", topKeys, func(key string, v *yaml.Node, path string) {
		switch key {
		case "name":
			if s, ok := d.text(v, path); ok {
				if err := CheckName(s); err != nil {
					d.errorf(d.resolve(v), path, "%v", err)
				}
				p.Name = s
			}
		case "sample_rate":
			p.SampleRate, _ = d.integer(v, path, sampleRateRule)
		case "bit_depth":
			if b, ok := d.integer(v, path, bitDepthRule); ok {
				p.BitDepth = b
			}
		case "channels":
			p.Channels, _ = d.integer(v, path, channelsRule)
		case "tuning":
			d.fields(v, path, []string{"a4", "scale", "keymap"}, func(key string, v *yaml.Node, path string) {
				switch key {
				case "a4":
					a4Node = v
					p.A4, _ = d.ranged(v, path, a4Rule)
				case "scale":
					scaleNode = v
				case "keymap":
					keymapNode = v
				}
			})
		case "keys":
			keysNode = v
		case "velocities":
			p.Velocities = d.velocities(v, path)
		case "layer_crossfade":
			crossfadeNode = d.resolve(v)
			p.LayerCrossfade, _ = d.integer(v, path, layerCrossfadeRule)
		case "hold":
			holdNode = d.resolve(v)
			p.Hold, _ = d.ranged(v, path, holdRule)
		case "tail":
			tailNode = d.resolve(v)
			p.Tail, p.TailUntil = d.tail(v, path)
		case "band_limit":
			p.BandLimit, _ = d.ranged(v, path, bandLimitRule)
		case "band_fade":
			p.BandFade, _ = d.ranged(v, path, bandFadeRule)
		case "normalize":
			p.Normalize = d.normalize(v, path)
		case "loop":
			p.Loop = d.loop(v, path)
		case "body":
			p.Body = d.body(v, path)
		case "round_robin":
			p.RoundRobin, _ = d.integer(v, path, roundRobinRule)
		case "seed":
			if s, ok := d.integer(v, path, seedRule); ok {
				p.Seed = uint64(s)
			}
		case "dither":
			p.Dither = d.onOff(v, path)
		case "envelope":
			envelopeNode = v
		case "partials":
			partialsNode = v
		case "output":
			d.fields(v, path, []string{"dir", "format"}, func(key string, v *yaml.Node, path string) {
				if key == "format" {
					if d.word(v, path, formatRule) == "flac" {
						p.Format, formatNode = FormatFLAC, v
					}
					return
				}
				dir, ok := d.text(v, path)
				if ok && !localPath(dir) {
					d.errorf(d.resolve(v), path, "output dir %q must be a path inside the patch's folder, without '..' or a leading '/'; to render elsewhere, pass -o on the command line", clip(dir))
					return
				}
				outputDir = dir
			})
		}
	})
	if p.TailUntil > 0 {
		p.Tail = min(p.Tail, MaxSeconds-p.Hold)
	} else if p.Hold+p.Tail > MaxSeconds {
		// Point at the tail if the patch sets one, else at the hold that
		// pushed the default tail over the limit.
		at, path := tailNode, "tail"
		if at == nil {
			at, path = holdNode, "hold"
		}
		d.errorf(at, path, "hold + tail is %g s; a file may last at most %d s", p.Hold+p.Tail, MaxSeconds)
	}
	if p.Format == FormatFLAC && p.BitDepth == 32 {
		// FLAC holds integer samples only (RFC 9639, section 9.2).
		d.errorf(d.resolve(formatNode), "output.format", "FLAC holds integer samples, and bit_depth 32 is floating point; use bit_depth 16 or 24, or format wav")
	}
	if p.Hold+p.Tail == 0 {
		at, path := tailNode, "tail"
		if at == nil {
			at, path = holdNode, "hold"
		}
		d.errorf(at, path, "hold + tail is 0 s; a file needs some length")
	}
	if p.Name == "" && !hasKey(root, "name") {
		d.errorf(root, "name", "the patch needs a name (it becomes part of every file name)")
	}
	keyAt := map[int]place{}
	if keysNode == nil {
		p.Keys = []int{60}
		keyAt[60] = place{root, "keys"}
	} else {
		p.Keys = d.keys(keysNode, "keys", keyAt)
	}
	d.tuningFiles(p, scaleNode, keymapNode, a4Node)
	d.checkRoots(p, keyAt)
	d.checkCrossfade(p, crossfadeNode)
	defaults := defaultEnvelope()
	if envelopeNode != nil {
		defaults = d.envelope(envelopeNode, "envelope", defaults)
	}
	if partialsNode == nil {
		d.errorf(root, "partials", "the patch needs a partials list: at least one group such as {harmonics: 8} or {ratio: 1}")
	} else {
		p.Groups = d.groups(partialsNode, "partials", defaults)
	}
	if outputDir == "" {
		outputDir = filepath.Join("out", p.Name)
	}
	if filepath.IsAbs(outputDir) {
		p.OutputDir = filepath.Clean(outputDir)
	} else {
		p.OutputDir = filepath.Join(filepath.Dir(p.File), outputDir)
	}
}

func hasKey(n *yaml.Node, key string) bool {
	if n.Kind != yaml.MappingNode {
		return false
	}
	for i := 0; i+1 < len(n.Content); i += 2 {
		if n.Content[i].Value == key {
			return true
		}
	}
	return false
}

// place is where a value stands in the patch: its node and its path.
type place struct {
	node *yaml.Node
	path string
}

// keys reads a key list ([C2, "F#3", 64]), a single key, or a range
// {from, to, step}; at gets where each key was asked for.
func (d *decoder) keys(n *yaml.Node, path string, at map[int]place) []int {
	n = d.resolve(n)
	var keys []int
	if n.Kind == yaml.MappingNode {
		from, to, step := -1, -1, 1
		d.fields(n, path, []string{"from", "to", "step"}, func(key string, v *yaml.Node, path string) {
			switch key {
			case "from":
				from, _ = d.note(v, path)
			case "to":
				to, _ = d.note(v, path)
			case "step":
				step, _ = d.integer(v, path, keyStepRule)
			}
		})
		switch {
		case from < 0 || to < 0:
			if !hasKey(n, "from") || !hasKey(n, "to") {
				d.errorf(n, path, "a key range needs from and to, such as {from: C2, to: C6, step: 3}")
			}
			return nil
		case to < from:
			d.errorf(n, path, "the range runs backwards: to (%s) is below from (%s)", NoteName(to), NoteName(from))
			return nil
		case step < 1:
			return nil
		}
		for k := from; k <= to; k += step {
			keys = append(keys, k)
			at[k] = place{n, path}
		}
		return keys
	}
	items := d.items(n)
	if len(items) < keysRule.MinItems {
		d.errorf(n, path, "the key list is empty")
	}
	for i, item := range items {
		sub := fmt.Sprintf("%s[%d]", path, i)
		k, ok := d.note(item, sub)
		if !ok {
			continue
		}
		if first, dup := at[k]; dup {
			d.errorf(d.resolve(item), sub, "key %s is listed twice (first at line %d)", NoteName(k), first.node.Line)
			continue
		}
		at[k] = place{d.resolve(item), sub}
		keys = append(keys, k)
	}
	slices.Sort(keys)
	return keys
}

// note reads a key: a MIDI number, which may be written 60.0 as JSON
// writes it, or a note name.
func (d *decoder) note(n *yaml.Node, path string) (int, bool) {
	n = d.resolve(n)
	if n.Kind == yaml.ScalarNode && (n.ShortTag() == "!!int" || n.ShortTag() == "!!float") {
		return d.integer(n, path, noteRule)
	}
	if n.Kind != yaml.ScalarNode {
		d.errorf(n, path, "expected a note such as C4 or a MIDI number, found %s", describe(n))
		return 0, false
	}
	k, err := ParseNote(n.Value)
	if err != nil {
		d.errorf(n, path, "%v", err)
		return 0, false
	}
	return k, true
}

func (d *decoder) velocities(n *yaml.Node, path string) []int {
	var vels []int
	items := d.items(n)
	if len(items) < velocitiesRule.MinItems {
		d.errorf(d.resolve(n), path, "the velocity list is empty")
	}
	for i, item := range items {
		sub := fmt.Sprintf("%s[%d]", path, i)
		v, ok := d.integer(item, sub, velocityRule)
		if !ok {
			continue
		}
		if slices.Contains(vels, v) {
			d.errorf(d.resolve(item), sub, "velocity %d is listed twice", v)
			continue
		}
		vels = append(vels, v)
	}
	slices.Sort(vels)
	return vels
}

//go:embed sinter.schema.json
var schemaJSON []byte

// JSONSchema returns the JSON Schema (draft 2020-12) of the patch
// language, for editors that validate and complete patches.
func JSONSchema() []byte { return slices.Clone(schemaJSON) }

// TopKeys, GroupKeys and EnvelopeKeys list the keys the decoder knows at
// each level, for the schema's test.
func TopKeys() []string      { return slices.Clone(topKeys) }
func GroupKeys() []string    { return slices.Clone(groupKeys) }
func EnvelopeKeys() []string { return slices.Clone(envelopeKeys) }
