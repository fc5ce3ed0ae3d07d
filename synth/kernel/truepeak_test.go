package kernel

import (
	"math"
	"math/rand/v2"
	"testing"
)

// testTaps are taps of the sizes and signs of a windowed sinc's, drawn at
// random: the kernels must follow any taps.
func testTaps(rng *rand.Rand) (first [FirstPairs]float64, second [SecondPairs]float64) {
	for j := range first {
		first[j] = (rng.Float64() + 0.1) / float64(2*j+1) * float64(1-2*(j%2))
	}
	for j := range second {
		second[j] = (rng.Float64() + 0.1) / float64(2*j+1) * float64(1-2*(j%2))
	}
	return first, second
}

// testSignal is n values of noise and a sine, with a NaN and infinities
// where nasty is set.
func testSignal(rng *rand.Rand, n int, nasty bool) []float64 {
	x := make([]float64, n)
	for i := range x {
		x[i] = 0.3*(rng.Float64()*2-1) + 0.6*math.Sin(0.9*math.Pi*float64(i)+0.3)
	}
	if nasty && n > 0 {
		x[rng.IntN(n)] = math.NaN()
		x[rng.IntN(n)] = math.Inf(-1)
	}
	return x
}

// measure runs QuadruplePeak, DoublePeak and Peak on x with isa.
func measure(o *Oversampler, isa ISA, x []float64) [3]float64 {
	previous := Use(isa)
	defer Use(previous)
	return [3]float64{o.QuadruplePeak(x, 0.25), o.DoublePeak(x, 0.25), Peak(x, 0.25)}
}

// sameBits reports whether two readings agree to the last bit.
func sameBits(a, b [3]float64) bool {
	for i := range a {
		if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
			return false
		}
	}
	return true
}

// TestOversamplerSameBitsEverySet runs every set of kernels this
// processor has on the same signals and requires the plain form's bits
// exactly, NaN and infinities included: every length up to past where
// the vector forms take over (38 + 32 samples) and chunk-sized ones, and
// then, so that a point left out or added anywhere would show, a spike
// moved across every sample (every seventh in the longest) of quiet
// noise, which makes the points around it the largest.
func TestOversamplerSameBitsEverySet(t *testing.T) {
	rng := rand.New(rand.NewPCG(3341, 15))
	first, second := testTaps(rng)
	const longest = 4096 + 38
	o := NewOversampler(first, second, longest)
	var lengths []int
	for n := range 3*Lanes*rowBlock + 2*window {
		lengths = append(lengths, n)
	}
	lengths = append(lengths, 1000, 4096+7, longest)
	for _, n := range lengths {
		for _, nasty := range []bool{false, true} {
			x := testSignal(rng, n, nasty)
			want := measure(o, Plain, x)
			for _, isa := range Supported() {
				if got := measure(o, isa, x); !sameBits(got, want) {
					t.Fatalf("%s, %d samples (NaN: %v): QuadruplePeak, DoublePeak, Peak %v, the plain form gives %v", isa, n, nasty, got, want)
				}
			}
		}
	}
	for _, n := range []int{window + 6 + Lanes*rowBlock, 200, 1000, longest} {
		x := make([]float64, n)
		for i := range x {
			x[i] = 0.01 * (rng.Float64()*2 - 1)
		}
		step := 1 + n/1000*6
		for spike := 0; spike < n; spike += step {
			kept := x[spike]
			x[spike] = 0.9
			want := measure(o, Plain, x)
			for _, isa := range Supported() {
				if got := measure(o, isa, x); !sameBits(got, want) {
					t.Fatalf("%s, %d samples, spike at %d: QuadruplePeak, DoublePeak, Peak %v, the plain form gives %v", isa, n, spike, got, want)
				}
			}
			x[spike] = kept
		}
	}
}

// TestOversamplerFollowsTheDoublings checks the plain form against the
// doublings written out from their definition (a symmetric interpolator:
// each midpoint the sum of tap j times the two values j + 1/2 either side,
// common practice), summed plainly and searched over the points the doc
// names, on the sequence u = s[0], m[0], s[1], …, s[n] that the first
// doubling makes. They agree to rounding: 1e-14 of these values near 1.
func TestOversamplerFollowsTheDoublings(t *testing.T) {
	rng := rand.New(rand.NewPCG(1770, 2))
	first, second := testTaps(rng)
	o := NewOversampler(first, second, 2000)
	midpoint := func(u []float64, k int, taps []float64) float64 {
		sum := 0.0
		for j, tap := range taps {
			sum += tap * (u[k+1+j] + u[k-j])
		}
		return sum
	}
	for _, length := range []int{0, window - 1, window + 5, window + 6, window + 40, 2000} {
		x := testSignal(rng, length, false)
		n := max(length-window+1, 0)
		u := make([]float64, 0, 2*n+1)
		for k := range n {
			u = append(u, x[k+FirstPairs-1], midpoint(x, k+FirstPairs-1, first[:]))
		}
		if n > 0 {
			u = append(u, x[n+FirstPairs-1])
		}
		doubled, quadrupled := 0.25, 0.25
		for _, v := range u {
			doubled = max(doubled, math.Abs(v))
		}
		for c := 5; c+SecondPairs < len(u); c++ {
			quadrupled = max(quadrupled, math.Abs(u[c]), math.Abs(midpoint(u, c, second[:])))
		}
		got := measure(o, Plain, x)
		if math.Abs(got[0]-quadrupled) > 1e-14 || math.Abs(got[1]-doubled) > 1e-14 {
			t.Errorf("%d samples: QuadruplePeak %v and DoublePeak %v, the definition gives %v and %v", length, got[0], got[1], quadrupled, doubled)
		}
		// Peak: the largest |x|, or the 0.25 it starts from (the definition).
		want := 0.25
		for _, v := range x {
			want = max(want, math.Abs(v))
		}
		if got[2] != want {
			t.Errorf("%d values: Peak %v, the largest magnitude is %v", length, got[2], want)
		}
	}
}

// TestDeinterleaveSplitsFrames checks every set of kernels against the
// definition of interleaved stereo (left[i] = stereo[2i], right[i] =
// stereo[2i+1], common practice), for lengths around the vector width.
func TestDeinterleaveSplitsFrames(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 2))
	for _, frames := range []int{0, 1, 7, 8, 9, 15, 16, 17, 33, 4133} {
		stereo := testSignal(rng, 2*frames, true)
		for _, isa := range Supported() {
			left, right := make([]float64, frames), make([]float64, frames)
			previous := Use(isa)
			Deinterleave(left, right, stereo)
			Use(previous)
			for i := range frames {
				if math.Float64bits(left[i]) != math.Float64bits(stereo[2*i]) || math.Float64bits(right[i]) != math.Float64bits(stereo[2*i+1]) {
					t.Fatalf("%s, %d frames: frame %d split into %v and %v, not %v and %v", isa, frames, i, left[i], right[i], stereo[2*i], stereo[2*i+1])
				}
			}
		}
	}
}

// TestOversamplerRefusesLongerSignals: a signal longer than the scratch
// was made for would not fit it, so the oversampler panics.
func TestOversamplerRefusesLongerSignals(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Error("no panic for a signal longer than the oversampler's")
		}
	}()
	first, second := testTaps(rand.New(rand.NewPCG(1, 1)))
	NewOversampler(first, second, 100).QuadruplePeak(make([]float64, 101), 0)
}

// BenchmarkTruePeakKernels measures each set of kernels on a chunk of
// 4096 samples with its context, per sample: both doublings and the
// search, and the first doubling alone.
func BenchmarkTruePeakKernels(b *testing.B) {
	rng := rand.New(rand.NewPCG(5, 6))
	first, second := testTaps(rng)
	const n = 4096
	x := testSignal(rng, n+38, false)
	o := NewOversampler(first, second, len(x))
	for _, isa := range Supported() {
		for _, c := range []struct {
			name    string
			measure func([]float64, float64) float64
		}{{"4x", o.QuadruplePeak}, {"2x", o.DoublePeak}} {
			b.Run(c.name+"/"+isa.String(), func(b *testing.B) {
				previous := Use(isa)
				defer Use(previous)
				for b.Loop() {
					c.measure(x, 0)
				}
				b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*n), "ns/sample")
			})
		}
	}
}
