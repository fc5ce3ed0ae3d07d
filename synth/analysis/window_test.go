package analysis

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestSmootherMatchesTheSum holds the closed form of what a frame reads of
// a piecewise envelope to the sum it stands for, worked out sample by
// sample: Σ w(k)·e(t_k) / Σ w(k) over the discrete Blackman–Harris window
// gonum builds, for envelopes of every kind of piece the language draws
// and frames straddling their corners.
func TestSmootherMatchesTheSum(t *testing.T) {
	const rate = 48000
	r := rand.New(rand.NewPCG(3, 4))
	for _, n := range []int{256, 1024, 4096} {
		fw := newFrameWindow(n)
		sm := newSmoother(float64(n-1) / 2 / rate)
		for trial := range 40 {
			e := Envelope{Attack: r.Float64() * 0.05, Decay: 0.005 + r.Float64()*0.5, Sustain: r.Float64() * 0.8, Release: 0.002 + r.Float64()*0.3, Pure: trial%2 == 0}
			if trial%5 == 0 {
				e.Points = []Point{{0, 0}, {0.004, 1}, {0.02, 0.3}, {0.05, 0.6}}
			}
			noteOff := 0.01 + r.Float64()*0.2
			pcs := e.pieces(noteOff, nil)
			gains := make([]float64, len(pcs))
			for i := range pcs {
				gains[i] = sm.gain(pcs[i].g)
			}
			for _, tau := range []float64{0, 0.003, e.Attack, noteOff, noteOff + 0.004, 0.1 + r.Float64()*0.3} {
				want := 0.0
				for k, w := range fw.w {
					want += w * e.At(tau+(float64(k)-fw.centre)/rate, noteOff)
				}
				want /= fw.sum
				got := sm.average(pcs, gains, tau)
				if math.Abs(got-want) > 1e-4*max(want, 1e-3) {
					t.Errorf("n=%d %+v off %.4f at %.4f: closed form %.8f, sum %.8f", n, e, noteOff, tau, got, want)
				}
			}
		}
	}
}
