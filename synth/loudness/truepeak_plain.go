//go:build !(goexperiment.simd && amd64)

package loudness

// quadruplePeak returns the largest magnitude of chunk at four times its
// rate, over the intervals whose pairs fit: both doublings, the second
// searched as it is made. kernel_simd.go has the vector twin.
func (m *Meter) quadruplePeak(chunk []float64) float64 {
	return peakWithMidpoints(double(m.doubled, chunk))
}
