package analysis

import (
	"math"
	"slices"
)

// noteOffPartials is how many of the loudest partials decide the
// note-off.
const noteOffPartials = 4

// findNoteOff looks for the moment the recording's note was released:
// every partial's decay steepens at once there. Candidates are the times
// where the loudest partials' levels, in dB, fall faster after than
// before, by the slopes of straight lines fitted on either side beyond
// the window's reach; the best is kept if fitting each partial's envelope
// with a release there costs less than half of fitting it without one,
// and is then placed to within a millisecond by a golden-section search
// on that cost.
func findNoteOff(data []*envData, parts []measured, fits []fitted) (float64, bool) {
	order := make([]int, len(parts))
	for i := range order {
		order[i] = i
	}
	slices.SortFunc(order, func(a, b int) int { return cmpFloat(parts[b].cand.amp, parts[a].cand.amp) })
	top := order[:min(noteOffPartials, len(order))]
	// The grid: the frames of the loudest partial, after every top
	// partial's peak and window.
	lead := data[top[0]]
	earliest := 0.0
	settled := make([]float64, len(data)) // each top partial's peak, and a window
	for _, i := range top {
		d := data[i]
		peak := 0
		for m := range d.db {
			if d.db[m] > d.db[peak] {
				peak = m
			}
		}
		settled[i] = d.times[peak] + d.sm.half
		earliest = max(earliest, settled[i]+d.sm.half)
	}
	type candidate struct{ t, score float64 }
	var scores []candidate
	for _, t := range lead.every {
		if t < earliest {
			continue
		}
		score, weight := 0.0, 0.0
		for _, i := range top {
			d := data[i]
			reach := max(0.1, 6*d.sm.half)
			before, nb := d.slope(max(settled[i], t-d.sm.half-reach), t-d.sm.half)
			after, na := d.slope(t+d.sm.half, t+d.sm.half+reach)
			if nb < 3 || na < 3 {
				continue
			}
			score += after - before // negative where it steepens
			weight++
		}
		if weight > 0 {
			scores = append(scores, candidate{t, score / weight})
		}
	}
	// The deepest few local minima, two windows apart at least: the
	// steepest turn need not be the note-off (the language's own release
	// turns down again as it lands on silence).
	var cands []candidate
	for k, c := range scores {
		// A steepening of less than 6 dB/s is within what noise and
		// beating do to a slope.
		if c.score > -6 || k > 0 && scores[k-1].score < c.score || k+1 < len(scores) && scores[k+1].score <= c.score {
			continue
		}
		cands = append(cands, c)
	}
	slices.SortFunc(cands, func(a, b candidate) int { return cmpFloat(a.score, b.score) })
	var picked []float64
	for _, c := range cands {
		if len(picked) < 3 && farFrom(picked, c.t, 4*lead.sm.half) {
			picked = append(picked, c.t)
		}
	}
	without := 0.0
	for _, i := range top {
		without += fits[i].cost
	}
	// Fits from scratch with the release at each candidate; the best is
	// then placed by the fit of its neighbourhood alone.
	best, bestCost := 0.0, 0.5*without
	warm := make([]fitted, len(data))
	for _, t := range picked {
		with := 0.0
		try := make([]fitted, len(data))
		for _, i := range top {
			d := data[i]
			d.noteOff = t
			try[i].env, try[i].peakDB, try[i].cost = d.fitADSR()
			d.noteOff = math.Inf(1)
			with += try[i].cost
		}
		if with < bestCost {
			best, bestCost, warm = t, with, try
		}
	}
	if best == 0 {
		return 0, false
	}
	// The search: each of the loudest partials places it for itself, its
	// envelope fitted again for each time tried, by golden-section search
	// over two window lengths either side (the slopes that found the
	// candidate blur it by about one); the partial that then fits best
	// decides, if it fits within a decibel. A partial that fits no
	// envelope of the language well (partials of two groups summed, a
	// swell) would pull the note-off off to fit better itself. Where none
	// fits well, the fit of each one's neighbourhood of the candidate
	// alone decides.
	span := 4 * lead.sm.half
	lo, hi := max(earliest, best-span), best+span
	t, least := 0.0, math.Inf(1)
	for _, i := range top {
		d, w := data[i], warm[i]
		fit := func(t float64) (Envelope, float64, float64) {
			d.noteOff = t
			defer func() { d.noteOff = math.Inf(1) }()
			return d.fitFrom(w.env, w.peakDB)
		}
		own := goldenMin(lo, hi, func(t float64) float64 {
			_, _, c := fit(t)
			return c
		})
		if e, p, _ := fit(own); d.worstAt(&e, p, own) < least {
			t, least = own, d.worstAt(&e, p, own)
		}
	}
	if least <= 1 {
		return t, true
	}
	var costs []func(float64) float64
	for _, i := range top {
		costs = append(costs, data[i].releaseFit(best, span, warm[i].env.Pure))
	}
	return goldenMin(lo, hi, func(t float64) float64 {
		sum := 0.0
		for _, f := range costs {
			sum += f(t)
		}
		return sum
	}), true
}

// worstAt is worst with the note released at t, past the frames an
// attack the frames cannot see would spoil (fitAttacks measures those
// later).
func (d *envData) worstAt(e *Envelope, peakDB, t float64) float64 {
	d.noteOff = t
	defer func() { d.noteOff = math.Inf(1) }()
	return d.worstFrom(e, peakDB, 4*d.sm.half)
}

// goldenMin finds the minimum of f over [a, b] to a millisecond by
// golden-section search, f being unimodal there.
func goldenMin(a, b float64, f func(float64) float64) float64 {
	phi := (math.Sqrt(5) - 1) / 2
	x1, x2 := b-phi*(b-a), a+phi*(b-a)
	f1, f2 := f(x1), f(x2)
	for b-a > 1e-3 {
		if f1 < f2 {
			b, x2, f2 = x2, x1, f1
			x1 = b - phi*(b-a)
			f1 = f(x1)
		} else {
			a, x1, f1 = x1, x2, f2
			x2 = a + phi*(b-a)
			f2 = f(x2)
		}
	}
	return (a + b) / 2
}

// fitted is an envelope fitted to a partial, its peak level and cost.
type fitted struct {
	env    Envelope
	peakDB float64
	cost   float64
}

// withRelease fits the partial again with the release d.noteOff now
// gives it, from its fit without one and from scratch, and keeps the
// better.
func (d *envData) withRelease(f fitted) (Envelope, float64) {
	e, p, c := d.withReleaseCost(f)
	if e2, p2, c2 := d.fitADSR(); c2 < c {
		return e2, p2
	}
	return e, p
}

// withReleaseCost is withRelease's warm start alone, with its cost.
func (d *envData) withReleaseCost(f fitted) (Envelope, float64, float64) {
	e := f.env
	e.Release = 0.1
	if s, n := d.slope(d.noteOff+d.sm.half, d.noteOff+d.sm.half+max(4*d.sm.half, 0.3)); n >= 2 && s < -1 {
		e.Release = min(600, 60/-s)
	}
	return d.fitFrom(e, f.peakDB)
}

// releaseFit returns how well a release starting at t, within span of
// centre, fits the frames around centre, whatever the envelope does
// before: an exponential through t (any slope: a decay, a held level) then
// the release, in the curve family pure says, both fitted by least
// squares; the sum of squared differences in dB. The frames are chosen
// once, so the cost moves smoothly with t. The note-off is placed by
// this, not by whole envelopes, which may miss elsewhere (a swell, a
// partial two groups share) and pull it off.
func (d *envData) releaseFit(centre, span float64, pure bool) func(t float64) float64 {
	reach := span + max(0.05, 4*d.sm.half)
	var times, dbs []float64
	for m, tm := range d.every {
		if tm >= centre-reach && tm <= centre+reach {
			times, dbs = append(times, tm), append(dbs, d.everyDB[m])
		}
	}
	before, _ := d.slope(centre-reach, centre-span-d.sm.half)
	after, _ := d.slope(centre+span+d.sm.half, centre+reach)
	release := 0.1
	if after < -1 {
		release = min(600, 60/-after)
	}
	start := centre - 2*reach
	pcs := make([]piece, 2)
	gains := make([]float64, 2)
	return func(t float64) float64 {
		if len(times) < 4 {
			return 0
		}
		theta := []float64{d.levelNear(t), before / dbPerNeper, math.Log(release)}
		prob := fitProblem{lo: []float64{d.floor - 20, -200, math.Log(1e-3)}, hi: []float64{0, 50, math.Log(600)},
			residuals: func(th, dst []float64) []float64 {
				level := math.Pow(10, th[0]/20)
				pcs[0] = piece{t0: start, t1: t, r: level * math.Exp(-th[1]*(t-start)), g: th[1]}
				pcs[1] = curve(t, math.Exp(th[2]), level, 0, pure)
				for k := range pcs {
					gains[k] = d.sm.gain(pcs[k].g)
				}
				dst = dst[:0]
				for m, tm := range times {
					y := d.sm.average(pcs, gains, tm)
					ydb := d.floor - 60
					if y > 0 {
						ydb = max(ydb, dbPerNeper*math.Log(y))
					}
					r := 0.0
					switch {
					case dbs[m] >= d.floor:
						r = ydb - dbs[m]
					case ydb > d.floor:
						r = ydb - d.floor
					}
					dst = append(dst, robust(r))
				}
				return dst
			}}
		return levenberg(prob, theta, 30)
	}
}
