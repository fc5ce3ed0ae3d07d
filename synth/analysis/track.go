package analysis

import (
	"math"
	"slices"
	"sort"
)

// framePeaks are the peaks of one frame of the first pass, with the power
// in each one's main lobe, for the residual.
type framePeaks struct {
	peaks []peak
	lobe  []float64 // power in the main lobe of each peak, |X|² summed
	total float64   // power of the whole frame
}

// survey is what the first pass over a recording finds: the peaks of
// every frame of one window, the tracks joining them, and the noise.
type survey struct {
	st     *stft
	binHz  float64 // the window's bin spacing, Hz (before zero-padding)
	frames []framePeaks
	// noiseVar is the variance of the white noise the recording's
	// quietest bins point to, per sample, full scale 1.
	noiseVar float64
	loudest  float64 // amplitude of the loudest peak
}

// peakMargin is how far above a frame's mean noise power a peak must
// stand, in dB: a bin of white noise passes 12 dB over its mean with
// probability e^{−15.8}, about once in ten million (its power being
// exponentially distributed; common practice).
const peakMargin = 12

// pad is the zero-padding of the first pass's FFT, which halves the bias
// of the parabola through three bins of a Blackman–Harris window.
const pad = 2

// survey runs the first pass with a window of n samples.
func newSurvey(x []float64, rate, n int) *survey {
	st := newSTFT(x, n, pad)
	s := &survey{st: st, binHz: float64(rate) / float64(n), frames: make([]framePeaks, st.frames())}
	pow := make([]float64, st.size/2+1)
	var scratch []float64
	noise := make([]float64, 0, len(s.frames))
	var w2 float64
	for _, w := range st.win.w {
		w2 += w * w
	}
	padBin := float64(rate) / float64(st.size)
	lobe := lobeBins * pad
	for m := range s.frames {
		pow = power(pow, st.transform(m))
		np := noisePower(pow, scratch)
		noise = append(noise, np)
		f := &s.frames[m]
		f.peaks = st.peaks(pow, np*math.Pow(10, peakMargin/10)+1e-300, padBin, nil)
		for _, p := range f.peaks {
			k := int(math.Round(p.hz / padBin))
			sum := 0.0
			for j := max(0, k-lobe); j <= min(len(pow)-1, k+lobe); j++ {
				sum += pow[j]
			}
			f.lobe = append(f.lobe, sum)
			s.loudest = max(s.loudest, p.amp)
		}
		for _, v := range pow {
			f.total += v
		}
	}
	// The median frame's noise, so a loud onset or a silent lead-in does
	// not set it; a bin of white noise of variance σ² holds σ²·Σw².
	slices.Sort(noise)
	s.noiseVar = noise[len(noise)/2] / w2
	return s
}

// point is one peak on a track.
type point struct {
	frame   int
	hz, amp float64
	lobe    float64
}

// track is a run of peaks joined frame to frame.
type track []point

// maxGap is how many frames a track may miss a peak and still go on, so a
// partial that dips for a moment (a beat, a node passing) stays one track.
const maxGap = 2

// link joins the peaks into tracks frame by frame in the manner of
// R. J. McAulay and T. F. Quatieri, "Speech analysis/synthesis based on a
// sinusoidal representation" (IEEE Trans. ASSP 34(4), 1986): each peak
// continues the track whose last frequency is nearest, within maxDev
// hertz, nearest pairs first; a peak left over starts a track, and a
// track left without a peak for more than maxGap frames ends. Tracks of
// fewer than minFrames peaks are dropped.
func (s *survey) link(floorAmp float64, minFrames int) []track {
	type open struct {
		t    track
		last int
	}
	var active []open
	var done []track
	finish := func(o open) {
		if len(o.t) >= minFrames {
			done = append(done, o.t)
		}
	}
	type pair struct {
		track, peak int
		dev         float64
	}
	var pairs []pair
	for m, f := range s.frames {
		pairs = pairs[:0]
		for ti, o := range active {
			hz := o.t[len(o.t)-1].hz
			dev := max(1.5*s.binHz, 0.005*hz)
			for pi, p := range f.peaks {
				if p.amp >= floorAmp && math.Abs(p.hz-hz) <= dev {
					pairs = append(pairs, pair{ti, pi, math.Abs(p.hz - hz)})
				}
			}
		}
		sort.Slice(pairs, func(a, b int) bool { return pairs[a].dev < pairs[b].dev })
		usedPeak := make([]bool, len(f.peaks))
		usedTrack := make([]bool, len(active))
		for _, pr := range pairs {
			if usedPeak[pr.peak] || usedTrack[pr.track] {
				continue
			}
			usedPeak[pr.peak], usedTrack[pr.track] = true, true
			p := f.peaks[pr.peak]
			active[pr.track].t = append(active[pr.track].t, point{m, p.hz, p.amp, f.lobe[pr.peak]})
			active[pr.track].last = m
		}
		kept := active[:0]
		for _, o := range active {
			if m-o.last > maxGap {
				finish(o)
				continue
			}
			kept = append(kept, o)
		}
		active = kept
		for pi, p := range f.peaks {
			if !usedPeak[pi] && p.amp >= floorAmp {
				active = append(active, open{t: track{{m, p.hz, p.amp, f.lobe[pi]}}, last: m})
			}
		}
	}
	for _, o := range active {
		finish(o)
	}
	return done
}

// candidate is a partial as the first pass sees it: one or more tracks at
// one frequency.
type candidate struct {
	hz          float64 // amplitude-weighted mean of its tracks' frequencies
	amp         float64 // its loudest peak
	first, last int     // frames it spans
	weight      float64 // Σ amp², for averaging frequencies
	points      []point // its tracks' peaks
}

// gather merges tracks at the same frequency that do not overlap in time
// (a partial that faded and came back) into candidates, loudest first.
func gather(tracks []track, binHz float64) []candidate {
	var cands []candidate
	owner := make([][][2]int, 0) // frame spans of each candidate's tracks
	slices.SortFunc(tracks, func(a, b track) int { return a[0].frame - b[0].frame })
	for _, t := range tracks {
		var c candidate
		c.first, c.last = t[0].frame, t[len(t)-1].frame
		for _, p := range t {
			w := p.amp * p.amp
			c.hz += w * p.hz
			c.weight += w
			c.amp = max(c.amp, p.amp)
		}
		c.points = t
		c.hz /= c.weight
		merged := false
		for i := range cands {
			o := &cands[i]
			if math.Abs(o.hz-c.hz) > binHz/2 || overlaps(owner[i], c.first, c.last) {
				continue
			}
			o.hz = (o.hz*o.weight + c.hz*c.weight) / (o.weight + c.weight)
			o.weight += c.weight
			o.amp = max(o.amp, c.amp)
			o.first, o.last = min(o.first, c.first), max(o.last, c.last)
			o.points = append(o.points, c.points...)
			owner[i] = append(owner[i], [2]int{c.first, c.last})
			merged = true
			break
		}
		if !merged {
			cands = append(cands, c)
			owner = append(owner, [][2]int{{c.first, c.last}})
		}
	}
	slices.SortFunc(cands, func(a, b candidate) int {
		switch {
		case a.amp > b.amp:
			return -1
		case a.amp < b.amp:
			return 1
		}
		return 0
	})
	return cands
}

// overlaps reports whether frames first..last overlap any span by more
// than one frame.
func overlaps(spans [][2]int, first, last int) bool {
	for _, s := range spans {
		if min(s[1], last)-max(s[0], first) > 1 {
			return true
		}
	}
	return false
}
