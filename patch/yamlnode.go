package patch

import (
	"fmt"
	"math"
	"math/big"
	"slices"
	"strconv"
	"strings"

	"gopkg.in/yaml.v3"

	"sinter/patch/spelling"
)

// maxNodeVisits bounds the work of walking a patch, so that a document whose
// aliases expand exponentially ("billion laughs") is refused instead of
// exhausting memory or time.
const maxNodeVisits = 200_000

// decoder walks a YAML node tree, collecting every problem with its position
// rather than stopping at the first.
type decoder struct {
	file   string
	errs   ErrorList
	visits int
	// chain is the files being read, the patch first, to catch an include
	// cycle; includes collects every file included, shared by all.
	chain    []string
	includes *[]Include
	// lines is the file's text, to tell whether a scalar stands verbatim.
	lines [][]byte
}

func (d *decoder) errorf(n *yaml.Node, path, format string, args ...any) {
	e := &Error{File: d.file, Path: path, Msg: fmt.Sprintf(format, args...)}
	if n != nil {
		e.Line, e.Column = n.Line, n.Column
	}
	d.errs = append(d.errs, e)
}

// resolve follows aliases to the node they name and counts the visit.
func (d *decoder) resolve(n *yaml.Node) *yaml.Node {
	for n != nil && n.Kind == yaml.AliasNode {
		n = n.Alias
	}
	d.visits++
	return n
}

func (d *decoder) overBudget() bool { return d.visits > maxNodeVisits }

// fields walks the mapping n, calling handle for each key in known, and
// reports keys that are unknown (with the nearest known name), repeated, or not
// strings. Merge keys ("<<: *defaults") bring in the keys of the merged
// mappings that n does not set itself, as YAML 1.1 merge keys do.
func (d *decoder) fields(n *yaml.Node, path string, known []string, handle func(key string, v *yaml.Node, path string)) {
	n = d.resolve(n)
	if n.Kind != yaml.MappingNode {
		d.errorf(n, path, "expected a mapping of keys (%s), found %s", strings.Join(known, ", "), describe(n))
		return
	}
	seen := map[string]*yaml.Node{}
	var merged []*yaml.Node
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, v := d.resolve(n.Content[i]), n.Content[i+1]
		if k.Kind != yaml.ScalarNode {
			d.errorf(k, path, "keys must be plain names, found %s", describe(k))
			continue
		}
		if k.Value == "<<" && k.Tag == "!!merge" {
			merged = append(merged, v)
			continue
		}
		sub := joinPath(path, k.Value)
		if first, dup := seen[k.Value]; dup {
			d.errorf(k, sub, "key %q is set twice (first at line %d)", k.Value, first.Line)
			continue
		}
		seen[k.Value] = k
		if !slices.Contains(known, k.Value) {
			if guess := spelling.Nearest(k.Value, known); guess != "" {
				d.errorf(k, sub, "unknown key %q (did you mean %q?)", k.Value, guess)
			} else {
				d.errorf(k, sub, "unknown key %q; expected one of %s", k.Value, strings.Join(known, ", "))
			}
			continue
		}
		handle(k.Value, v, sub)
	}
	done := map[*yaml.Node]bool{}
	for _, m := range merged {
		if d.overBudget() {
			return
		}
		d.mergeFields(m, path, known, seen, done, handle)
	}
}

// mergeFields applies one merge-key value: a mapping or a list of mappings.
// A merged mapping's own merge keys count too, below its own keys; done
// holds the mappings already merged, so each is walked once however often
// it is named (and a mapping that merges itself ends).
func (d *decoder) mergeFields(m *yaml.Node, path string, known []string, seen map[string]*yaml.Node, done map[*yaml.Node]bool, handle func(string, *yaml.Node, string)) {
	m = d.resolve(m)
	sources := []*yaml.Node{m}
	if m.Kind == yaml.SequenceNode {
		sources = m.Content
	}
	for _, src := range sources {
		src = d.resolve(src)
		if src.Kind != yaml.MappingNode {
			d.errorf(src, path, "a merge key (<<) takes a mapping or a list of mappings, found %s", describe(src))
			continue
		}
		if done[src] {
			continue
		}
		done[src] = true
		var nested []*yaml.Node
		for i := 0; i+1 < len(src.Content); i += 2 {
			k := d.resolve(src.Content[i])
			if k.Kind == yaml.ScalarNode && k.Value == "<<" && k.Tag == "!!merge" {
				nested = append(nested, src.Content[i+1])
				continue
			}
			if _, set := seen[k.Value]; set || k.Kind != yaml.ScalarNode || !slices.Contains(known, k.Value) {
				continue
			}
			seen[k.Value] = k
			handle(k.Value, src.Content[i+1], joinPath(path, k.Value))
		}
		for _, m := range nested {
			if d.overBudget() {
				return
			}
			d.mergeFields(m, path, known, seen, done, handle)
		}
	}
}

func joinPath(path, key string) string {
	if path == "" {
		return key
	}
	return path + "." + key
}

func describe(n *yaml.Node) string {
	switch n.Kind {
	case yaml.MappingNode:
		return "a mapping"
	case yaml.SequenceNode:
		return "a list"
	case yaml.ScalarNode:
		switch n.ShortTag() {
		case "!!str":
			return fmt.Sprintf("the text %q", clip(n.Value))
		case "!!null":
			return "nothing"
		default:
			return fmt.Sprintf("%q", clip(n.Value))
		}
	}
	return "an unsupported YAML node"
}

func clip(s string) string {
	if len(s) > 40 {
		return s[:37] + "..."
	}
	return s
}

// number reads a finite number.
func (d *decoder) number(n *yaml.Node, path string) (float64, bool) {
	n = d.resolve(n)
	if n.Kind == yaml.ScalarNode && (n.ShortTag() == "!!int" || n.ShortTag() == "!!float") {
		s := strings.ReplaceAll(n.Value, "_", "")
		if t := strings.TrimLeft(s, "+-"); strings.EqualFold(t, ".inf") || strings.EqualFold(t, ".nan") {
			s = strings.Replace(s, ".", "", 1) // YAML's .inf and .nan are ParseFloat's inf and nan
		}
		v, err := strconv.ParseFloat(s, 64)
		if n.ShortTag() == "!!int" && err != nil {
			var i int64
			i, err = strconv.ParseInt(s, 0, 64)
			v = float64(i)
		}
		if err == nil && !math.IsInf(v, 0) && !math.IsNaN(v) {
			return v, true
		}
		if err == nil {
			d.errorf(n, path, "expected a finite number, found %s", n.Value)
			return 0, false
		}
	}
	d.errorf(n, path, "expected a number, found %s", describe(n))
	return 0, false
}

// integer reads a whole number that rule r allows. Above 2^53 a float64
// no longer holds every whole number, so there the text is compared
// exactly, and 2^53 + 1 is not taken for 2^53.
func (d *decoder) integer(n *yaml.Node, path string, r *Rule) (int, bool) {
	n = d.resolve(n)
	v, ok := d.number(n, path)
	if !ok {
		return 0, false
	}
	if v != math.Trunc(v) {
		d.errorf(n, path, "expected a whole number, found %s", n.Value)
		return 0, false
	}
	if r.Values != nil {
		if !slices.Contains(r.Values, int(v)) {
			d.errorf(n, path, "%s %s is not supported: expected %s", r.Noun, n.Value, joinInts(r.Values))
			return 0, false
		}
		return int(v), true
	}
	if v < r.Min || v > r.Max || math.Abs(v) >= 1<<53 && !exactlyWithin(n, r) {
		d.errorf(n, path, "%s is out of range: expected %d..%d", n.Value, int64(r.Min), int64(r.Max))
		return 0, false
	}
	return int(v), true
}

// exactlyWithin reports whether the number scalar n, read exactly, lies in
// r's range.
func exactlyWithin(n *yaml.Node, r *Rule) bool {
	s := strings.ReplaceAll(n.Value, "_", "")
	x, ok := new(big.Rat).SetString(s)
	if !ok {
		i, ok := new(big.Int).SetString(s, 0) // 0x, 0o and 0b integers
		if !ok {
			return false
		}
		x = new(big.Rat).SetInt(i)
	}
	lo, _ := new(big.Rat).SetString(strconv.FormatFloat(r.Min, 'f', -1, 64))
	hi, _ := new(big.Rat).SetString(strconv.FormatFloat(r.Max, 'f', -1, 64))
	return x.Cmp(lo) >= 0 && x.Cmp(hi) <= 0
}

func joinInts(values []int) string {
	s := make([]string, len(values))
	for i, v := range values {
		s[i] = strconv.Itoa(v)
	}
	return strings.Join(s[:len(s)-1], ", ") + " or " + s[len(s)-1]
}

// ranged reads a number within rule r's range.
func (d *decoder) ranged(n *yaml.Node, path string, r *Rule) (float64, bool) {
	v, ok := d.number(n, path)
	if ok && (v < r.Min || v > r.Max) {
		d.errorf(d.resolve(n), path, "%g%s is out of range: expected %g..%g%s", v, r.Unit, r.Min, r.Max, r.Unit)
		return 0, false
	}
	return v, ok
}

// word reads one of rule r's words; an empty result means it reported the
// value.
func (d *decoder) word(n *yaml.Node, path string, r *Rule) string {
	s, ok := d.text(n, path)
	if !ok {
		return ""
	}
	if !slices.Contains(r.Words, s) {
		d.errorf(d.resolve(n), path, "%q is not %s; expected one of %s", clip(s), r.Noun, r.words())
		return ""
	}
	return s
}

// text reads a scalar as a string.
func (d *decoder) text(n *yaml.Node, path string) (string, bool) {
	n = d.resolve(n)
	if n.Kind != yaml.ScalarNode || n.ShortTag() == "!!null" {
		d.errorf(n, path, "expected text, found %s", describe(n))
		return "", false
	}
	return n.Value, true
}

// items returns the elements of a list, or the node itself when a single
// value stands where a list is allowed.
func (d *decoder) items(n *yaml.Node) []*yaml.Node {
	n = d.resolve(n)
	if n.Kind == yaml.SequenceNode {
		return n.Content
	}
	return []*yaml.Node{n}
}
