package patch

import (
	"fmt"
	"math"
	"regexp"
	"slices"
	"strconv"

	"gopkg.in/yaml.v3"
)

// levelPattern reads a level written as text, such as "-1 dBFS", "-16 LUFS"
// or "-1 dBTP": a decimal number without an exponent, so that the schema
// can hold its range as a pattern, and a unit.
var levelPattern = regexp.MustCompile(`^\s*([+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+))\s*(dBFS|dBTP|LUFS|dB)?\s*$`)

// level reads a number, or a level with one of rule r's units, within r's
// range; it returns the value and its unit.
func (d *decoder) level(n *yaml.Node, path string, r *Rule) (float64, string, bool) {
	node := d.resolve(n)
	if node.Kind == yaml.ScalarNode && (node.ShortTag() == "!!int" || node.ShortTag() == "!!float") {
		v, ok := d.ranged(node, path, &Rule{Min: r.Min, Max: r.Max, Unit: " " + r.Units[0]})
		return v, r.Units[0], ok
	}
	m := levelPattern.FindStringSubmatch(node.Value)
	if node.Kind != yaml.ScalarNode || m == nil {
		d.errorf(node, path, "expected a level such as -1 %s, found %s", r.Units[0], describe(node))
		return 0, "", false
	}
	unit := m[2]
	if unit == "" || unit == "dB" {
		unit = r.Units[0]
	}
	if !slices.Contains(r.Units, unit) {
		d.errorf(node, path, "%s is not a unit for this level; expected %v", m[2], r.Units)
		return 0, "", false
	}
	v, _ := strconv.ParseFloat(m[1], 64)
	if v < r.Min || v > r.Max {
		d.errorf(node, path, "%g %s is out of range: expected %g..%g %s", v, unit, r.Min, r.Max, unit)
		return 0, "", false
	}
	return v, unit, true
}

func defaultNormalize() Normalize {
	return Normalize{Measure: MeasurePeak, Target: -1, Scope: ScopeSet, Ceiling: 0}
}

// String describes the levelling in the words of the patch's keys, such as
// "peak -1 dBFS, one gain per key, ceiling 0 dBFS".
func (n Normalize) String() string {
	if n.Measure == MeasureOff {
		return "off"
	}
	target := map[Measure]string{MeasurePeak: "peak %g dBFS", MeasureTruePeak: "true peak %g dBTP", MeasureLoudness: "loudness %g LUFS"}[n.Measure]
	scope := [...]string{"one gain for the set", "one gain per key", "one gain per file"}[n.Scope]
	unit := "dBFS"
	if n.CeilingTruePeak {
		unit = "dBTP"
	}
	return fmt.Sprintf(target+", %s, ceiling %g %s", n.Target, scope, n.Ceiling, unit)
}

var scopeNames = map[string]Scope{"set": ScopeSet, "key": ScopeKey, "file": ScopeFile}

// normalize reads off, or a mapping with one of peak, true_peak and loudness,
// and optionally scope, ceiling and strict.
func (d *decoder) normalize(n *yaml.Node, path string) Normalize {
	norm := defaultNormalize()
	if r := d.resolve(n); r.Kind == yaml.ScalarNode {
		if slices.Contains(normalizeRule.Words, r.Value) {
			return Normalize{Measure: MeasureOff, Ceiling: 0}
		}
		d.errorf(r, path, "expected off or a mapping such as {peak: -1 dBFS}, found %s", describe(r))
		return norm
	}
	measures := 0
	d.fields(n, path, []string{"peak", "true_peak", "loudness", "scope", "ceiling", "strict"}, func(key string, v *yaml.Node, path string) {
		switch key {
		case "peak":
			measures++
			norm.Measure = MeasurePeak
			norm.Target, _, _ = d.level(v, path, peakRule)
		case "true_peak":
			measures++
			norm.Measure = MeasureTruePeak
			norm.Target, _, _ = d.level(v, path, truePeakRule)
		case "loudness":
			measures++
			norm.Measure = MeasureLoudness
			norm.Target, _, _ = d.level(v, path, loudnessRule)
		case "scope":
			if s := d.word(v, path, scopeRule); s != "" {
				norm.Scope = scopeNames[s]
			}
		case "ceiling":
			c, unit, _ := d.level(v, path, ceilingRule)
			norm.Ceiling, norm.CeilingTruePeak = c, unit == "dBTP"
		case "strict":
			norm.Strict = d.onOff(v, path)
		}
	})
	if measures > 1 {
		d.errorf(d.resolve(n), path, "give one of peak, true_peak and loudness, not %d", measures)
	}
	return norm
}

// onOff reads a switch: true/false, on/off or yes/no, the words of
// switchRule in pairs.
func (d *decoder) onOff(n *yaml.Node, path string) bool {
	r := d.resolve(n)
	i := slices.Index(switchRule.Words, r.Value)
	if r.Kind != yaml.ScalarNode || i < 0 {
		d.errorf(r, path, "expected on or off, found %s", describe(r))
		return false
	}
	return i%2 == 0
}

// tail reads a tail length in seconds, auto (until −90 dBFS), or
// {until: LEVEL, max: SECONDS}.
func (d *decoder) tail(n *yaml.Node, path string) (seconds, until float64) {
	const defaultUntil = -90.0
	r := d.resolve(n)
	if r.Kind == yaml.ScalarNode && slices.Contains(tailRule.Words, r.Value) {
		return MaxSeconds, math.Pow(10, defaultUntil/20)
	}
	if r.Kind == yaml.ScalarNode {
		s, _ := d.ranged(r, path, tailRule)
		return s, 0
	}
	seconds, untilDB := float64(MaxSeconds), defaultUntil
	d.fields(r, path, []string{"until", "max"}, func(key string, v *yaml.Node, path string) {
		switch key {
		case "until":
			untilDB, _, _ = d.level(v, path, tailUntilRule)
		case "max":
			seconds, _ = d.ranged(v, path, tailMaxRule)
		}
	})
	return seconds, math.Pow(10, untilDB/20)
}

// loop reads off, auto, or {start, length, crossfade, exact}.
func (d *decoder) loop(n *yaml.Node, path string) LoopSpec {
	r := d.resolve(n)
	spec := LoopSpec{Line: r.Line, Column: r.Column, Mode: LoopAuto, Start: -1, Length: 1, Crossfade: 0.05}
	if r.Kind == yaml.ScalarNode {
		// The first two of loopRule's words turn the loop off, the others on.
		switch i := slices.Index(loopRule.Words, r.Value); {
		case i >= 0 && i < 2:
			return LoopSpec{}
		case i >= 2:
			return spec
		}
		d.errorf(r, path, "expected off, auto or a mapping such as {length: 1, crossfade: 0.05}, found %s", describe(r))
		return spec
	}
	d.fields(r, path, []string{"start", "length", "crossfade", "exact"}, func(key string, v *yaml.Node, path string) {
		switch key {
		case "start":
			spec.Start, _ = d.ranged(v, path, loopStartRule)
		case "length":
			spec.Length, _ = d.ranged(v, path, loopLengthRule)
		case "crossfade":
			spec.Crossfade, _ = d.ranged(v, path, crossfadeRule)
		case "exact":
			spec.Exact = d.onOff(v, path)
		}
	})
	return spec
}
