package loudness

import "math"

// The interpolator raises the rate in two doublings (see the package doc).
// Each doubling keeps the samples and adds the midpoint of every interval,
// a Kaiser-windowed sinc cut off at the Nyquist frequency of its input and
// folded about the midpoint: pair j (0-based) of the interval between
// samples k and k+1 is x[k+1+j] + x[k−j], both at distance j + 1/2.
const (
	// firstHalfTaps pairs make each midpoint of the first doubling. With
	// firstBeta they keep every interpolated value within 1.7e-4 of full
	// scale up to 0.4167·fs (20 kHz at 48 kHz), the least error these
	// taps reach.
	firstHalfTaps = 16
	firstBeta     = 8.25
	// After the first doubling the signal fills less than half the band,
	// so the second can be short: these reach 1.9e-5 over the same band.
	secondHalfTaps = 6 // peakWithMidpoints writes out its pairs for 6
	secondBeta     = 10.95
	// channelPad frames of context either side of a stretch of signal let
	// the second doubling reach the intervals just outside it.
	channelPad = firstHalfTaps + secondHalfTaps/2
	// chunkFrames is the stretch of one channel interpolated at a time,
	// small enough that its scratch stays in the processor's cache.
	chunkFrames = 4096
)

// peakWithMidpoints is written out for six pairs; this stops the build if
// secondHalfTaps changes.
var _ = [1]struct{}{}[secondHalfTaps-6]

// Midpoint taps of the two doublings, shared by all meters and never
// written after init.
var (
	firstTaps  = midpointTaps(firstHalfTaps, firstBeta)
	secondTaps = midpointTaps(secondHalfTaps, secondBeta)
)

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
// peak. The signal is taken as zero outside the buffer. samples holds
// interleaved frames; TruePeak panics if its length is not a multiple of
// the channel count.
func (m *Meter) TruePeak(samples []float64) float64 {
	frames := m.frameCount(samples)
	if m.oversampling == 1 {
		return peakMagnitude(samples)
	}
	peak := 0.0
	for c := range m.channels {
		// Each chunk is read with channelPad frames of context either
		// side (zeros beyond the buffer), so it covers its own intervals
		// and the ones joining it to its neighbours; the overlap is
		// measured twice, which cannot change a maximum.
		for first := 0; first < frames; first += chunkFrames {
			from := first - channelPad
			chunk := m.chunk[:min(chunkFrames, frames-first)+2*channelPad]
			clear(chunk)
			lo, hi := max(from, 0), min(from+len(chunk), frames)
			if m.channels == 1 {
				copy(chunk[lo-from:], samples[lo:hi])
			} else {
				for f := lo; f < hi; f++ {
					chunk[f-from] = samples[f*m.channels+c]
				}
			}
			if m.oversampling == 2 {
				peak = max(peak, peakMagnitude(double(m.doubled, chunk)))
			} else {
				peak = max(peak, m.quadruplePeak(chunk))
			}
		}
	}
	return peak
}

// peakMagnitude returns the largest magnitude in x.
func peakMagnitude(x []float64) float64 {
	peak := 0.0
	for _, v := range x {
		peak = max(peak, math.Abs(v))
	}
	return peak
}

// doubledLen is the length double writes for an input of length n: a
// sample and a midpoint for each interval whose pairs fit, then the
// sample that ends the last interval.
func doubledLen(n int) int { return 2*(n-2*firstHalfTaps+1) + 1 }

// double writes x at twice its rate into dst, from the first interval
// whose pairs fit in x to the last, and returns the doubledLen(len(x))
// values written.
func double(dst, x []float64) []float64 {
	const width = 2 * firstHalfTaps
	taps := (*[firstHalfTaps]float64)(firstTaps)
	dst = dst[:doubledLen(len(x))]
	for k := 0; k+width <= len(x); k++ {
		// w[firstHalfTaps−1] and w[firstHalfTaps] end the interval.
		w := (*[width]float64)(x[k : k+width])
		// Four partial sums, so that consecutive additions do not wait
		// on each other.
		var m0, m1, m2, m3 float64
		for j := 0; j < firstHalfTaps; j += 4 {
			m0 += taps[j] * (w[firstHalfTaps+j] + w[firstHalfTaps-1-j])
			m1 += taps[j+1] * (w[firstHalfTaps+1+j] + w[firstHalfTaps-2-j])
			m2 += taps[j+2] * (w[firstHalfTaps+2+j] + w[firstHalfTaps-3-j])
			m3 += taps[j+3] * (w[firstHalfTaps+3+j] + w[firstHalfTaps-4-j])
		}
		dst[2*k] = w[firstHalfTaps-1]
		dst[2*k+1] = (m0 + m1) + (m2 + m3)
	}
	dst[len(dst)-1] = x[len(x)-firstHalfTaps]
	return dst
}

// peakWithMidpoints returns the largest magnitude among the samples of u
// and the midpoints of its intervals, over the intervals whose pairs fit
// in u: the second doubling, searched as it is made.
func peakWithMidpoints(u []float64) float64 {
	const width = 2 * secondHalfTaps
	taps := (*[secondHalfTaps]float64)(secondTaps)
	peak := 0.0
	for k := 0; k+width <= len(u); k++ {
		w := (*[width]float64)(u[k : k+width])
		// Written out, since a loop this short costs more than its body:
		// pair j is w[6+j] + w[5−j].
		mid := (taps[0]*(w[6]+w[5]) + taps[1]*(w[7]+w[4]) + taps[2]*(w[8]+w[3])) +
			(taps[3]*(w[9]+w[2]) + taps[4]*(w[10]+w[1]) + taps[5]*(w[11]+w[0]))
		if v := math.Abs(w[secondHalfTaps-1]); v > peak {
			peak = v
		}
		if v := math.Abs(mid); v > peak {
			peak = v
		}
	}
	return peak
}
