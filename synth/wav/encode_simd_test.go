//go:build goexperiment.simd && amd64

package wav

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestQuantizeVectorMatchesScalar: the vector twin gives the scalar loop's
// codes exactly, with and without dither, at both integer depths, for
// ordinary samples, exact halves, values past full scale, infinities and
// NaN, and for blocks that start anywhere in a file and end off the
// vector width.
func TestQuantizeVectorMatchesScalar(t *testing.T) {
	if !useVectors {
		t.Skip("this processor has no AVX-512; only the scalar loop runs")
	}
	rng := rand.New(rand.NewPCG(5, 6))
	src := make([]float64, 1003)
	for i := range src {
		switch i % 10 {
		case 0:
			src[i] = (float64(rng.IntN(1<<16)) + 0.5) / (1 << 15) // a half at 16 bits
		case 1:
			src[i] = []float64{math.Inf(1), math.Inf(-1), math.NaN(), 1, -1, 1.5, -3, 1e300, -1e-300, 0}[rng.IntN(10)]
		default:
			src[i] = rng.Float64()*2.2 - 1.1
		}
	}
	vector, scalar := make([]int32, len(src)), make([]int32, len(src))
	for _, bits := range []int{16, 24} {
		for _, dither := range []bool{false, true} {
			for _, first := range []uint64{0, 13, 1 << 40} {
				quantizeBlock(vector, src, bits, dither, 0xC0FFEE, first)
				quantizeScalar(scalar, src, bits, dither, 0xC0FFEE, first)
				for i := range src {
					if vector[i] != scalar[i] {
						t.Fatalf("%d bits, dither %v, first %d: sample %d (%g) codes %d, scalar %d", bits, dither, first, i, src[i], vector[i], scalar[i])
					}
				}
			}
		}
	}
}
