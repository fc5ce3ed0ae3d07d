package loudness

import (
	"math"

	"sinter/synth/kernel"
)

// biquad holds the coefficients of H(z) = (b0 + b1·z⁻¹ + b2·z⁻²) /
// (1 + a1·z⁻¹ + a2·z⁻²).
type biquad struct{ b0, b1, b2, a1, a2 float64 }

// kWeighting is the BS.1770 K-weighting filter for one sample rate: a high
// shelf (the head's acoustic effect) followed by the RLB high-pass.
type kWeighting struct {
	shelf, highPass biquad
}

// Analog prototype parameters of the K-weighting stages, as fitted to the
// BS.1770 48 kHz table (standards sheet §5.1).
const (
	shelfHighGain = 1.584864701130855 // Vh, ≈ +4 dB
	shelfBandGain = 1.258720930232562 // Vb
	shelfLowGain  = 1.0               // Vl
	shelfQ        = 0.7071752369554196
	shelfHz       = 1681.974450955533

	highPassQ  = 0.5003270373238773
	highPassHz = 38.13547087602444

	// tableRate is the rate of the BS.1770 coefficient table.
	tableRate = 48000
)

// newKWeighting derives the K-weighting biquads for sampleRate from the
// analog prototype with Ω = tan(π·fc/fs).
func newKWeighting(sampleRate float64) kWeighting {
	w := math.Tan(math.Pi * shelfHz / sampleRate)
	d := w*w + w/shelfQ + 1
	shelf := biquad{
		b0: (shelfLowGain*w*w + shelfBandGain*w/shelfQ + shelfHighGain) / d,
		b1: 2 * (shelfLowGain*w*w - shelfHighGain) / d,
		b2: (shelfLowGain*w*w - shelfBandGain*w/shelfQ + shelfHighGain) / d,
		a1: 2 * (w*w - 1) / d,
		a2: (w*w - w/shelfQ + 1) / d,
	}

	// The table's high-pass has numerator [1, −2, 1], which leaves a
	// passband gain equal to the denominator sum d (+0.043 dB at 48 kHz).
	// That gain changes with the rate, so the numerator is scaled to keep
	// the 48 kHz passband gain; at 48 kHz the scale is exactly 1.
	w = math.Tan(math.Pi * highPassHz / sampleRate)
	d = w*w + w/highPassQ + 1
	w48 := math.Tan(math.Pi * highPassHz / tableRate)
	gain := (w48*w48 + w48/highPassQ + 1) / d
	highPass := biquad{
		b0: gain,
		b1: -2 * gain,
		b2: gain,
		a1: 2 * (w*w - 1) / d,
		a2: (w*w - w/highPassQ + 1) / d,
	}
	return kWeighting{shelf: shelf, highPass: highPass}
}

// forKernels returns the filter as the K-weighting kernels read it.
func (k kWeighting) forKernels() kernel.KWeighting {
	convert := func(b biquad) kernel.Biquad { return kernel.Biquad{B0: b.b0, B1: b.b1, B2: b.b2, A1: b.a1, A2: b.a2} }
	return kernel.NewKWeighting(convert(k.shelf), convert(k.highPass))
}

// The K-weighting recursion runs in blocks of checkFrames frames. Between
// blocks a stage whose memory has fallen below flushLevel is set to rest,
// and a block of exact zeros met at rest is skipped, so that silence costs
// next to nothing and no value the filters work on decays into the
// subnormal range, where one operation costs about 20 times a normal one
// on some processors (shared/reference performance.md, Intel section).
const (
	// flushLevel is 1e-30 (−600 dBFS), far below anything audible, even
	// in a 32-bit float file. A stage memory below it is let go.
	//
	// Nothing the filters hold or square can be subnormal above
	// √(smallest normal) ≈ 1.5e-154. With zero input, memory left
	// standing at a check decays like ρⁿ until the next, ρ being the
	// smallest pole radius over the rates NewMeter accepts (the shelf's,
	// 0.432 at 8 kHz): 0.432²⁵⁶ ≈ 6e-94. So values stay near or above
	// 6e-124, thirty decades clear, which leaves room for the way the
	// two poles of a stage mix and for values that pass close to zero
	// by chance, as any signal's do. TestFiltersNeverHoldSubnormals
	// checks it at the lowest, common and highest rates.
	flushLevel = 1e-30
	// checkFrames is how often the flush and the zero test run: often
	// enough for the bound above, rarely enough to cost nothing.
	checkFrames = 256
)

// weightedEnergy K-weights the interleaved frames of samples, continuing
// each channel's filter memory, and returns the sum of squares over all
// channels.
func (m *Meter) weightedEnergy(samples []float64) float64 {
	var energy [2]float64
	span := checkFrames * m.channels
	for start := 0; start < len(samples); start += span {
		block := samples[start:min(start+span, len(samples))]
		if m.state == (kernel.KState{}) && zeros(block) {
			// Filters at rest stay at rest on zeros: the skipped block
			// adds exactly nothing.
			continue
		}
		kernel.KWeight(block, m.channels, &m.filter, &m.state, &energy)
		m.flush()
	}
	return energy[0] + energy[1]
}

// zeros reports whether every value of x is zero (of either sign). It
// reads them all, without a branch per value and in four independent
// chains, since it runs only while the filters are at rest, where most
// blocks are zeros.
func zeros(x []float64) bool {
	var b0, b1, b2, b3 uint64
	i := 0
	for ; i+4 <= len(x); i += 4 {
		b0 |= math.Float64bits(x[i])
		b1 |= math.Float64bits(x[i+1])
		b2 |= math.Float64bits(x[i+2])
		b3 |= math.Float64bits(x[i+3])
	}
	for ; i < len(x); i++ {
		b0 |= math.Float64bits(x[i])
	}
	return (b0|b1|b2|b3)<<1 == 0 // all but the sign bits
}

// flush sets to rest each stage of each channel whose memory is all below
// flushLevel: the shelf when its last inputs and outputs are, then the
// high-pass when its input (the shelf's output) is at rest and its outputs
// are below.
func (m *Meter) flush() {
	st := &m.state
	for c := range m.channels {
		// Written so that NaN, which max passes on, keeps its memory as
		// it always has.
		if !(max(math.Abs(st.X1[c]), math.Abs(st.X2[c]), math.Abs(st.Y1[c]), math.Abs(st.Y2[c])) < flushLevel) {
			continue
		}
		st.X1[c], st.X2[c], st.Y1[c], st.Y2[c] = 0, 0, 0, 0
		if max(math.Abs(st.Z1[c]), math.Abs(st.Z2[c])) < flushLevel {
			st.Z1[c], st.Z2[c] = 0, 0
		}
	}
}
