package analysis

import (
	"math"
	"math/cmplx"
)

// measured is one partial as the second pass measures it: its frequency
// to a fraction of a cent, its phase, and its level frame by frame
// through a window long enough to keep its neighbours out.
type measured struct {
	cand    candidate
	hz      float64
	errHz   float64 // standard error of hz, from the spread of the phases
	phase   float64 // radians of cos at the recording's first sample
	win     int     // window length of its frames, samples
	times   []float64
	amp     []float64
	close   bool // no window up to the longest keeps its nearest neighbour out of its main lobe
	noiseDB float64
}

// separation is how many bins apart a partial and its nearest neighbour
// must be for the window: one main lobe's half width (lobeBins) and a bin
// to spare, so the neighbour leaks into it at −92 dB at most.
const separation = lobeBins + 1

// windowFor picks, among the lengths n0/4 … 4·n0, the shortest window
// whose bins are fine enough to keep a partial at hz apart from its
// nearest neighbour gap hertz away and from its own mirror image at −hz:
// the shortest, for the best time resolution of its envelope.
func windowFor(hz, gap float64, rate, n0 int) (n int, close bool) {
	need := float64(rate) * separation / min(gap, 2*hz)
	for n = n0 / 4; n <= 4*n0; n *= 2 {
		if float64(n) >= need {
			return n, false
		}
	}
	return 4 * n0, true
}

// measure runs the second pass: for each window length some candidate
// needs, a short-time transform of the recording, from which each of
// those candidates reads its complex amplitude frame by frame at the bin
// nearest it, divided by the window's response at its offset from that
// bin (exact for a steady sinusoid, whatever its place between bins). The
// phases give the frequency; a last step demodulates a few frames at the
// frequency itself, which no change of level can bias.
func measure(x []float64, rate, n0 int, cands []candidate, noiseVar float64, onset, end int) []measured {
	parts := make([]measured, len(cands))
	byWindow := map[int][]int{}
	for i, c := range cands {
		gap := math.Inf(1)
		for j, o := range cands {
			if j != i {
				gap = min(gap, math.Abs(o.hz-c.hz))
			}
		}
		n, close := windowFor(c.hz, gap, rate, n0)
		parts[i] = measured{cand: c, hz: c.hz, win: n, close: close}
		byWindow[n] = append(byWindow[n], i)
	}
	for n, members := range byWindow {
		st := newSTFT(x, n, 1)
		var w2 float64
		for _, w := range st.win.w {
			w2 += w * w
		}
		// A frame of white noise reads, at one bin, an amplitude of about
		// 2σ·sqrt(Σw²)/Σw.
		noiseDB := 20 * math.Log10(2*math.Sqrt(noiseVar*w2)/st.win.sum+1e-300)
		type bin struct {
			k        int
			omegaK   float64
			response float64    // W(ω_k − ω) at the first pass's ω
			scale    complex128 // 2·e^{iω_k·centre}/W(ω_k − ω)
		}
		bins := make([]bin, len(members))
		for j, i := range members {
			omega := 2 * math.Pi * parts[i].hz / float64(rate)
			k := int(math.Round(omega / (2 * math.Pi) * float64(n)))
			omegaK := 2 * math.Pi * float64(k) / float64(n)
			resp := st.win.response(omegaK - omega)
			bins[j] = bin{k, omegaK, resp, 2 * cmplx.Exp(complex(0, omegaK*st.win.centre)) / complex(resp, 0)}
		}
		phases := make([][]float64, len(members))
		for m := range st.frames() {
			spec := st.transform(m)
			t := st.centre(m) / float64(rate)
			for j, i := range members {
				c := spec[bins[j].k] * bins[j].scale
				p := &parts[i]
				p.times = append(p.times, t)
				p.amp = append(p.amp, cmplx.Abs(c))
				phases[j] = append(phases[j], cmplx.Phase(c))
			}
		}
		for j, i := range members {
			p := &parts[i]
			p.noiseDB = noiseDB
			p.frequency(st, rate, phases[j], onset, end)
			// The levels again through the window's response at the
			// frequency found.
			fix := bins[j].response / st.win.response(bins[j].omegaK-2*math.Pi*p.hz/float64(rate))
			for m := range p.amp {
				p.amp[m] *= fix
			}
		}
	}
	return parts
}

// frequency finds the partial's frequency and phase from the phases of
// its frames: a steady sinusoid's phase advances by ω·hop from frame to
// frame, so the unwrapped phase less the estimate's advance is a straight
// line whose slope is the estimate's error (the phase vocoder's principle,
// fitted by weighted least squares over every frame within 40 dB of the
// partial's peak and after the onset, each weighted by its power). A final pass reads up to 16
// of those frames by demodulating at the frequency found, which is exact
// for any envelope, and fits the line again.
func (p *measured) frequency(st *stft, rate int, phases []float64, onset, end int) {
	peakAmp := 0.0
	for _, a := range p.amp {
		peakAmp = max(peakAmp, a)
	}
	limit := max(peakAmp*0.01, math.Pow(10, p.noiseDB/20)*4)
	var use []int
	for m, a := range p.amp {
		// Frames whose window holds the onset read the spray of every
		// partial's sudden start too, and those past the end the cut's.
		if a >= limit && st.start(m) >= onset && st.start(m)+st.win.n <= end {
			use = append(use, m)
		}
	}
	omega := 2 * math.Pi * p.hz / float64(rate)
	if len(use) < 3 {
		// Nothing better than the first pass's estimate, good to a bin.
		p.errHz = float64(rate) / float64(st.win.n)
		return
	}
	centres := make([]float64, len(use))
	psi := make([]float64, len(use))
	weights := make([]float64, len(use))
	for j, m := range use {
		centres[j] = st.centre(m)
		psi[j] = phases[m] - omega*centres[j]
		weights[j] = p.amp[m] * p.amp[m]
	}
	slope, _, _ := phaseLine(centres, psi, weights)
	omega += slope
	// The last pass: at most 16 frames, evenly spread over those used.
	k := min(16, len(use))
	centres, psi, weights = centres[:0], psi[:0], weights[:0]
	for j := range k {
		m := use[j*(len(use)-1)/max(1, k-1)]
		c := st.demodulate(st.start(m), omega)
		centres = append(centres, st.centre(m))
		psi = append(psi, cmplx.Phase(c)-omega*st.centre(m))
		weights = append(weights, p.amp[m]*p.amp[m])
	}
	slope, intercept, se := phaseLine(centres, psi, weights)
	omega += slope
	p.hz = omega * float64(rate) / (2 * math.Pi)
	p.errHz = se * float64(rate) / (2 * math.Pi)
	if math.IsInf(se, 0) || math.IsNaN(se) {
		// Too few frames to spread: good to the bin at least.
		p.errHz = float64(rate) / float64(st.win.n)
	}
	p.phase = intercept
}

// phaseLine unwraps psi (radians, in time order) and fits
// psi = intercept + slope·t by weighted least squares; se is the
// standard error of the slope from the residuals.
func phaseLine(t, psi, w []float64) (slope, intercept, se float64) {
	for j := 1; j < len(psi); j++ {
		d := psi[j] - psi[j-1]
		psi[j] -= 2 * math.Pi * math.Round(d/(2*math.Pi))
	}
	var sw, st, sp, stt, stp, sw2 float64
	for j := range t {
		sw += w[j]
		sw2 += w[j] * w[j]
		st += w[j] * t[j]
		sp += w[j] * psi[j]
	}
	tm, pm := st/sw, sp/sw
	for j := range t {
		dt := t[j] - tm
		stt += w[j] * dt * dt
		stp += w[j] * dt * (psi[j] - pm)
	}
	if stt == 0 {
		return 0, pm, math.Inf(1)
	}
	slope = stp / stt
	intercept = pm - slope*tm
	var rss float64
	for j := range t {
		r := psi[j] - intercept - slope*t[j]
		rss += w[j] * r * r
	}
	// Effective number of frames for unequal weights.
	n := sw * sw / sw2
	if n > 2 {
		se = math.Sqrt(rss / sw * n / (n - 2) / (stt / sw) / n)
	} else {
		se = math.Inf(1)
	}
	return slope, intercept, se
}
