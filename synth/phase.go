package synth

import "math"

// phaseTableBits sets the size of the table behind sinCos: 2^8 entries keep
// the remainder under 2π/512, where the series below reach 1e-19.
const phaseTableBits = 8

// phaseTable holds sin and cos at every 2^-phaseTableBits of a cycle.
var phaseTable = func() (t [1 << phaseTableBits][2]float64) {
	for i := range t {
		t[i][0], t[i][1] = math.Sincos(2 * math.Pi * float64(i) / (1 << phaseTableBits))
	}
	return t
}()

// sinCos returns sin and cos of a 64-bit phase (2^64 = one cycle). It is an
// exact table entry rotated by the remainder δ, |δ| ≤ π/256, through the
// Taylor series of sin δ and cos δ − 1 to the terms below 1e-19 (Abramowitz
// & Stegun 4.3.65 and 4.3.66), several times cheaper than math.Sincos: every
// oscillator calls it once per block.
func sinCos(phase uint64) (sin, cos float64) {
	const shift = 64 - phaseTableBits
	i := (phase + 1<<(shift-1)) >> shift // nearest entry
	d := float64(int64(phase-i<<shift)) * phaseUnit
	d2 := d * d
	sinD := d * (1 - d2/6*(1-d2/20*(1-d2/42)))
	cosD1 := -d2 / 2 * (1 - d2/12*(1-d2/30*(1-d2/56))) // cos δ − 1
	e := &phaseTable[i&(1<<phaseTableBits-1)]
	return e[0] + (e[0]*cosD1 + e[1]*sinD), e[1] + (e[1]*cosD1 - e[0]*sinD)
}
