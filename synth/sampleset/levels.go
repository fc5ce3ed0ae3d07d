package sampleset

import (
	"context"
	"fmt"
	"math"
	"strings"

	"sinter/patch"
	"sinter/synth"
)

// levels are the measurements of one file.
type levels struct {
	peak     float64 // linear sample peak
	truePeak float64 // linear true peak
	loudness float64 // LUFS; −Inf for silence
}

func decibels(linear float64) float64 { return 20 * math.Log10(linear) }

// needs says which measurements levelling must take in the first pass.
func needs(n patch.Normalize) (truePeak, loudness bool) {
	if n.Measure == patch.MeasureOff {
		return false, false
	}
	return n.Measure == patch.MeasureTruePeak || n.CeilingTruePeak, n.Measure == patch.MeasureLoudness
}

// levelGains returns the gain of every file: within each scope the loudest
// file lands on the target, and then, if any file would pass the ceiling,
// the scope's gain is lowered until it does not (or, when the patch is
// strict, that is an error).
func levelGains(norm patch.Normalize, notes []patch.Note, lv []levels) ([]float64, []string, error) {
	gains := make([]float64, len(notes))
	for i := range gains {
		gains[i] = 1
	}
	if norm.Measure == patch.MeasureOff {
		return gains, nil, nil
	}
	var scopes [][]int
	index := map[int]int{}
	for i, n := range notes {
		id := 0
		switch norm.Scope {
		case patch.ScopeKey:
			id = n.Key
		case patch.ScopeFile:
			id = i
		}
		s, ok := index[id]
		if !ok {
			s = len(scopes)
			index[id] = s
			scopes = append(scopes, nil)
		}
		scopes[s] = append(scopes[s], i)
	}
	var warnings []string
	ceiling := math.Pow(10, norm.Ceiling/20)
	for _, scope := range scopes {
		loudest := math.Inf(-1)
		for _, i := range scope {
			loudest = max(loudest, measured(norm.Measure, lv[i]))
		}
		if math.IsInf(loudest, -1) {
			continue // a silent scope keeps unity gain
		}
		gain := math.Pow(10, (norm.Target-loudest)/20)
		worst, worstFile := 0.0, 0
		for _, i := range scope {
			level := lv[i].peak
			if norm.CeilingTruePeak {
				level = lv[i].truePeak
			}
			if level*gain > worst {
				worst, worstFile = level*gain, i
			}
		}
		if worst > ceiling*(1+1e-12) {
			msg := fmt.Sprintf("levelling to %s would take %s to %+.2f %s, over the ceiling of %g %s",
				strings.SplitN(norm.String(), ",", 2)[0], notes[worstFile].File, decibels(worst), ceilingUnit(norm), norm.Ceiling, ceilingUnit(norm))
			if norm.Strict {
				return nil, nil, fmt.Errorf("%s (normalize.strict is on)", msg)
			}
			lowered := ceiling / worst
			gain *= lowered
			warnings = append(warnings, fmt.Sprintf("%s; lowered its scope's gain by %.2f dB", msg, -decibels(lowered)))
		}
		for _, i := range scope {
			gains[i] = gain
		}
	}
	return gains, warnings, nil
}

func ceilingUnit(n patch.Normalize) string {
	if n.CeilingTruePeak {
		return "dBTP"
	}
	return "dBFS"
}

// measured is the level a measure reads, in its decibel unit.
func measured(m patch.Measure, l levels) float64 {
	switch m {
	case patch.MeasureTruePeak:
		return decibels(l.truePeak)
	case patch.MeasureLoudness:
		return l.loudness
	}
	return decibels(l.peak)
}

// Gain returns the levelling gain Build gives note i of plan, without
// writing anything: it renders and measures the notes that share the
// note's scope — every note for one gain per set, the key's notes for one
// per key, the note alone for one per file — as Build's first pass does,
// on jobs goroutines, and levels them with the ceiling as Build does.
func Gain(ctx context.Context, plan *patch.Plan, i, jobs int) (float64, error) {
	norm := plan.Normalize
	if norm.Measure == patch.MeasureOff {
		return 1, nil
	}
	var scope []patch.Note
	at := 0
	for j, n := range plan.Notes {
		if norm.Scope == patch.ScopeSet || norm.Scope == patch.ScopeKey && n.Key == plan.Notes[i].Key || j == i {
			if j == i {
				at = len(scope)
			}
			scope = append(scope, n)
		}
	}
	truePeak, loud := needs(norm)
	lv := make([]levels, len(scope))
	err := forEach(ctx, newWorkers(jobs), len(scope), func(w *worker, k int) error {
		loop, _ := synth.PlanLoop(&scope[k])
		lv[k] = w.measure(w.render(&scope[k], loop), &scope[k], truePeak, loud)
		return nil
	})
	if err != nil {
		return 0, err
	}
	gains, _, err := levelGains(norm, scope, lv)
	if err != nil {
		return 0, err
	}
	return gains[at], nil
}
