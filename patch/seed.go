package patch

import "math"

// SplitMix64 (Steele, Lea and Flood, "Fast splittable pseudorandom number
// generators", OOPSLA 2014): a fixed, documented mixer, so derived seeds
// never change with the Go version or math/rand.
const golden = 0x9e3779b97f4a7c15

func mix64(z uint64) uint64 {
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}

// deriveSeed folds the parts into one seed, each step through the mixer so
// neighbouring inputs give unrelated seeds.
func deriveSeed(parts ...uint64) uint64 {
	h := uint64(golden)
	for _, p := range parts {
		h = mix64(h + p*golden + golden)
	}
	return h
}

// randomizePhases offsets the phase of every partial whose group sets its
// phases by value by a uniform random angle drawn from the note's seed, so
// round-robin variations share a spectrum but not a waveform. Random
// phases already differ between variations, and Schroeder phases are
// shifted in time instead, which keeps their low peak factor.
func (x *expander) randomizePhases(n *Note) {
	for i := range n.Partials {
		if x.patch.Groups[n.Partials[i].Group].PhaseRule != PhaseValue {
			continue
		}
		u := float64(deriveSeed(n.Seed, uint64(i))>>11) / (1 << 53)
		n.Partials[i].Phase = math.Mod(n.Partials[i].Phase+2*math.Pi*u, 2*math.Pi)
	}
}
