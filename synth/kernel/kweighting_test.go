package kernel

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The K-weighting of ITU-R BS.1770-4 Annex 1 Tables 1–2 at 48 kHz, as on
// the standards sheet §5.1 (shared/reference/standards.md).
var (
	tableShelf    = Biquad{1.53512485958697, -2.69169618940638, 1.19839281085285, -1.69065929318241, 0.73248077421585}
	tableHighPass = Biquad{1.0, -2.0, 1.0, -1.99004745483398, 0.99007225036621}
)

// kWeightCase returns frames of noise, sines and runs of zeros for the
// given channel count, and a state with memory in it.
func kWeightCase(rng *rand.Rand, channels, frames int) ([]float64, KState) {
	x := make([]float64, channels*frames)
	for i := range x {
		switch n := i / channels; {
		case n%97 < 20: // runs of exact zeros
		case n%2 == 0:
			x[i] = rng.Float64()*2 - 1
		default:
			x[i] = 0.7 * math.Sin(0.01*float64(n)+float64(i%channels))
		}
	}
	var st KState
	for _, field := range []*[2]float64{&st.X1, &st.X2, &st.Y1, &st.Y2, &st.Z1, &st.Z2} {
		*field = [2]float64{rng.Float64() - 0.5, rng.Float64() - 0.5}
	}
	return x, st
}

// TestKWeightSameBitsEverySet runs every set of kernels this processor
// has on the same frames, mono and stereo, for lengths around the
// loop's, and requires the plain Go form's memory and sums exactly.
func TestKWeightSameBitsEverySet(t *testing.T) {
	rng := rand.New(rand.NewPCG(17, 70))
	f := NewKWeighting(tableShelf, tableHighPass)
	for _, channels := range []int{1, 2} {
		for _, frames := range []int{1, 2, 3, 7, 255, 256, 4800} {
			x, start := kWeightCase(rng, channels, frames)
			startEnergy := [2]float64{rng.Float64(), rng.Float64()}
			want, wantEnergy := start, startEnergy
			kWeightGo(x, channels, &f, &want, &wantEnergy)
			for _, isa := range Supported() {
				got, gotEnergy := start, startEnergy
				previous := Use(isa)
				KWeight(x, channels, &f, &got, &gotEnergy)
				Use(previous)
				if got != want || math.Float64bits(gotEnergy[0]) != math.Float64bits(wantEnergy[0]) ||
					math.Float64bits(gotEnergy[1]) != math.Float64bits(wantEnergy[1]) {
					t.Fatalf("%s, %d ch, %d frames: memory %v sums %v, the plain form gives %v and %v",
						isa, channels, frames, got, gotEnergy, want, wantEnergy)
				}
			}
		}
	}
}

// TestKWeightFollowsTheDifferenceEquation checks the plain form against
// the two biquads written as their difference equations, term by term
// without fused multiply-adds, on the Annex 1 coefficients: after a second
// of signal the sums of squares and the memory agree to rounding (they
// differ by about 1e-13 relative; the tolerance is 1e-12).
func TestKWeightFollowsTheDifferenceEquation(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 1770))
	f := NewKWeighting(tableShelf, tableHighPass)
	for _, channels := range []int{1, 2} {
		x, start := kWeightCase(rng, channels, 48000)
		got, energy := start, [2]float64{}
		kWeightGo(x, channels, &f, &got, &energy)
		for c := range channels {
			// H(z) = (b0 + b1·z⁻¹ + b2·z⁻²)/(1 + a1·z⁻¹ + a2·z⁻²) as a
			// difference equation (common practice).
			s, h := tableShelf, tableHighPass
			x1, x2, y1, y2, z1, z2 := start.X1[c], start.X2[c], start.Y1[c], start.Y2[c], start.Z1[c], start.Z2[c]
			sum := 0.0
			for i := c; i < len(x); i += channels {
				y := s.B0*x[i] + s.B1*x1 + s.B2*x2 - s.A1*y1 - s.A2*y2
				z := h.B0*y + h.B1*y1 + h.B2*y2 - h.A1*z1 - h.A2*z2
				x1, x2, y1, y2, z1, z2 = x[i], x1, y, y1, z, z1
				sum += z * z
			}
			want := [...]float64{sum, x1, x2, y1, y2, z1, z2}
			have := [...]float64{energy[c], got.X1[c], got.X2[c], got.Y1[c], got.Y2[c], got.Z1[c], got.Z2[c]}
			for i := range want {
				if math.Abs(have[i]-want[i]) > 1e-12*math.Max(1, math.Abs(want[i])) {
					t.Errorf("%d ch, channel %d: sum and memory %v, the difference equation gives %v", channels, c, have, want)
					break
				}
			}
		}
	}
}

// TestKWeightRefusesBadShapes: a partial frame or a channel count the
// kernels have no lanes for would read outside the buffer or mix
// channels, and a high-pass the kernels cannot fold would be filtered
// wrongly, so each panics.
func TestKWeightRefusesBadShapes(t *testing.T) {
	f := NewKWeighting(tableShelf, tableHighPass)
	cases := []struct {
		name string
		call func()
	}{
		{"three channels", func() { KWeight(make([]float64, 6), 3, &f, &KState{}, &[2]float64{}) }},
		{"no channel", func() { KWeight(make([]float64, 6), 0, &f, &KState{}, &[2]float64{}) }},
		{"half a stereo frame", func() { KWeight(make([]float64, 5), 2, &f, &KState{}, &[2]float64{}) }},
		{"high-pass numerator not g·(1, −2, 1)", func() { NewKWeighting(tableShelf, Biquad{1, -1.9, 1, -1.99, 0.99}) }},
	}
	for _, c := range cases {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("%s: no panic", c.name)
				}
			}()
			c.call()
		}()
	}
}
