package flac

import (
	"math"
	"math/bits"
)

// maxLPCOrder is the highest linear predictor order tried: the streamable
// subset's limit for rates up to 48 kHz (RFC 9639, section 7), used at
// every rate.
const maxLPCOrder = 12

// lpcPrecision is the bits of each quantised coefficient, the most the
// format allows (a 4-bit field holding precision − 1, 0b1111 forbidden;
// RFC 9639, section 9.2.6).
const lpcPrecision = 15

// lpcScratch holds a linear predictor's working memory.
type lpcScratch struct {
	windowed []float64
	autoc    [maxLPCOrder + 1]float64
	coefs    [maxLPCOrder][maxLPCOrder]float64 // coefs[p−1] is the predictor of order p
	errs     [maxLPCOrder]float64
}

// tukey returns a Tukey window of n points with half its length tapered
// (a raised cosine over the first and last quarter), the window FLAC
// encoders commonly take the autocorrelation through (common practice).
func tukey(n int) []float64 {
	w := make([]float64, n)
	taper := n / 4
	for i := range w {
		w[i] = 1
		if i < taper {
			w[i] = 0.5 - 0.5*math.Cos(math.Pi*float64(i)/float64(taper))
		} else if i >= n-taper {
			w[i] = 0.5 - 0.5*math.Cos(math.Pi*float64(n-1-i)/float64(taper))
		}
	}
	return w
}

// linear returns the linear predictor for x that its autocorrelation
// suggests, with the order whose estimated size is least, quantised; nil
// when the block is too short or silent.
func (e *encoder) linear(x []int64, bps uint) *prediction {
	n := len(x)
	if n <= 2*maxLPCOrder {
		return nil
	}
	if len(e.window) != n {
		e.window = tukey(n)
		e.lpc.windowed = make([]float64, n)
	}
	s := &e.lpc
	for i, v := range x {
		s.windowed[i] = float64(v) * e.window[i]
	}
	for lag := range s.autoc {
		var sum float64
		for i := lag; i < n; i++ {
			sum += s.windowed[i] * s.windowed[i-lag]
		}
		s.autoc[lag] = sum
	}
	if s.autoc[0] == 0 {
		return nil
	}
	orders := levinson(s)
	// The order of least estimated size: the residual's bits from its
	// error power, 0.5 · log2(error / n) + 1 a sample (a Laplacian's Rice
	// cost, common practice), plus the warm-up samples and coefficients.
	best, bestBits := 0, math.Inf(1)
	for p := 1; p <= orders; p++ {
		perSample := max(0, 0.5*math.Log2(s.errs[p-1]/float64(n))+1)
		bits := perSample*float64(n-p) + float64(p)*float64(bps+lpcPrecision)
		if bits < bestBits {
			best, bestBits = p, bits
		}
	}
	if best == 0 {
		return nil
	}
	p := &prediction{kind: typeLPC | (best - 1), order: best}
	if !quantize(p, s.coefs[best-1][:best]) {
		return nil
	}
	return p
}

// levinson solves the normal equations of s.autoc by the Levinson-Durbin
// recursion (J. Durbin, 1960), filling s.coefs with the predictor of each
// order and s.errs with its error power, and returns the highest order it
// reached: the recursion stops where the error power stops being
// positive.
func levinson(s *lpcScratch) int {
	var a [maxLPCOrder]float64
	err := s.autoc[0]
	for p := 0; p < maxLPCOrder; p++ {
		acc := s.autoc[p+1]
		for j := range p {
			acc -= a[j] * s.autoc[p-j]
		}
		k := acc / err
		var next [maxLPCOrder]float64
		for j := range p {
			next[j] = a[j] - k*a[p-1-j]
		}
		next[p] = k
		a = next
		err *= 1 - k*k
		if !(err > 0) {
			return p
		}
		s.coefs[p] = a
		s.errs[p] = err
	}
	return maxLPCOrder
}

// quantize sets p's integer coefficients and shift from c, with the
// rounding error of each carried into the next so the predictor as a
// whole stays close (common practice), and reports whether the shift the
// coefficients need is one the format allows (0 to 15 here; negative
// shifts are forbidden, RFC 9639, section 9.2.6).
func quantize(p *prediction, c []float64) bool {
	cmax := 0.0
	for _, v := range c {
		cmax = max(cmax, math.Abs(v))
	}
	if cmax == 0 || math.IsNaN(cmax) || math.IsInf(cmax, 0) {
		return false
	}
	_, exp := math.Frexp(cmax) // cmax < 2^exp
	shift := lpcPrecision - 1 - exp
	if shift < 0 {
		return false
	}
	shift = min(shift, 15)
	top := float64(int64(1)<<(lpcPrecision-1) - 1)
	carry := 0.0
	for j, v := range c {
		carry += v * float64(int64(1)<<shift)
		q := math.Max(-top-1, math.Min(top, math.Round(carry)))
		p.coefs[j] = int32(q)
		carry -= q
	}
	p.shift = shift
	return true
}

// ricePlan is a partitioned Rice coding of a residual (RFC 9639, section
// 9.2.7): the partition order, each partition's parameter and the size
// of the whole in bits.
type ricePlan struct {
	order  int
	params [1 << maxPartitionOrder]uint8
	wide   bool // 5-bit parameters (method 01), needed above 14
	bits   uint64
}

// maxPartitionOrder is the streamable subset's highest partition order
// (RFC 9639, section 7).
const maxPartitionOrder = 8

// planRice chooses the partition order and parameters for the folded
// residual u of a block of n samples after a predictor of order, by the
// usual estimate of a partition's cost with parameter k: count·(k+1) +
// sum >> k (common practice).
func planRice(u []uint64, n, order int) ricePlan {
	top := 0
	for o := 1; o <= maxPartitionOrder && n%(1<<o) == 0 && n>>o > order; o++ {
		top = o
	}
	// Sums of the finest partitions, merged pairwise for coarser orders.
	sums := make([]uint64, 1<<top)
	size := n >> top
	for p := range sums {
		lo, hi := p*size-order, (p+1)*size-order
		lo = max(lo, 0)
		for _, v := range u[lo:hi] {
			sums[p] += v
		}
	}
	best := ricePlan{bits: math.MaxUint64}
	for o := top; o >= 0; o-- {
		if o < top {
			for p := range 1 << o {
				sums[p] = sums[2*p] + sums[2*p+1]
			}
		}
		plan := ricePlan{order: o, bits: 2 + 4}
		size := n >> o
		for p := range 1 << o {
			count := uint64(size)
			if p == 0 {
				count -= uint64(order)
			}
			k, bits := riceParam(sums[p], count)
			plan.params[p] = uint8(k)
			plan.wide = plan.wide || k > 14
			plan.bits += bits
		}
		paramBits := uint64(4)
		if plan.wide {
			paramBits = 5
		}
		plan.bits += paramBits << o
		if plan.bits < best.bits {
			best = plan
		}
	}
	return best
}

// riceParam returns the parameter of least estimated cost for count
// folded residuals adding up to sum, and that cost in bits.
func riceParam(sum, count uint64) (k int, cost uint64) {
	if count == 0 {
		return 0, 0
	}
	guess := 0
	if mean := sum / count; mean > 0 {
		guess = 63 - bits.LeadingZeros64(mean)
	}
	cost = math.MaxUint64
	for c := max(0, guess-1); c <= min(30, guess+1); c++ {
		if b := count*uint64(c+1) + sum>>c; b < cost {
			k, cost = c, b
		}
	}
	return k, cost
}

// writeRice writes the folded residual u of a block of n samples after a
// predictor of order as plan says.
func (e *encoder) writeRice(plan ricePlan, u []uint64, n, order int) {
	w := &e.out
	method, paramBits := uint64(0), uint(4)
	if plan.wide {
		method, paramBits = 1, 5
	}
	w.write(method, 2)
	w.write(uint64(plan.order), 4)
	size := n >> plan.order
	at := 0
	for p := range 1 << plan.order {
		k := uint(plan.params[p])
		w.write(uint64(k), paramBits)
		count := size
		if p == 0 {
			count -= order
		}
		for _, v := range u[at : at+count] {
			q := v >> k
			if q+1+uint64(k) <= 56 {
				// The quotient's zeros, its closing one and the k low
				// bits in one write.
				w.write(1<<k|v&(1<<k-1), uint(q)+1+k)
			} else {
				w.writeUnary(q)
				w.write(v, k)
			}
		}
		at += count
	}
}
