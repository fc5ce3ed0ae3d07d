package patch

import (
	"fmt"
	"math"
	"regexp"
	"strconv"

	"gopkg.in/yaml.v3"
)

// levelPattern reads a level such as "-1 dBFS", "-16 LUFS" or "-1 dBTP".
var levelPattern = regexp.MustCompile(`^\s*([+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?)\s*(dBFS|dBTP|LUFS|dB)?\s*$`)

// level reads a number with an optional unit; units lists the ones allowed.
func (d *decoder) level(n *yaml.Node, path string, lo, hi float64, units ...string) (float64, string, bool) {
	r := d.resolve(n)
	m := levelPattern.FindStringSubmatch(r.Value)
	if r.Kind != yaml.ScalarNode || m == nil {
		d.errorf(r, path, "expected a level such as -1 %s, found %s", units[0], describe(r))
		return 0, "", false
	}
	unit := m[2]
	if unit == "" || unit == "dB" {
		unit = units[0]
	}
	allowed := false
	for _, u := range units {
		allowed = allowed || u == unit
	}
	if !allowed {
		d.errorf(r, path, "%s is not a unit for this level; expected %v", m[2], units)
		return 0, "", false
	}
	v, _ := strconv.ParseFloat(m[1], 64)
	if v < lo || v > hi {
		d.errorf(r, path, "%g %s is out of range: expected %g..%g %s", v, unit, lo, hi, unit)
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
		if r.Value == "off" || r.Value == "false" {
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
			norm.Target, _, _ = d.level(v, path, -60, 0, "dBFS")
		case "true_peak":
			measures++
			norm.Measure = MeasureTruePeak
			norm.Target, _, _ = d.level(v, path, -60, 0, "dBTP")
		case "loudness":
			measures++
			norm.Measure = MeasureLoudness
			norm.Target, _, _ = d.level(v, path, -70, 0, "LUFS")
		case "scope":
			s, _ := d.text(v, path)
			scope, ok := scopeNames[s]
			if !ok {
				d.errorf(d.resolve(v), path, "scope %q is not one of set, key, file", clip(s))
			}
			norm.Scope = scope
		case "ceiling":
			c, unit, _ := d.level(v, path, -60, 0, "dBFS", "dBTP")
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

// onOff reads a switch: true/false, on/off or yes/no.
func (d *decoder) onOff(n *yaml.Node, path string) bool {
	r := d.resolve(n)
	switch r.Value {
	case "true", "on", "yes":
		return true
	case "false", "off", "no":
		return false
	}
	d.errorf(r, path, "expected on or off, found %s", describe(r))
	return false
}

// tail reads a tail length in seconds, auto (until −90 dBFS), or
// {until: LEVEL, max: SECONDS}.
func (d *decoder) tail(n *yaml.Node, path string) (seconds, until float64) {
	const defaultUntil = -90.0
	r := d.resolve(n)
	if r.Kind == yaml.ScalarNode && r.Value == "auto" {
		return MaxSeconds, math.Pow(10, defaultUntil/20)
	}
	if r.Kind == yaml.ScalarNode {
		s, _ := d.ranged(r, path, 0, MaxSeconds, " s")
		return s, 0
	}
	seconds, untilDB := float64(MaxSeconds), defaultUntil
	d.fields(r, path, []string{"until", "max"}, func(key string, v *yaml.Node, path string) {
		switch key {
		case "until":
			untilDB, _, _ = d.level(v, path, -200, -20, "dBFS")
		case "max":
			seconds, _ = d.ranged(v, path, 0, MaxSeconds, " s")
		}
	})
	return seconds, math.Pow(10, untilDB/20)
}

// loop reads off, auto, or {start, length, crossfade, exact}.
func (d *decoder) loop(n *yaml.Node, path string) LoopSpec {
	r := d.resolve(n)
	spec := LoopSpec{Line: r.Line, Column: r.Column, Mode: LoopAuto, Start: -1, Length: 1, Crossfade: 0.05}
	if r.Kind == yaml.ScalarNode {
		switch r.Value {
		case "off", "false":
			return LoopSpec{}
		case "auto", "on", "true":
			return spec
		}
		d.errorf(r, path, "expected off, auto or a mapping such as {length: 1, crossfade: 0.05}, found %s", describe(r))
		return spec
	}
	d.fields(r, path, []string{"start", "length", "crossfade", "exact"}, func(key string, v *yaml.Node, path string) {
		switch key {
		case "start":
			spec.Start, _ = d.ranged(v, path, 0, MaxSeconds, " s")
		case "length":
			spec.Length, _ = d.ranged(v, path, 0.01, MaxSeconds, " s")
		case "crossfade":
			spec.Crossfade, _ = d.ranged(v, path, 0.001, 10, " s")
		case "exact":
			spec.Exact = d.onOff(v, path)
		}
	})
	return spec
}
