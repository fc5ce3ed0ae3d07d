//go:build goexperiment.simd && amd64

package synth

// UseVectors lets the benchmarks outside the package measure the plain
// kernel in the SIMD build.
var UseVectors = &useVectors
