// Package page writes a set's review page: one self-contained index.html
// in the set's folder that shows every file's figures and picture and
// plays the set in a browser as its SFZ mapping would, through the Web
// Audio API, with nothing loaded from outside the folder. Serve it with
// Handler; opened as a file it still shows everything and says how to
// serve it.
package page

import (
	"bytes"
	_ "embed"
	"encoding/json"
	"errors"
	"fmt"
	"html"
	"io"
	"math"
	"os"
	"path"
	"path/filepath"
	"strconv"
	"strings"
	"sync"

	"sinter/patch"
	"sinter/synth/chart"
	"sinter/synth/manifest"
	"sinter/synth/mapping"
)

// FileName is the page's name in the set's folder.
const FileName = "index.html"

// The page's parts, written here and put into the one HTML file.
var (
	//go:embed assets/index.html
	pageHTML string
	//go:embed assets/page.css
	pageCSS string
	//go:embed assets/page.js
	pageJS string
)

// Caution is the README's caution, which the page repeats above the
// keyboard.
const Caution = "Synthesised sets can hold full-scale tones, DC and high-frequency content that can harm hearing and speakers. " +
	"Audition every new render at low volume, and raise it only once you know what the file holds."

// Region is a <region> of the mapping as the page plays it: the opcodes
// a sampler applies, with the format's defaults where the mapping sets
// none: pitch_keycenter 60, seq_length and seq_position 1, ampeg_release
// 0.001 s (sfzformat.com), lokey 0, hikey 127, lovel 0, hivel 127 (the
// sofiza crate's table of defaults; both in shared/reference/standards.md,
// section 3), volume 0 dB (from memory).
type Region struct {
	Sample      string  `json:"sample"` // relative to the page, '/'-separated
	Root        int     `json:"root"`
	LowKey      int     `json:"lokey"`
	HighKey     int     `json:"hikey"`
	LowVel      int     `json:"lovel"`
	HighVel     int     `json:"hivel"`
	LoopMode    string  `json:"loopMode"`
	LoopStart   int     `json:"loopStart"` // frames
	LoopEnd     int     `json:"loopEnd"`   // frames, inclusive
	SeqLength   int     `json:"seqLength"`
	SeqPosition int     `json:"seqPosition"`
	VolumeDB    float64 `json:"volume"`
	Release     float64 `json:"release"` // seconds
	Line        int     `json:"line"`    // of the <region> in the mapping
}

// File is a file of the set as the page lists it.
type File struct {
	manifest.File
	Picture string `json:"picture,omitempty"` // the PNG beside it; "" where it could not be drawn
}

// data is everything the page shows, written into it as JSON.
type data struct {
	Name       string            `json:"name"`
	Sinter     string            `json:"sinter"`
	Levelling  string            `json:"levelling"`
	Ceiling    manifest.Ceiling  `json:"ceiling"`
	Mapping    string            `json:"mapping"`
	SampleRate int               `json:"sampleRate"`
	Channels   int               `json:"channels"`
	Release    float64           `json:"release"` // the longest region release, seconds
	Regions    []Region          `json:"regions"`
	Files      []File            `json:"files"`
	Notices    []string          `json:"notices"` // what the page could not do, said on it
	Caution    string            `json:"caution"`
	Keys       map[string]string `json:"keys"` // computer keys and what they do
}

// computerKeys are the letters that play an octave from C and the two
// that shift it, as a row of a typewriter keyboard lies (common
// practice): white keys on the home row, black keys above them.
var computerKeys = map[string]string{
	"a": "0", "w": "1", "s": "2", "e": "3", "d": "4", "f": "5", "t": "6", "g": "7", "y": "8", "h": "9", "u": "10", "j": "11", "k": "12",
	"z": "octave down", "x": "octave up",
}

// PictureName is the name of the picture of the file at p, beside it.
func PictureName(p string) string { return strings.TrimSuffix(p, path.Ext(p)) + ".png" }

// Write writes the page of the set in dir, and a picture beside each of
// its files, through write (which writes a base name in dir atomically),
// drawing jobs pictures at once. It reads the manifest, the mapping and
// the files; a file it cannot read or draw is said on the page, not an
// error, but a manifest or mapping it cannot read is.
func Write(dir string, jobs int, write func(name string, fill func(io.Writer) error) error) error {
	m, err := manifest.Read(filepath.Join(dir, manifest.FileName))
	if err != nil {
		return err
	}
	d := &data{Name: m.Patch.Name, Sinter: m.Sinter, Levelling: m.Levelling, Ceiling: manifest.Ceiling{Level: 0, Unit: "dBFS"},
		Mapping: m.Mapping, Caution: Caution, Keys: computerKeys, Regions: []Region{}, Notices: []string{}}
	if m.Ceiling != nil {
		d.Ceiling = *m.Ceiling
	}
	if len(m.Files) > 0 {
		d.SampleRate, d.Channels = m.Files[0].SampleRate, m.Files[0].Channels
	}
	if err := d.readMapping(dir, m); err != nil {
		return err
	}
	d.Files = make([]File, len(m.Files))
	notices := make([]string, len(m.Files))
	var wg sync.WaitGroup
	next := make(chan int)
	for range max(1, jobs) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				f := m.Files[i]
				d.Files[i] = File{File: f}
				if err := drawPicture(dir, f, write); err != nil {
					notices[i] = fmt.Sprintf("no picture of %s: %v", f.Path, err)
					continue
				}
				d.Files[i].Picture = PictureName(f.Path)
			}
		}()
	}
	for i := range m.Files {
		next <- i
	}
	close(next)
	wg.Wait()
	for _, n := range notices {
		if n != "" {
			d.Notices = append(d.Notices, n)
		}
	}
	return write(FileName, func(w io.Writer) error { return d.writeHTML(w) })
}

// drawPicture draws file f of the set in dir into the PNG beside it.
func drawPicture(dir string, f manifest.File, write func(string, func(io.Writer) error) error) error {
	if strings.Contains(f.Path, "/") {
		return errors.New("the page draws files at the top of the set's folder only")
	}
	samples, channels, rate, err := readSamples(filepath.Join(dir, filepath.FromSlash(f.Path)))
	if err != nil {
		return err
	}
	// The loop, where the note sustains; without one, the loudest moment,
	// which for a struck note is just after the strike.
	steady := 0
	if f.Loop != nil {
		steady = f.Loop.Start
	} else {
		peak := 0.0
		for i, v := range samples {
			if math.Abs(v) > peak {
				peak, steady = math.Abs(v), i/max(1, channels)
			}
		}
	}
	f0 := f.F0Hz
	if f0 == 0 {
		f0 = patch.KeyFrequency(f.Key, 440) // a manifest that predates f0_hz
	}
	s := chart.Samples{Data: samples, Channels: channels, SampleRate: rate, F0: f0, Steady: steady, Title: f.Path}
	return write(PictureName(f.Path), func(w io.Writer) error { return chart.WriteSamples(w, s, 900, 640) })
}

// readMapping reads the set's SFZ mapping into d.Regions as a sampler
// would apply it. A region whose sample lies outside the set's folder is
// left out and said on the page: the page loads nothing from outside it.
func (d *data) readMapping(dir string, m *manifest.Manifest) error {
	file := filepath.Join(dir, filepath.FromSlash(m.Mapping))
	f, err := os.Open(file)
	if err != nil {
		return fmt.Errorf("cannot read the mapping: %w", err)
	}
	defer f.Close()
	placed, err := mapping.ReadSFZ(f)
	var at *mapping.ReadError
	if errors.As(err, &at) {
		return fmt.Errorf("%s:%d:%d: %s", file, at.Line, at.Column, at.Msg)
	}
	if err != nil {
		return fmt.Errorf("%s: %w", file, err)
	}
	for _, p := range placed {
		r, err := region(p, m.Mapping)
		if err != nil {
			return fmt.Errorf("%s:%d:%d: %w", file, p.Line, p.Column, err)
		}
		if r.Sample == "" {
			d.Notices = append(d.Notices, fmt.Sprintf("%s:%d: the region's sample lies outside the set's folder; the page does not play it", m.Mapping, p.Line))
			continue
		}
		d.Regions = append(d.Regions, r)
		d.Release = max(d.Release, r.Release)
	}
	return nil
}

// region reads one placed region's opcodes; its Sample is "" when the
// sample lies outside the folder of the mapping.
func region(p mapping.PlacedRegion, mappingPath string) (Region, error) {
	r := Region{Root: 60, LowKey: 0, HighKey: 127, LowVel: 0, HighVel: 127, SeqLength: 1, SeqPosition: 1, Release: 0.001, Line: p.Line,
		LoopMode: p.Opcodes["loop_mode"]}
	var problems []string
	number := func(name string, into *float64) {
		if v, ok := p.Opcodes[name]; ok {
			f, err := strconv.ParseFloat(v, 64)
			if err != nil || math.IsNaN(f) || math.IsInf(f, 0) {
				problems = append(problems, fmt.Sprintf("%s=%s is not a number", name, v))
				return
			}
			*into = f
		}
	}
	key := func(name string, into *int) {
		if v, ok := p.Opcodes[name]; ok {
			// Keys are MIDI numbers or note names with C4 = 60, as
			// sinter and the SFZ format write them.
			k, err := patch.ParseNote(v)
			if err != nil {
				problems = append(problems, fmt.Sprintf("%s=%s is not a key", name, v))
				return
			}
			*into = k
		}
	}
	integer := func(name string, into *int) {
		if v, ok := p.Opcodes[name]; ok {
			n, err := strconv.Atoi(v)
			if err != nil {
				problems = append(problems, fmt.Sprintf("%s=%s is not a whole number", name, v))
				return
			}
			*into = n
		}
	}
	// key= sets all three (sfzformat.com, "key"); the others, after it,
	// override it.
	key("key", &r.Root)
	if _, ok := p.Opcodes["key"]; ok {
		r.LowKey, r.HighKey = r.Root, r.Root
	}
	key("pitch_keycenter", &r.Root)
	key("lokey", &r.LowKey)
	key("hikey", &r.HighKey)
	integer("lovel", &r.LowVel)
	integer("hivel", &r.HighVel)
	integer("loop_start", &r.LoopStart)
	integer("loop_end", &r.LoopEnd)
	integer("seq_length", &r.SeqLength)
	integer("seq_position", &r.SeqPosition)
	number("volume", &r.VolumeDB)
	number("ampeg_release", &r.Release)
	if len(problems) > 0 {
		return r, errors.New(strings.Join(problems, "; "))
	}
	if r.LoopMode == "" {
		r.LoopMode = "no_loop"
		if _, ok := p.Opcodes["loop_end"]; ok {
			r.LoopMode = "loop_continuous" // the format's default for a sample with a loop
		}
	}
	r.SeqLength = max(1, r.SeqLength)
	sample := strings.ReplaceAll(p.Sample, "\\", "/")
	rel := path.Clean(path.Join(path.Dir(mappingPath), sample))
	if sample == "" || strings.HasPrefix(sample, "/") || strings.Contains(sample, ":") || rel == ".." || strings.HasPrefix(rel, "../") {
		return r, nil
	}
	r.Sample = rel
	return r, nil
}

// writeHTML writes the page: the HTML with the style, the script and the
// data in it, the data as JSON with <, > and & escaped, so no value can
// end the script element it sits in.
func (d *data) writeHTML(w io.Writer) error {
	js, err := json.Marshal(d)
	if err != nil {
		return err
	}
	out := strings.NewReplacer(
		"{{TITLE}}", html.EscapeString(d.Name),
		"{{STYLE}}", pageCSS,
		"{{SCRIPT}}", pageJS,
		"{{DATA}}", string(js),
	).Replace(pageHTML)
	_, err = io.Copy(w, bytes.NewBufferString(out))
	return err
}
