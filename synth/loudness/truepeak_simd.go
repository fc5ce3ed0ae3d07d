//go:build goexperiment.simd && amd64

package loudness

import (
	"math"
	"simd/archsimd"
)

// The vector twin of truepeak_plain.go computes the same two doublings,
// eight neighbouring intervals per step, without interleaving their
// output: the first doubling's midpoints go to a stream m beside the
// input samples s[k] = chunk[k+firstHalfTaps−1], and the second doubling
// reads both streams, which is the plain code's formula with the indexes
// of the interleaved sequence u (u[2k] = s[k], u[2k+1] = m[k]) written
// out. As in the oscillator kernels, all scalar float work happens before
// or after the vector loops, with archsimd.ClearAVXUpperBits between.

// useVectors is whether the vector twin runs; tests turn it off to
// compare it with the plain code in the same build.
var useVectors = archsimd.X86.AVX512()

// firstTapLanes and secondTapLanes hold each tap of both doublings broadcast to eight lanes.
var firstTapLanes, secondTapLanes = func() (first [firstHalfTaps][8]float64, second [secondHalfTaps][8]float64) {
	for j := range first {
		for l := range first[j] {
			first[j][l] = firstTaps[j]
		}
	}
	for j := range second {
		for l := range second[j] {
			second[j][l] = secondTaps[j]
		}
	}
	return first, second
}()

func (m *Meter) quadruplePeak(chunk []float64) float64 {
	if !useVectors {
		return peakWithMidpoints(double(m.doubled, chunk))
	}
	const h = firstHalfTaps
	intervals := len(chunk) - 2*h + 1 // interval k runs from s[k] to s[k+1]
	mid := m.doubled[:intervals]
	s := chunk[h-1:]
	vectorEnd := intervals &^ 7
	firstDoubling(mid[:vectorEnd], chunk)
	archsimd.ClearAVXUpperBits()
	for k := vectorEnd; k < intervals; k++ {
		mid[k] = firstMidpoint(chunk[k : k+2*h])
	}
	// peakWithMidpoints covers the intervals c = 5 … 2·intervals−6 of u:
	// even c = 2k for k = 3 … intervals−3, odd c = 2k+1 for k = 2 …
	// intervals−4. Vectors take k = 3 … to−1, which keeps every stream
	// index they read (up to k+3) inside the streams.
	to := 3 + max(0, (intervals-6)/8)*8
	var lanes [8]float64
	secondDoublingPeak(&lanes, s, mid, 3, to)
	archsimd.ClearAVXUpperBits()
	peak := max(math.Abs(mid[2]), math.Abs(oddMidpoint(s, mid, 2)))
	for _, v := range lanes {
		peak = max(peak, v)
	}
	for k := to; k <= intervals-3; k++ {
		peak = max(peak, math.Abs(s[k]), math.Abs(evenMidpoint(s, mid, k)))
		if k <= intervals-4 {
			peak = max(peak, math.Abs(mid[k]), math.Abs(oddMidpoint(s, mid, k)))
		}
	}
	return peak
}

// firstDoubling writes the midpoints of the first len(mid) intervals of
// chunk, eight at a time; len(mid) is a multiple of 8. Four partial sums
// keep the multiply-adds from waiting on each other.
func firstDoubling(mid, chunk []float64) {
	const h = firstHalfTaps
	for k := 0; k+8 <= len(mid); k += 8 {
		w := chunk[k : k+2*h+7]
		var acc0, acc1, acc2, acc3 archsimd.Float64x8
		for j := 0; j < h; j += 4 {
			acc0 = archsimd.LoadFloat64x8(&firstTapLanes[j]).MulAdd(load8(w, h+j).Add(load8(w, h-1-j)), acc0)
			acc1 = archsimd.LoadFloat64x8(&firstTapLanes[j+1]).MulAdd(load8(w, h+1+j).Add(load8(w, h-2-j)), acc1)
			acc2 = archsimd.LoadFloat64x8(&firstTapLanes[j+2]).MulAdd(load8(w, h+2+j).Add(load8(w, h-3-j)), acc2)
			acc3 = archsimd.LoadFloat64x8(&firstTapLanes[j+3]).MulAdd(load8(w, h+3+j).Add(load8(w, h-4-j)), acc3)
		}
		acc0.Add(acc1).Add(acc2.Add(acc3)).StoreSlice(mid[k:])
	}
}

// secondDoublingPeak folds into lanes the largest magnitude of s[k],
// m[k] and the midpoints after each, for k in [from, to), eight at a time.
func secondDoublingPeak(lanes *[8]float64, s, m []float64, from, to int) {
	var zero archsimd.Float64x8
	t0, t1, t2 := taps8(0), taps8(1), taps8(2)
	t3, t4, t5 := taps8(3), taps8(4), taps8(5)
	peak := archsimd.LoadFloat64x8(lanes)
	for k := from; k < to; k += 8 {
		s0, s1, s2, s3 := load8(s, k), load8(s, k+1), load8(s, k+2), load8(s, k+3)
		sm1, sm2 := load8(s, k-1), load8(s, k-2)
		m0, m1, m2, m3 := load8(m, k), load8(m, k+1), load8(m, k+2), load8(m, k+3)
		mm1, mm2, mm3 := load8(m, k-1), load8(m, k-2), load8(m, k-3)
		even := t0.Mul(m0.Add(s0))
		even = t1.MulAdd(s1.Add(mm1), even)
		even = t2.MulAdd(m1.Add(sm1), even)
		even = t3.MulAdd(s2.Add(mm2), even)
		even = t4.MulAdd(m2.Add(sm2), even)
		even = t5.MulAdd(s3.Add(mm3), even)
		odd := t0.Mul(s1.Add(m0))
		odd = t1.MulAdd(m1.Add(s0), odd)
		odd = t2.MulAdd(s2.Add(mm1), odd)
		odd = t3.MulAdd(m2.Add(sm1), odd)
		odd = t4.MulAdd(s3.Add(mm2), odd)
		odd = t5.MulAdd(m3.Add(sm2), odd)
		peak = peak.Max(s0).Max(zero.Sub(s0)).Max(m0).Max(zero.Sub(m0))
		peak = peak.Max(even).Max(zero.Sub(even)).Max(odd).Max(zero.Sub(odd))
	}
	peak.Store(lanes)
}

func taps8(j int) archsimd.Float64x8 { return archsimd.LoadFloat64x8(&secondTapLanes[j]) }

func load8(x []float64, i int) archsimd.Float64x8 { return archsimd.LoadFloat64x8Slice(x[i:]) }

// firstMidpoint is the first doubling's midpoint of the interval that
// ends w's first half.
func firstMidpoint(w []float64) float64 {
	const h = firstHalfTaps
	sum := 0.0
	for j := range h {
		sum += firstTaps[j] * (w[h+j] + w[h-1-j])
	}
	return sum
}

// evenMidpoint is the second doubling's midpoint between s[k] and m[k].
func evenMidpoint(s, m []float64, k int) float64 {
	t := secondTaps
	return t[0]*(m[k]+s[k]) + t[1]*(s[k+1]+m[k-1]) + t[2]*(m[k+1]+s[k-1]) +
		t[3]*(s[k+2]+m[k-2]) + t[4]*(m[k+2]+s[k-2]) + t[5]*(s[k+3]+m[k-3])
}

// oddMidpoint is the second doubling's midpoint between m[k] and s[k+1].
func oddMidpoint(s, m []float64, k int) float64 {
	t := secondTaps
	return t[0]*(s[k+1]+m[k]) + t[1]*(m[k+1]+s[k]) + t[2]*(s[k+2]+m[k-1]) +
		t[3]*(m[k+2]+s[k-1]) + t[4]*(s[k+3]+m[k-2]) + t[5]*(m[k+3]+s[k-2])
}
