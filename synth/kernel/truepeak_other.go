//go:build !amd64

package kernel

// Without vector forms the plain form makes every point, and no scratch
// is laid out for them.

func (o *Oversampler) makeLanes(int) {}

func (o *Oversampler) quadruplePeakLanes(_ []float64, _ int, peak float64) (float64, bool) {
	return peak, false
}

func (o *Oversampler) doublePeakLanes(_ []float64, _ int, peak float64) (float64, bool) {
	return peak, false
}
