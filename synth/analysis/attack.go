package analysis

import (
	"math"
	"slices"
)

// attackPartials is how many partials have their attacks fitted together
// at one time, loudest first.
const attackPartials = 16

// attackModelDB is how much of the waveform's energy over the first
// moments of the note the measured partials, with one attack, may leave
// unexplained for each partial's own attack to be fitted.
const attackModelDB = -30

// onsetPartial is what fitAttacks knows of a partial whose frames have
// been fitted: where it sits and how it sounds after its attack.
type onsetPartial struct {
	omega, phase float64 // radians per sample; phase of its cosine at the onset sample
	peakDB       float64
	env          Envelope
	short        bool // its attack is too short for its frames to measure
	// unknown says no envelope of the language fits the partial's frames
	// (partials of two groups summed, a swell): its first moments are
	// anyone's guess, and the waveform fit leaves it out rather than
	// drawing a wrong guess into the others' attacks.
	unknown bool
	longest float64 // the longest attack it could have and its frames not show it
	pieces  []piece // its envelope after the attack
	peak    float64
}

// prepare lays out the partial's envelope once its note-off is known.
func (op *onsetPartial) prepare(noteOff float64) {
	op.peak = math.Pow(10, op.peakDB/20)
	op.pieces = op.env.pieces(noteOff, nil)
	if op.short && len(op.pieces) > 0 && op.env.Attack > 0 && len(op.env.Points) == 0 {
		op.pieces = op.pieces[1:]
	}
}

// post is the partial's level at t seconds from the onset as its fitted
// envelope gives it once the attack is over, its first piece after the
// attack carried back before the fitted attack's end: the part of the
// envelope the frames measured. A partial whose attack the frames
// measured has its whole envelope here.
func (op *onsetPartial) post(t float64) float64 {
	pcs := op.pieces
	if len(pcs) == 0 {
		return 0
	}
	if t < pcs[0].t0 {
		if !op.short {
			return 0
		}
		return op.peak * pcs[0].at(t)
	}
	for i := range pcs {
		if t < pcs[i].t1 {
			return op.peak * pcs[i].at(t)
		}
	}
	return 0
}

// level is the partial's level at t with attack a: for a short one a
// straight rise from the onset to its post-attack level at a, then that
// level.
func (op *onsetPartial) level(t, a float64) float64 {
	switch {
	case t < 0:
		return 0
	case op.short && t < a:
		return op.post(a) * t / a
	}
	return op.post(t)
}

// fitAttacks measures the attacks the frames cannot, and the onset to a
// fraction of a sample: a frame whose window holds the onset reads the
// spray of every partial's sudden start, so the fits leave those frames
// out, and an attack shorter than about a window then leaves no mark on
// the frames that remain. It fits instead the waveform over the first
// moments of the note, sample by sample, with the sum of the partials as
// measured (frequency, phase, and the envelope after the attack), each
// rising in a straight line to its envelope at its own attack time. The
// least-squares solution is found by Levenberg–Marquardt: first one shift
// of the onset and one attack for every partial whose frames did not
// measure its attack, then each such partial's own attack,
// attackPartials at a time, loudest first, the others held meanwhile. It
// returns each partial's attack (its fitted one where its frames
// measured it) and the shift in seconds.
func fitAttacks(x []float64, rate, onsetSample int, noteOff float64, ops []onsetPartial) (attacks []float64, shift, transientDB float64) {
	attacks = make([]float64, len(ops))
	transientDB = math.NaN()
	var short, known []int
	span := 0.005
	for i := range ops {
		op := &ops[i]
		op.prepare(noteOff)
		attacks[i] = op.env.Attack
		if op.unknown {
			continue
		}
		known = append(known, i)
		if op.short {
			short = append(short, i)
			span = max(span, 2*op.longest)
			attacks[i] = 0.003
		}
	}
	lead := min(onsetSample, rate/1000) // a millisecond before the onset found
	span = min(span, 0.2, noteOff)
	frames := min(int(span*float64(rate)), len(x)-onsetSample)
	step := max(1, frames/3000)
	var idx []int // samples used, from the onset found
	for k := -lead; k < frames; k += step {
		idx = append(idx, k)
	}
	if len(short) == 0 || len(idx) < 8 {
		return attacks, 0, transientDB
	}
	slices.SortFunc(short, func(a, b int) int { return cmpFloat(ops[b].peakDB, ops[a].peakDB) })
	target := make([]float64, len(idx))
	cosines := make([][]float64, len(ops))
	for j, k := range idx {
		target[j] = x[onsetSample+k]
	}
	for i, op := range ops {
		c := make([]float64, len(idx))
		for j, k := range idx {
			c[j] = math.Cos(op.phase + op.omega*float64(k))
		}
		cosines[i] = c
	}
	seconds := func(k int) float64 { return float64(k) / float64(rate) }

	// The shift and one attack for all, over the loudest partials (the
	// rest barely move the waveform).
	loud := slices.Clone(known)
	slices.SortFunc(loud, func(a, b int) int { return cmpFloat(ops[b].peakDB, ops[a].peakDB) })
	loud = loud[:min(attackPartials, len(loud))]
	common := []float64{0, 0.003}
	// The onset moves by up to a millisecond, never before the file.
	commonFit := fitProblem{lo: []float64{-seconds(lead), 0}, hi: []float64{1e-3, 2 * ops[short[0]].longest},
		residuals: func(th, dst []float64) []float64 {
			dst = dst[:0]
			for j, k := range idx {
				t := seconds(k) - th[0]
				v := -target[j]
				for _, i := range loud {
					v += ops[i].level(t, th[1]) * cosines[i][j]
				}
				dst = append(dst, v)
			}
			return dst
		}}
	missed := levenberg(commonFit, common, 30)
	shift = common[0]
	transientDB = 10 * math.Log10(max(missed, 1e-30)/max(cost(target), 1e-30))
	for _, i := range short {
		attacks[i] = common[1]
	}
	// Where the partials measured leave much of the waveform unexplained
	// (a transient, a knock, partials too short to track), attacks fitted
	// one by one would fit that instead: one attack serves them all.
	if transientDB > attackModelDB {
		return attacks, shift, transientDB
	}

	// Each partial's attack, a block at a time, the others held; each
	// partial's levels after its attack, at the samples used, first.
	post := make([][]float64, len(ops))
	for _, i := range known {
		post[i] = make([]float64, len(idx))
		for j, k := range idx {
			post[i][j] = ops[i].level(seconds(k)-shift, math.Inf(-1))
		}
	}
	level := func(i, j int, a, pa float64) float64 {
		t := seconds(idx[j]) - shift
		if ops[i].short && t >= 0 && t < a {
			return pa * t / a
		}
		return post[i][j]
	}
	fixed := make([]float64, len(idx))
	for block := 0; block < len(short); block += attackPartials {
		free := short[block:min(block+attackPartials, len(short))]
		inBlock := map[int]bool{}
		for _, i := range free {
			inBlock[i] = true
		}
		clear(fixed)
		for _, i := range known {
			if inBlock[i] {
				continue
			}
			pa := ops[i].post(attacks[i])
			for j := range idx {
				fixed[j] += level(i, j, attacks[i], pa) * cosines[i][j]
			}
		}
		theta := make([]float64, len(free))
		lo, hi := make([]float64, len(free)), make([]float64, len(free))
		for f, i := range free {
			theta[f] = attacks[i]
			lo[f], hi[f] = 0, max(2*ops[i].longest, 1e-3)
		}
		pas := make([]float64, len(free))
		prob := fitProblem{lo: lo, hi: hi,
			residuals: func(th, dst []float64) []float64 {
				dst = append(dst[:0], fixed...)
				for f, i := range free {
					pas[f] = ops[i].post(th[f])
				}
				for j := range idx {
					v := dst[j] - target[j]
					for f, i := range free {
						v += level(i, j, th[f], pas[f]) * cosines[i][j]
					}
					dst[j] = v
				}
				return dst
			},
			jacobian: func(th []float64, jac [][]float64) {
				for f, i := range free {
					a := max(th[f], 1e-6)
					// d/da of post(a)·t/a, for 0 ≤ t < a.
					const h = 1e-7
					pa := ops[i].post(a)
					d := (ops[i].post(a+h)-pa)/h/a - pa/(a*a)
					for j, k := range idx {
						jac[f][j] = 0
						if t := seconds(k) - shift; t >= 0 && t < a {
							jac[f][j] = d * t * cosines[i][j]
						}
					}
				}
			},
		}
		levenberg(prob, theta, 30)
		for f, i := range free {
			attacks[i] = theta[f]
		}
	}
	return attacks, shift, transientDB
}
