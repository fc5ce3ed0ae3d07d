package loudness

import "math"

// biquad holds the coefficients of H(z) = (b0 + b1·z⁻¹ + b2·z⁻²) /
// (1 + a1·z⁻¹ + a2·z⁻²).
type biquad struct{ b0, b1, b2, a1, a2 float64 }

// kWeighting is the BS.1770 K-weighting filter for one sample rate: a high
// shelf (the head's acoustic effect) followed by the RLB high-pass.
type kWeighting struct {
	shelf, highPass biquad
}

// kState is one channel's filter memory: the last two inputs of the shelf
// (x), its last two outputs, which are also the high-pass inputs (y), and
// the last two high-pass outputs (z).
type kState struct {
	x1, x2, y1, y2, z1, z2 float64
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

// energy K-weights every stride-th value of samples, starting from and
// updating st, and returns the sum of squares of the weighted values.
func (k *kWeighting) energy(samples []float64, stride int, st *kState) float64 {
	sh, hp := k.shelf, k.highPass
	x1, x2, y1, y2, z1, z2 := st.x1, st.x2, st.y1, st.y2, st.z1, st.z2
	sum := 0.0
	for i := 0; i < len(samples); i += stride {
		x := samples[i]
		// Direct form I, with the term in the previous output added last
		// so that each recursion waits on one multiply and one add.
		y := sh.b0*x + sh.b1*x1 + sh.b2*x2 - sh.a2*y2 - sh.a1*y1
		z := hp.b0*y + hp.b1*y1 + hp.b2*y2 - hp.a2*z2 - hp.a1*z1
		x1, x2 = x, x1
		y1, y2 = y, y1
		z1, z2 = z, z1
		sum += z * z
	}
	*st = kState{x1, x2, y1, y2, z1, z2}
	return sum
}
