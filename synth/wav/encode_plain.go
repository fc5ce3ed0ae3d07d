//go:build !(goexperiment.simd && amd64)

package wav

// quantizeBlock is quantizeScalar in this build; encode_simd.go has the
// vector twin.
func quantizeBlock(dst []int32, src []float64, bits int, dither bool, seed, first uint64) []int32 {
	return quantizeScalar(dst, src, bits, dither, seed, first)
}
