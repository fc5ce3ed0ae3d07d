package chart

import (
	"math"
	"strconv"

	"gonum.org/v1/plot"
)

// FrequencyTicks labels a logarithmic frequency axis the way people read
// frequency, at 1, 2 and 5 of each decade — 50, 100, 200, 500, 1k, 2k, 5k,
// 10k, 20k Hz — with minor ticks at the decade's other whole multiples
// (common practice on audio analysers). A span too narrow to hold three
// such labels (an octave, say) is labelled at even steps instead, the
// largest of 1, 2 or 5 times a power of ten that gives three, with minor
// ticks between, so every axis carries at least three labels.
type FrequencyTicks struct{}

var _ plot.Ticker = FrequencyTicks{}

// Ticks returns the ticks of the span lo..hi, in Hz.
func (FrequencyTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(lo > 0) || !(hi > lo) || math.IsInf(hi, 0) {
		return nil
	}
	var ticks []plot.Tick
	labelled := 0
	for d := math.Floor(math.Log10(lo)); math.Pow(10, d) <= hi; d++ {
		for m := 1; m <= 9; m++ {
			v := float64(m) * math.Pow(10, d)
			if v < lo*(1-1e-12) || v > hi*(1+1e-12) {
				continue
			}
			t := plot.Tick{Value: v}
			if m == 1 || m == 2 || m == 5 {
				t.Label = hertz(v)
				labelled++
			}
			ticks = append(ticks, t)
		}
	}
	if labelled >= 3 {
		return ticks
	}
	return evenTicks(lo, hi)
}

// evenTicks labels lo..hi every step, the largest step of 1, 2 or 5 times
// a power of ten that gives at least three labels, with minor ticks at a
// fifth of a step (a quarter of a step of 2).
func evenTicks(lo, hi float64) []plot.Tick {
	for e := math.Ceil(math.Log10(hi - lo)); ; e-- {
		for _, m := range []float64{5, 2, 1} {
			step := m * math.Pow(10, e)
			first, last := math.Ceil(lo/step), math.Floor(hi/step)
			if last-first+1 < 3 {
				continue
			}
			minor := step / 5
			if m == 2 {
				minor = step / 4
			}
			var ticks []plot.Tick
			for k := math.Ceil(lo / minor); k*minor <= hi; k++ {
				v := k * minor
				t := plot.Tick{Value: v}
				if r := v / step; math.Abs(r-math.Round(r)) < 1e-9 {
					t.Label = hertz(math.Round(r) * step)
				}
				ticks = append(ticks, t)
			}
			return ticks
		}
	}
}

// hertz writes a frequency as an axis label: 50, 500, 1k, 1.5k, 20k.
func hertz(v float64) string {
	v = math.Round(v*1e6) / 1e6 // 0.1·3 and the like, written as people would
	if v >= 1000 {
		return strconv.FormatFloat(v/1000, 'f', -1, 64) + "k"
	}
	return strconv.FormatFloat(v, 'f', -1, 64)
}
