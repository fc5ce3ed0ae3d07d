//go:build goexperiment.simd && amd64

package synth_test

import (
	"testing"

	"sinter/synth"
)

// BenchmarkRenderPlain measures the plain kernel in the SIMD build, so one
// run shows the naive reference, the plain kernel and the vector kernel
// side by side.
func BenchmarkRenderPlain(b *testing.B) {
	saved := *synth.UseVectors
	*synth.UseVectors = false
	defer func() { *synth.UseVectors = saved }()
	benchmarkRender(b, benchNote())
}
