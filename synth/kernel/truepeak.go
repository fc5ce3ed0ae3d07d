package kernel

import (
	"fmt"
	"math"
)

// The true-peak kernels' shape: an interpolator that raises the rate in
// two doublings, each keeping the samples and adding the midpoint of every
// interval from pairs of samples folded about it. Pair j (0-based) of the
// interval between u[k] and u[k+1] is u[k+1+j] + u[k−j], both at distance
// j + 1/2, and has tap j.
const (
	// FirstPairs is the number of pairs of the first doubling.
	FirstPairs = 16
	// SecondPairs is the number of pairs of the second.
	SecondPairs = 6
	// rowBlock is how many rows the vector forms of the first doubling
	// make at a time; the stretches are made a multiple of it long.
	rowBlock = 4
	// spreadBlock is how many rows the vector forms lay out at a time.
	spreadBlock = 8
	// window is the number of samples a first-doubling midpoint reads.
	window = 2 * FirstPairs
)

// interpolator holds the taps of both doublings as the true-peak kernels
// read them: each tap in every lane of a vector.
type interpolator struct {
	first  [FirstPairs][Lanes]float64
	second [SecondPairs][Lanes]float64
}

// Oversampler finds the largest magnitude of a signal between its samples
// with the two doublings of its interpolator. It keeps scratch memory, so
// each goroutine needs its own.
//
// Every set of kernels gives the same bits wherever the processor has
// fused multiply-add: each point is made by the same operations in the
// same order. A first-doubling midpoint is one chain of multiply-adds
// over its pairs, the outermost (whose taps are smallest) first; a
// second-doubling one likewise over its six, the innermost first. The
// plain form makes each point in the signal's order. The vector forms cut
// the signal into Lanes overlapping stretches and lay them side by side,
// row i holding value i of each, so that every load is a whole row and
// neighbouring rows share the loads of their pairs; the few points at the
// ends that no stretch holds whole are made as the plain form makes them.
type Oversampler struct {
	f interpolator
	// lanes and mid hold the stretches side by side and their midpoints,
	// for the vector forms.
	lanes, mid []float64
	// natural holds midpoints in the signal's order: all of them for the
	// plain form, those at the ends for the vector forms.
	natural []float64
}

// NewOversampler returns an oversampler with the given taps for signals
// of up to maxLen samples.
func NewOversampler(first [FirstPairs]float64, second [SecondPairs]float64, maxLen int) *Oversampler {
	o := &Oversampler{}
	for j, t := range first {
		for l := range Lanes {
			o.f.first[j][l] = t
		}
	}
	for j, t := range second {
		for l := range Lanes {
			o.f.second[j][l] = t
		}
	}
	intervals := max(maxLen-window+1, 0)
	o.natural = make([]float64, intervals)
	o.makeLanes(intervals)
	return o
}

// QuadruplePeak returns the largest magnitude, or peak if that is
// larger, among the samples of x and the points between them at four
// times its rate that the two doublings can make from x alone. With n =
// len(x) − 2·FirstPairs + 1 intervals, s[k] = x[k+FirstPairs−1] and
// m[k] the first doubling's midpoint between s[k] and s[k+1]: s[k] and
// the midpoint after it for 3 ≤ k ≤ n−3, m[k] and the midpoint after it
// for 2 ≤ k ≤ n−4. NaN values are passed over. It panics if x is longer
// than the oversampler was made for.
func (o *Oversampler) QuadruplePeak(x []float64, peak float64) float64 {
	n := o.intervals(x)
	if n == 0 {
		return peak
	}
	if p, ok := o.quadruplePeakLanes(x, n, peak); ok {
		return p
	}
	m := o.natural[:n]
	midpointsGo(m, x, &o.f)
	return quadruplePeakGo(x[FirstPairs-1:], m, &o.f, 2, n-2, peak)
}

// DoublePeak returns the largest magnitude, or peak if that is larger,
// among the samples of x and the first doubling's midpoints: with n =
// len(x) − 2·FirstPairs + 1 intervals, s[k] = x[k+FirstPairs−1] for 0 ≤
// k ≤ n and the midpoint after each but the last. NaN values are passed
// over. It panics if x is longer than the oversampler was made for.
func (o *Oversampler) DoublePeak(x []float64, peak float64) float64 {
	n := o.intervals(x)
	if n == 0 {
		return peak
	}
	peak = larger(peak, x[n+FirstPairs-1]) // s[n]
	if p, ok := o.doublePeakLanes(x, n, peak); ok {
		return p
	}
	m := o.natural[:n]
	midpointsGo(m, x, &o.f)
	return Peak(m, Peak(x[FirstPairs-1:n+FirstPairs-1], peak))
}

// intervals returns the number of intervals of x whose pairs fit in x.
func (o *Oversampler) intervals(x []float64) int {
	n := max(len(x)-window+1, 0)
	if n > len(o.natural) {
		panic(fmt.Sprintf("kernel: an oversampler for %d samples given %d", len(o.natural)+window-1, len(x)))
	}
	return n
}

// midpointsGo writes to mid[k], for every k < len(mid), the first
// doubling's midpoint between x[k+FirstPairs−1] and x[k+FirstPairs].
func midpointsGo(mid, x []float64, f *interpolator) {
	const h = FirstPairs
	for k := range mid {
		w := (*[window]float64)(x[k : k+window])
		sum := f.first[h-1][0] * (w[2*h-1] + w[0])
		for j := h - 2; j >= 0; j-- {
			sum = math.FMA(f.first[j][0], w[h+j]+w[h-1-j], sum)
		}
		mid[k] = sum
	}
}

// quadruplePeakGo folds into peak the points of QuadruplePeak for k in
// [lo, hi), reading s[k] and m[k] in the signal's order: s[k] and the
// midpoint after it for 3 ≤ k ≤ n−3, m[k] and the midpoint after it for
// 2 ≤ k ≤ n−4, n being len(m).
func quadruplePeakGo(s, m []float64, f *interpolator, lo, hi int, peak float64) float64 {
	t := &f.second
	n := len(m)
	for k := lo; k < hi; k++ {
		if k >= 3 && k <= n-3 {
			even := t[0][0] * (m[k] + s[k])
			even = math.FMA(t[1][0], s[k+1]+m[k-1], even)
			even = math.FMA(t[2][0], m[k+1]+s[k-1], even)
			even = math.FMA(t[3][0], s[k+2]+m[k-2], even)
			even = math.FMA(t[4][0], m[k+2]+s[k-2], even)
			even = math.FMA(t[5][0], s[k+3]+m[k-3], even)
			peak = larger(peak, s[k])
			peak = larger(peak, even)
		}
		if k >= 2 && k <= n-4 {
			odd := t[0][0] * (s[k+1] + m[k])
			odd = math.FMA(t[1][0], m[k+1]+s[k], odd)
			odd = math.FMA(t[2][0], s[k+2]+m[k-1], odd)
			odd = math.FMA(t[3][0], m[k+2]+s[k-1], odd)
			odd = math.FMA(t[4][0], s[k+3]+m[k-2], odd)
			odd = math.FMA(t[5][0], m[k+3]+s[k-2], odd)
			peak = larger(peak, m[k])
			peak = larger(peak, odd)
		}
	}
	return peak
}

// Deinterleave splits stereo frames into their channels: left[i] =
// stereo[2i] and right[i] = stereo[2i+1]. It panics unless len(stereo) =
// 2·len(left) = 2·len(right).
func Deinterleave(left, right, stereo []float64) {
	if len(left) != len(right) || len(stereo) != 2*len(left) {
		panic(fmt.Sprintf("kernel: %d stereo samples into %d and %d", len(stereo), len(left), len(right)))
	}
	vectors := len(left) / Lanes * Lanes
	if vectors > 0 {
		deinterleave(active, left[:vectors], right[:vectors], stereo)
	}
	deinterleaveGo(left[vectors:], right[vectors:], stereo[2*vectors:])
}

// deinterleaveGo is the plain form of Deinterleave.
func deinterleaveGo(left, right, stereo []float64) {
	for i := range left {
		left[i], right[i] = stereo[2*i], stereo[2*i+1]
	}
}

// Peak returns the largest magnitude in x, or peak if that is larger. NaN
// values are passed over.
func Peak(x []float64, peak float64) float64 {
	vectors := len(x) / (4 * Lanes) * (4 * Lanes)
	if vectors > 0 {
		peak = peakOf(active, x[:vectors], peak)
	}
	return peakGo(x[vectors:], peak)
}

// peakGo is the plain form of Peak.
func peakGo(x []float64, peak float64) float64 {
	for _, v := range x {
		peak = larger(peak, v)
	}
	return peak
}

// larger returns |v| if it is larger than peak, else peak: what VMAXPD
// does with |v| first, which passes over NaN. Since all it keeps is the
// largest, the order values meet in cannot change the result.
func larger(peak, v float64) float64 {
	if a := math.Abs(v); a > peak {
		return a
	}
	return peak
}
