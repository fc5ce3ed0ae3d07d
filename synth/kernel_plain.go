//go:build !(goexperiment.simd && amd64)

package synth

// Kernel names the oscillator kernel this build runs: here plain Go, four
// partials interleaved. A build with GOEXPERIMENT=simd on amd64 runs
// 512-bit vectors where the processor has them (kernel_simd.go).
func Kernel() string { return "plain" }

// laneBank is empty in the plain build: every block takes the scalar path.
type laneBank struct{}

func (*laneBank) prepare([]oscillator) {}

func (r *Renderer) renderBlock(out []float64, b0, b1 int) {
	r.scalarBlock(out, r.live, b0, b1)
}
