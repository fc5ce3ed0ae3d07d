package loudness

import (
	"math"

	"sinter/synth/kernel"
)

// The interpolator raises the rate in two doublings (see the package doc).
// Each doubling keeps the samples and adds the midpoint of every interval,
// a Kaiser-windowed sinc cut off at the Nyquist frequency of its input and
// folded about the midpoint: pair j (0-based) of the interval between
// samples k and k+1 is x[k+1+j] + x[k−j], both at distance j + 1/2. The
// kernel package makes both doublings, in the shape these constants give.
const (
	// firstHalfTaps pairs make each midpoint of the first doubling. With
	// firstBeta they keep every interpolated value within 1.7e-4 of full
	// scale up to 0.4167·fs (20 kHz at 48 kHz), the least error these
	// taps reach.
	firstHalfTaps = kernel.FirstPairs
	firstBeta     = 8.25
	// After the first doubling the signal fills less than half the band,
	// so the second can be short: these reach 1.9e-5 over the same band.
	secondHalfTaps = kernel.SecondPairs
	secondBeta     = 10.95
	// channelPad frames of context either side of a stretch of signal let
	// the second doubling reach the intervals just outside it.
	channelPad = firstHalfTaps + secondHalfTaps/2
	// chunkFrames is the stretch of one channel interpolated at a time,
	// small enough that its scratch stays in the processor's cache.
	chunkFrames = 4096
)

// The taps of the two doublings, shared by all meters and never written
// after init.
var (
	firstTaps  = [firstHalfTaps]float64(midpointTaps(firstHalfTaps, firstBeta))
	secondTaps = [secondHalfTaps]float64(midpointTaps(secondHalfTaps, secondBeta))
)

// gainBound returns, for oversampling 2 or 4, a bound on the magnitude of
// any point the interpolator makes from samples within ±1, with room for
// rounding. A midpoint is a sum of taps times samples, so it is at most
// the sum of the taps' magnitudes (both sides of the fold) times the
// largest sample; the second doubling works on the first's output, so the
// bounds multiply (each is above 1). The computed values round about 20
// times on their way, each time by at most 2⁻⁵³ relative; the margin of
// 2⁻³⁰ covers that many times over.
func gainBound(oversampling int) float64 {
	sum := func(taps []float64) float64 {
		g := 0.0
		for _, t := range taps {
			g += 2 * math.Abs(t)
		}
		return g
	}
	bound := sum(firstTaps[:])
	if oversampling == 4 {
		bound *= sum(secondTaps[:])
	}
	return bound * (1 + 0x1p-30)
}

// midpointTaps returns the taps of a doubling, one per pair, normalised so
// that the midpoint of a constant signal is that constant.
func midpointTaps(halfTaps int, beta float64) []float64 {
	taps := make([]float64, halfTaps)
	sum := 0.0
	for j := range taps {
		taps[j] = windowedSinc(float64(j)+0.5, float64(halfTaps), beta)
		sum += 2 * taps[j]
	}
	for j := range taps {
		taps[j] /= sum
	}
	return taps
}

// windowedSinc is the interpolation kernel at t input samples from the
// point: sinc cut off at the input Nyquist frequency, under a Kaiser
// window spanning ±halfWidth.
func windowedSinc(t, halfWidth, beta float64) float64 {
	r := t / halfWidth
	window := besselI0(beta*math.Sqrt(1-r*r)) / besselI0(beta)
	return math.Sin(math.Pi*t) / (math.Pi * t) * window
}

// besselI0 is the modified Bessel function of the first kind, order 0, by
// its power series, which converges fast for the arguments a Kaiser window
// needs.
func besselI0(x float64) float64 {
	sum, term := 1.0, 1.0
	for k := 1; term > 1e-17*sum; k++ {
		q := x / (2 * float64(k))
		term *= q * q
		sum += term
	}
	return sum
}

// TruePeak returns the largest magnitude of the signal reconstructed
// between the samples, as a linear value (1 = full scale), by
// oversampling: 4× below 96 kHz, 2× from 96 kHz to below 192 kHz, and 1×
// (the sample peak) at 192 kHz and above. It is never less than the sample
// peak. The signal is taken as zero outside the buffer; NaN samples are
// passed over. samples holds interleaved frames; TruePeak panics if its
// length is not a multiple of the channel count.
func (m *Meter) TruePeak(samples []float64) float64 {
	frames := m.frameCount(samples)
	if m.oversampling == 1 {
		return kernel.Peak(samples, 0)
	}
	peak := 0.0
	for first := 0; first < frames; first += chunkFrames {
		// Each chunk is read with channelPad frames of context either
		// side (zeros beyond the buffer), so it covers its own intervals
		// and the ones joining it to its neighbours; the overlap is
		// measured twice, which cannot change a maximum.
		from, to := first-channelPad, min(first+chunkFrames, frames)+channelPad
		lo, hi := max(from, 0), min(to, frames)
		// A chunk whose every point is bound to stay at or below the
		// peak found so far cannot change the reading: the quiet tail of
		// a decaying note costs a glance.
		if kernel.Peak(samples[lo*m.channels:hi*m.channels], 0)*m.gainBound <= peak {
			continue
		}
		chunks := m.channelChunks(samples, from, to, lo, hi)
		for _, chunk := range chunks {
			if m.oversampling == 2 {
				peak = m.oversampler.DoublePeak(chunk, peak)
			} else {
				peak = m.oversampler.QuadruplePeak(chunk, peak)
			}
		}
	}
	return peak
}

// channelChunks returns each channel's frames from to to, zero outside
// the buffer's frames lo to hi: mono frames inside it as they lie, the
// rest copied into the meter's scratch.
func (m *Meter) channelChunks(samples []float64, from, to, lo, hi int) [][]float64 {
	chunks := m.chunkViews[:m.channels]
	for c := range chunks {
		chunks[c] = m.chunks[c][:to-from]
		clear(chunks[c][:lo-from])
		clear(chunks[c][hi-from:])
	}
	switch {
	case m.channels == 2:
		kernel.Deinterleave(chunks[0][lo-from:hi-from], chunks[1][lo-from:hi-from], samples[2*lo:2*hi])
	case lo == from && hi == to:
		chunks[0] = samples[from:to]
	default:
		copy(chunks[0][lo-from:], samples[lo:hi])
	}
	return chunks
}
