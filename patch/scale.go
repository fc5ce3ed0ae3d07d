package patch

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"

	"gopkg.in/yaml.v3"

	"sinter/patch/tuning"
)

// Tuning is a keyboard tuned by scale files: tuning: {scale, keymap}.
type Tuning struct {
	Scale Include // the .scl file, its path joined to the patch's folder
	// Keymap is the .kbm file; nil where key 60 plays degree 0 at its
	// 12-TET pitch from a4.
	Keymap      *Include
	Description string  // the scale's description line
	Pitches     int     // the scale's pitches, the period included
	PeriodCents float64 // the interval at which the scale repeats
	// Hz is the frequency of every MIDI key; 0 where the mapping leaves a
	// key unmapped.
	Hz tuning.Keys
	// TwelveTone says every key is mapped and at its 12-TET pitch, so a
	// sampler repitching a root by 12-TET semitones plays every key of
	// its range in tune, and the mapping needs no per-key regions.
	TwelveTone bool
}

// Mapped reports whether the tuning gives key k a pitch.
func (t *Tuning) Mapped(k int) bool { return t.Hz[k] > 0 }

// Offset is how many cents key sounds away from where a sampler puts it by
// repitching root's sample in 12-TET semitones: the scale's interval
// between the two keys less 100 cents a key. Both keys must be mapped.
func (t *Tuning) Offset(root, key int) float64 {
	return 1200*math.Log2(t.Hz[key]/t.Hz[root]) - 100*float64(key-root)
}

// The frequencies a root key may sound at under a scale: wider than 12-TET
// reaches from any a4 (1.86 Hz to 28.5 kHz), narrow enough that a typing
// slip in a scale file is not rendered as silence or a click.
const (
	minRootHz = 1
	maxRootHz = 100_000
)

// twelveToneCents is how close, in cents, every key must come to 12-TET
// for a scale to be rendered as 12-TET: far below any error a scale file's
// decimals leave, far above float64 rounding.
const twelveToneCents = 1e-6

// tuningFiles reads the tuning key's scale and keymap, whose nodes the
// decoder collected, and tunes the keyboard; a4Node is where a4 was set,
// if it was. Without a keymap, key 60 is degree 0 at its 12-TET pitch from
// a4, as the mapping a .kbm file would otherwise give.
func (d *decoder) tuningFiles(p *Patch, scaleNode, keymapNode, a4Node *yaml.Node) {
	if scaleNode == nil {
		if keymapNode != nil {
			d.errorf(d.resolve(keymapNode), "tuning.keymap", "a keymap places the keys of a scale; give the scale too: tuning: {scale: FILE.scl, keymap: FILE.kbm}")
		}
		return
	}
	if keymapNode != nil && a4Node != nil {
		d.errorf(d.resolve(a4Node), "tuning.a4", "the keymap gives the reference frequency, so a4 would have no effect; set the frequency in the .kbm file, or leave out the keymap")
		return
	}
	t := &Tuning{}
	data, ok := d.tuningFile(scaleNode, "tuning.scale", &t.Scale)
	if !ok {
		return
	}
	scale, err := tuning.ParseScale(t.Scale.Path, data)
	if !d.tuningError(err, "tuning.scale") {
		return
	}
	keymap := tuning.Linear(60, KeyFrequency(60, p.A4))
	if keymapNode != nil {
		t.Keymap = &Include{}
		data, ok := d.tuningFile(keymapNode, "tuning.keymap", t.Keymap)
		if !ok {
			return
		}
		keymap, err = tuning.ParseKeymap(t.Keymap.Path, data)
		if !d.tuningError(err, "tuning.keymap") {
			return
		}
	}
	t.Hz, err = tuning.Keyboard(scale, keymap)
	path := "tuning.scale"
	var e *tuning.Error
	if errors.As(err, &e) && t.Keymap != nil && e.File == t.Keymap.Path {
		path = "tuning.keymap"
	}
	if !d.tuningError(err, path) {
		return
	}
	t.Description, t.Pitches, t.PeriodCents = scale.Description, len(scale.Cents), scale.Period()
	// 12-TET from the reference: a4 itself without a keymap (key 60 was
	// placed from it), else the keymap's frequency moved to key 69.
	a4 := p.A4
	if t.Keymap != nil {
		a4 = keymap.Frequency / math.Exp2(float64(keymap.Reference-69)/12)
	}
	t.TwelveTone = snapTwelveTone(&t.Hz, a4)
	p.Tuning = t
}

// snapTwelveTone puts every mapped key at exactly its 12-TET frequency
// from a4 when each is within twelveToneCents of it, so a 12-TET scale
// renders files bit-identical to no scale; it reports whether it did and
// every key is mapped.
func snapTwelveTone(hz *tuning.Keys, a4 float64) bool {
	all := true
	for k, f := range hz {
		if f == 0 {
			all = false
			continue
		}
		if math.Abs(1200*math.Log2(f/KeyFrequency(k, a4))) > twelveToneCents {
			return false
		}
	}
	for k, f := range hz {
		if f != 0 {
			hz[k] = KeyFrequency(k, a4)
		}
	}
	return all
}

// tuningFile reads the file a tuning key names, relative to the patch's
// folder as includes are, and records its path and SHA-256.
func (d *decoder) tuningFile(n *yaml.Node, path string, inc *Include) ([]byte, bool) {
	name, ok := d.text(n, path)
	if !ok {
		return nil, false
	}
	if filepath.IsAbs(name) || name == "" {
		d.errorf(d.resolve(n), path, "%q must be a path relative to %s", name, filepath.Base(d.file))
		return nil, false
	}
	file := filepath.Join(filepath.Dir(d.file), name)
	data, err := readLimited(file, tuning.MaxFileBytes)
	if err != nil {
		d.errorf(d.resolve(n), path, "cannot read %s: %v", file, err)
		return nil, false
	}
	sum := sha256.Sum256(data)
	*inc = Include{Path: file, SHA256: hex.EncodeToString(sum[:])}
	return data, true
}

// tuningError reports an error of a scale or keymap file at its own place
// in that file; it returns whether there was none.
func (d *decoder) tuningError(err error, path string) bool {
	if err == nil {
		return true
	}
	var e *tuning.Error
	if errors.As(err, &e) {
		d.errs = append(d.errs, &Error{File: e.File, Line: e.Line, Column: e.Column, Path: path, Msg: e.Msg})
	} else {
		d.errs = append(d.errs, &Error{File: d.file, Path: path, Msg: err.Error()})
	}
	return false
}

// checkRoots reports each root key the tuning leaves unmapped or puts out
// of reach, at the place in keys that asked for it.
func (d *decoder) checkRoots(p *Patch, keyAt map[int]place) {
	t := p.Tuning
	if t == nil {
		return
	}
	by := t.Scale.Path
	if t.Keymap != nil {
		by = t.Keymap.Path
	}
	for _, k := range p.Keys {
		switch hz := t.Hz[k]; {
		case hz == 0:
			d.errorf(keyAt[k].node, keyAt[k].path, "key %s (%d) is unmapped by %s, so it has no pitch to render; leave it out of keys or map it", NoteName(k), k, by)
		case hz < minRootHz || hz > maxRootHz:
			d.errorf(keyAt[k].node, keyAt[k].path, "key %s (%d) would sound at %.4g Hz under the scale; a root key must sound between %d Hz and %d Hz", NoteName(k), k, hz, minRootHz, maxRootHz)
		}
	}
}

// keyHz is the frequency root key k renders at: the scale's where a scale
// tunes the keyboard, else 12-TET from a4.
func (p *Patch) keyHz(k int) float64 {
	if p.Tuning != nil {
		return p.Tuning.Hz[k]
	}
	return KeyFrequency(k, p.A4)
}

// readLimited reads a file of at most limit bytes, reading no further than
// one byte past it, so a path naming a device or a huge file fails at once.
func readLimited(file string, limit int64) ([]byte, error) {
	f, err := os.Open(file)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	data, err := io.ReadAll(io.LimitReader(f, limit+1))
	if err == nil && int64(len(data)) > limit {
		err = fmt.Errorf("it holds more than %d bytes, the most a scale file may", limit)
	}
	return data, err
}
