package kernel

import (
	"fmt"
	"math"
)

// Biquad is the filter H(z) = (B0 + B1·z⁻¹ + B2·z⁻²) / (1 + A1·z⁻¹ + A2·z⁻²).
type Biquad struct{ B0, B1, B2, A1, A2 float64 }

// KWeighting is a K-weighting filter, a shelf then a high-pass, as the
// KWeight kernels read it. The high-pass of ITU-R BS.1770 has the
// numerator g·(1 − 2z⁻¹ + z⁻²); g is folded into the shelf's numerator,
// and the high-pass forms (y2 − 2·y1) + y with additions, which keeps the
// multiply-add units, the busier ones, for the terms that need them.
type KWeighting struct {
	shelf kBiquad
	// highPassNegA2 and highPassNegA1 are the high-pass's −a2 and −a1.
	highPassNegA2, highPassNegA1 [2]float64
}

// kBiquad holds a biquad's coefficients in the order the kernels add
// their terms, the feedback ones negated, each twice: once for each
// channel's lane.
type kBiquad struct {
	b2, b1, b0, negA2, negA1 [2]float64
}

// NewKWeighting returns the K-weighting filter of a shelf and a
// high-pass. It panics unless the high-pass's numerator is g·(1, −2, 1).
func NewKWeighting(shelf, highPass Biquad) KWeighting {
	g := highPass.B0
	if highPass.B1 != -2*g || highPass.B2 != g {
		panic(fmt.Sprintf("kernel: K-weighting high-pass numerator %v, %v, %v is not g·(1, −2, 1)", highPass.B0, highPass.B1, highPass.B2))
	}
	both := func(v float64) [2]float64 { return [2]float64{v, v} }
	return KWeighting{
		shelf: kBiquad{
			b2: both(g * shelf.B2), b1: both(g * shelf.B1), b0: both(g * shelf.B0),
			negA2: both(-shelf.A2), negA1: both(-shelf.A1),
		},
		highPassNegA2: both(-highPass.A2), highPassNegA1: both(-highPass.A1),
	}
}

// KState is the memory of a K-weighting filter for up to two channels;
// element c of each field is channel c's. X1 and X2 are the shelf's last
// two inputs, Y1 and Y2 its last two outputs (the high-pass's inputs), Z1
// and Z2 the high-pass's last two outputs. The zero value is at rest.
type KState struct {
	X1, X2, Y1, Y2, Z1, Z2 [2]float64
}

// KWeight K-weights the interleaved frames of x (channels 1 or 2),
// continuing from and updating st, and adds the sum of the squares of
// channel c's weighted values to energy[c]. Every set of kernels gives
// the same bits wherever the processor has fused multiply-add. It panics
// on another channel count or a partial frame.
//
// Each biquad runs in direct form I, its terms added oldest first and the
// previous output's last, each by one fused multiply-add: a stage waits
// on its own last output through one multiply-add only, so a sample costs
// one multiply-add of latency per stage. Both channels of a stereo buffer
// run side by side in the lanes of one vector; AVX-512 processors run the
// AVX2 form, since two lanes fill neither width.
func KWeight(x []float64, channels int, f *KWeighting, st *KState, energy *[2]float64) {
	if channels < 1 || channels > 2 || len(x)%channels != 0 {
		panic(fmt.Sprintf("kernel: K-weighting %d samples of %d channels", len(x), channels))
	}
	if len(x) == 0 {
		return
	}
	kWeight(active, x, channels, f, st, energy)
}

// kWeightGo is the plain form of KWeight: each channel alone, each step
// what a lane of the vector forms does.
func kWeightGo(x []float64, channels int, f *KWeighting, st *KState, energy *[2]float64) {
	sh := &f.shelf
	for c := range channels {
		x1, x2, y1, y2, z1, z2 := st.X1[c], st.X2[c], st.Y1[c], st.Y2[c], st.Z1[c], st.Z2[c]
		sum := energy[c]
		for i := c; i < len(x); i += channels {
			x0 := x[i]
			y := sh.b2[c] * x2
			y = math.FMA(sh.b1[c], x1, y)
			y = math.FMA(sh.b0[c], x0, y)
			y = math.FMA(sh.negA2[c], y2, y)
			y = math.FMA(sh.negA1[c], y1, y)
			z := y2 - (y1 + y1)
			z += y
			z = math.FMA(f.highPassNegA2[c], z2, z)
			z = math.FMA(f.highPassNegA1[c], z1, z)
			sum = math.FMA(z, z, sum)
			x1, x2 = x0, x1
			y1, y2 = y, y1
			z1, z2 = z, z1
		}
		st.X1[c], st.X2[c], st.Y1[c], st.Y2[c], st.Z1[c], st.Z2[c] = x1, x2, y1, y2, z1, z2
		energy[c] = sum
	}
}
