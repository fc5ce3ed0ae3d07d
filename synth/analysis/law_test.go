package analysis

import (
	"math"
	"testing"
)

// TestPitchAndLaw decides pitch and law for sets of partials given as
// frequencies and levels. The bar's ratios are the handbook's free-bar
// modes (patch/modes.yaml); a stiff string's partials follow Fletcher's
// f_n = n·f0·√(1 + B·n²) (standards.md); a closed pipe's odd harmonics
// are common practice. The cases where one partial holds nearly all the
// energy are those a subharmonic once took for the pitch: far-apart upper
// partials, which a stiff series' two parameters can always be bent to
// pass through.
func TestPitchAndLaw(t *testing.T) {
	bar := []float64{1, 2.756, 5.404, 8.933, 13.345}
	series := func(f0, b float64, ns ...int) []float64 {
		hz := make([]float64, len(ns))
		for k, n := range ns {
			hz[k] = f0 * stiffRatio(float64(n), b)
		}
		return hz
	}
	for _, c := range []struct {
		name    string
		hz, db  []float64
		pitched bool
		law     LawKind
		ref     float64 // what ratios are to: the pitch, else the lowest strong partial; 0 unchecked
	}{
		{"struck bar, first mode loud", scale(bar, 261.626), []float64{-4.4, -14.8, -21.3, -25.9, -29.6}, false, Free, 261.626},
		{"struck bar, modes alike", scale(bar, 261.626), []float64{-11, -13, -15, -16, -18}, false, Free, 261.626},
		{"harmonic series", series(196, 0, 1, 2, 3, 4, 5, 6, 7, 8), falling(8, 3), true, Harmonic, 196},
		{"closed pipe, odd harmonics", series(147, 0, 1, 3, 5, 7, 9), falling(5, 4), true, Harmonic, 147},
		{"stiff string", series(110, 4e-4, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12), falling(12, 2), true, Stiff, 110},
		// Nine tenths of the energy in one partial make it the pitch, but
		// no law: two partials are no series.
		// Two partials 4 cents off a series of two: pitched, but a stiff
		// string would pass through them exactly, whatever they were.
		{"two partials off a series", []float64{200, 401}, []float64{0, -6}, true, Free, 0},
		{"one loud partial, two far above", []float64{261.626, 1413.8, 3491.2}, []float64{-3, -25, -30}, true, Free, 261.626},
	} {
		res := &Result{}
		for k, hz := range c.hz {
			res.Partials = append(res.Partials, Partial{Hz: hz, Level: math.Pow(10, c.db[k]/20), ErrCents: 0.001})
		}
		res.reference(Options{A4: 440})
		if res.Pitched != c.pitched || res.Law.Kind != c.law {
			t.Errorf("%s: pitched %v, law %v; want %v, %v", c.name, res.Pitched, res.Law.Kind, c.pitched, c.law)
			continue
		}
		if c.ref > 0 && math.Abs(cents(res.Reference, c.ref)) > 0.01 {
			t.Errorf("%s: ratios to %.4f Hz, want %.4f", c.name, res.Reference, c.ref)
		}
	}
}

// scale multiplies ratios by f0.
func scale(ratios []float64, f0 float64) []float64 {
	hz := make([]float64, len(ratios))
	for k, r := range ratios {
		hz[k] = r * f0
	}
	return hz
}

// falling is count levels from 0 dB down by step dB each.
func falling(count int, step float64) []float64 {
	db := make([]float64, count)
	for k := range db {
		db[k] = -step * float64(k)
	}
	return db
}
