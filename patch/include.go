package patch

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"gopkg.in/yaml.v3"
)

// Include is a file a patch pulled partial groups from.
type Include struct {
	Path   string // as the including file wrote it, joined to that file's folder
	SHA256 string // hex, of the file's bytes
}

// maxIncludes bounds the files one patch may pull in, nested ones counted.
const maxIncludes = 64

// includeKeys are the keys an included file may have: its groups and the
// envelope they default to.
var includeKeys = []string{"partials", "envelope"}

// includeTarget returns the value of a partials entry that is an include,
// {include: FILE}, or nil for an ordinary group.
func (d *decoder) includeTarget(item *yaml.Node, path string) *yaml.Node {
	if item.Kind != yaml.MappingNode || !hasKey(item, "include") {
		return nil
	}
	if len(item.Content) != 2 {
		d.errorf(item, path, "an include stands alone: {include: strings.yaml}; set amplitudes and envelopes in the included file")
	}
	return item.Content[1]
}

// include reads the groups of the file that v names, relative to the file
// being read. The included file holds a partials list and, optionally, an
// envelope its groups default to (else they default to the includer's).
func (d *decoder) include(v *yaml.Node, path string, defaults EnvelopeSpec) []Group {
	name, ok := d.text(v, path)
	if !ok {
		return nil
	}
	if filepath.IsAbs(name) || name == "" {
		d.errorf(d.resolve(v), path, "include %q must be a path relative to %s", name, filepath.Base(d.file))
		return nil
	}
	file := filepath.Join(filepath.Dir(d.file), name)
	if slices.Contains(d.chain, filepath.Clean(file)) {
		d.errorf(d.resolve(v), path, "include cycle: %s", strings.Join(append(d.chain, file), " includes "))
		return nil
	}
	if len(*d.includes) >= maxIncludes {
		d.errorf(d.resolve(v), path, "more than %d includes; a patch may pull in at most that many files", maxIncludes)
		return nil
	}
	data, err := os.ReadFile(file)
	if err == nil && len(data) > maxPatchBytes {
		err = fmt.Errorf("it is %d bytes; included files are limited to %d", len(data), maxPatchBytes)
	}
	if err != nil {
		d.errorf(d.resolve(v), path, "cannot include %s: %v", file, err)
		return nil
	}
	sum := sha256.Sum256(data)
	*d.includes = append(*d.includes, Include{Path: file, SHA256: hex.EncodeToString(sum[:])})
	var doc yaml.Node
	if err := yaml.Unmarshal(data, &doc); err != nil {
		d.errs = append(d.errs, syntaxError(file, data, err))
		return nil
	}
	if doc.Kind == 0 || len(doc.Content) == 0 {
		d.errs = append(d.errs, &Error{File: file, Line: 1, Column: 1, Msg: "the included file is empty; it needs a partials list"})
		return nil
	}
	sub := &decoder{file: file, chain: append(slices.Clip(d.chain), filepath.Clean(file)), includes: d.includes, lines: bytes.Split(data, []byte("\n"))}
	root := sub.resolve(doc.Content[0])
	var partials, envelope *yaml.Node
	sub.fields(root, "", includeKeys, func(key string, v *yaml.Node, _ string) {
		switch key {
		case "partials":
			partials = v
		case "envelope":
			envelope = v
		}
	})
	if envelope != nil {
		defaults = sub.envelope(envelope, "envelope", defaults)
	}
	var groups []Group
	if partials == nil {
		sub.errorf(root, "partials", "an included file needs a partials list")
	} else {
		groups = sub.groups(partials, "partials", defaults)
	}
	d.visits += sub.visits
	d.errs = append(d.errs, sub.errs...)
	return groups
}
