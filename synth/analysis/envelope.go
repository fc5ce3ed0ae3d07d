package analysis

import (
	"math"
	"slices"
)

// curveDepth is k of the patch language's curve for decays, releases and
// the stretches between points, (e^{−k·u} − e^{−k}) / (1 − e^{−k}) with
// k = ln 1000 (README, "Envelope shape"): it falls 60 dB of its range over
// the segment's time and lands on its target exactly. landing is e^{−k}.
var (
	curveDepth = math.Log(1000)
	landing    = math.Exp(-curveDepth)
)

// dbPerNeper converts a natural logarithm of an amplitude to decibels.
const dbPerNeper = 20 / math.Ln10

// Envelope is a partial's measured amplitude envelope in the patch
// language's terms, 1 at its peak, times in seconds from the onset.
type Envelope struct {
	Attack float64 // a straight rise from the onset to the peak
	// Decay is the time the decay takes to fall 60 dB of its range, from
	// the peak toward Sustain: the decay's T60, and the language's decay.
	Decay   float64
	Sustain float64 // level the decay settles at, 0..1 of the peak
	// Release is the time the release takes to fall 60 dB from the level
	// at note-off; 0 where the recording has no note-off.
	Release float64
	// Points, where set, replace Attack, Decay and Sustain: the first is
	// the onset at level 0.
	Points []Point
	// Pure says the decays fit pure exponentials (straight in dB for
	// ever) better than the language's curve, which bends down to land on
	// its target: a physical decay does the first, sinter's renderer the
	// second.
	Pure bool
	// FitDB is the largest difference between the envelope and the
	// measured level, in dB, over the frames within 60 dB of the peak and
	// above the noise.
	FitDB float64
}

// Point is one breakpoint of a breakpoint envelope.
type Point struct {
	Time  float64 // seconds from the onset
	Level float64 // 0..1 of the peak
}

// maxPoints is the most breakpoints the language takes in an envelope.
const maxPoints = 16

// curve is the piece of a curved segment of length l from level from to
// level to starting at t0, ending at t1 (which may be +Inf for a pure
// exponential that never lands): the language's curve, or with pure an
// exponential approaching to.
func curve(t0, l, from, to float64, pure bool) piece {
	g := -curveDepth / l
	if pure {
		return piece{t0: t0, t1: math.Inf(1), p: to, r: from - to, g: g}
	}
	return piece{t0: t0, t1: t0 + l, p: to - (from-to)*landing/(1-landing), r: (from - to) / (1 - landing), g: g}
}

// pieces lays out envelope e, released at noteOff seconds (+Inf for
// never), as the pieces a frame's average is worked out over; dst is
// reused.
func (e *Envelope) pieces(noteOff float64, dst []piece) []piece {
	dst = dst[:0]
	add := func(pc piece) {
		pc.t1 = min(pc.t1, noteOff)
		if pc.t1 > pc.t0 {
			dst = append(dst, pc)
		}
	}
	if len(e.Points) > 0 {
		for i := 1; i < len(e.Points); i++ {
			a, b := e.Points[i-1], e.Points[i]
			if a.Level == b.Level {
				add(piece{t0: a.Time, t1: b.Time, p: a.Level})
				continue
			}
			add(curve(a.Time, b.Time-a.Time, a.Level, b.Level, false))
		}
		last := e.Points[len(e.Points)-1]
		add(piece{t0: last.Time, t1: math.Inf(1), p: last.Level})
	} else {
		if e.Attack > 0 {
			add(piece{t0: 0, t1: e.Attack, q: 1 / e.Attack})
		}
		d := curve(e.Attack, e.Decay, 1, e.Sustain, e.Pure)
		add(d)
		if !e.Pure {
			add(piece{t0: d.t1, t1: math.Inf(1), p: e.Sustain})
		}
	}
	if math.IsInf(noteOff, 1) || e.Release <= 0 {
		return dst
	}
	level := 0.0
	if n := len(dst); n > 0 && dst[n-1].t1 >= noteOff {
		level = dst[n-1].at(noteOff)
	}
	if level > 0 {
		rel := curve(noteOff, e.Release, level, 0, e.Pure)
		dst = append(dst, rel)
	}
	return dst
}

// At is the envelope's level at t seconds from the onset for a note
// released at noteOff (+Inf for never), without a frame's smoothing.
func (e *Envelope) At(t, noteOff float64) float64 {
	var store [maxPoints + 4]piece
	for _, pc := range e.pieces(noteOff, store[:0]) {
		if t >= pc.t0 && t < pc.t1 {
			return pc.at(t)
		}
	}
	return 0
}

// envData is one partial's level as its frames measured it, for fitting
// an envelope to.
type envData struct {
	times []float64 // frame centres, seconds from the onset
	db    []float64 // measured level of each frame, dB of full scale
	// weight is how many of the measured frames each frame stands for,
	// where thin dropped its neighbours.
	weight []float64
	// every and everyDB are all the frames, before thin, for the slopes
	// and levels that guide the fits.
	every, everyDB []float64
	floor          float64 // level below which a frame is noise, dB
	// noiseDB is the level white noise alone reads in a frame, dB.
	noiseDB float64
	sm      smoother
	// noteOff is when the release starts, seconds from the onset; +Inf
	// where the recording has none.
	noteOff float64
	// attackFixed holds the attack where the recording's waveform, not
	// the frames, measured it (see fitAttacks).
	attackFixed bool
	attack      float64
	// scratch
	pcs   []piece
	gains []float64
}

// residuals are the differences in dB between the frames of envelope e at
// peak level peakDB and the measurement: over frames above the floor the
// difference itself, weighted down toward the floor where noise blurs the
// level; over frames below it, how far the envelope would rise above the
// floor, if at all.
func (d *envData) residuals(e *Envelope, peakDB float64, dst []float64) []float64 {
	d.pcs = e.pieces(d.noteOff, d.pcs)
	d.gains = d.gains[:0]
	for i := range d.pcs {
		d.gains = append(d.gains, d.sm.gain(d.pcs[i].g))
	}
	dst = dst[:0]
	lowest := d.floor - 60
	for m, t := range d.times {
		y := d.sm.average(d.pcs, d.gains, t)
		ydb := lowest
		if y > 0 {
			ydb = max(lowest, peakDB+dbPerNeper*math.Log(y))
		}
		r := 0.0
		switch {
		case d.db[m] >= d.floor:
			r = (ydb - d.db[m]) * min(1, max(0.25, (d.db[m]-d.floor)/20))
		case ydb > d.floor:
			r = ydb - d.floor
		}
		dst = append(dst, robust(r)*d.weight[m])
	}
	return dst
}

// robust tempers a difference in dB: a frame 20 dB or more off is an
// outlier (a spike of noise, a neighbour's leak) and counts about as much
// as one 20 dB off, while small differences count as they are.
func robust(r float64) float64 { return r / math.Sqrt(1+r*r/400) }

// thin keeps, for fitting, every frame of the first four windows after
// the onset and every frame where the level bends, and one in eight of
// the rest, which lie on straight stretches in dB (a steady or an
// exponentially decaying level) and add nothing a neighbour does not; a
// kept frame's residual then counts for the frames it stands for.
func (d *envData) thin() {
	const every, bend = 8, 0.02 // frames; dB of second difference
	onset := 4 * 2 * d.sm.half
	d.every, d.everyDB = d.times, d.db
	times, db, weight := d.times[:0:0], d.db[:0:0], d.weight[:0:0]
	since := 0
	for m := range d.times {
		since++
		straight := m > 0 && m+1 < len(d.db) && math.Abs(d.db[m-1]-2*d.db[m]+d.db[m+1]) < bend
		if d.times[m] > onset && straight && since < every && m+1 < len(d.times) {
			continue
		}
		times, db = append(times, d.times[m]), append(db, d.db[m])
		weight = append(weight, math.Sqrt(float64(since)))
		since = 0
	}
	d.times, d.db, d.weight = times, db, weight
}

// worst is the largest difference between envelope e at peakDB and the
// frames within 60 dB of the peak and above the floor, less what the noise
// may account for: three standard deviations of the level a frame reads
// with white noise at d.noiseDB added, 8.69/√2 dB times the noise's
// amplitude over the frame's (common practice for small noise).
func (d *envData) worst(e *Envelope, peakDB float64) float64 {
	return d.worstFrom(e, peakDB, math.Inf(-1))
}

// worstFrom is worst over the frames from time from on.
func (d *envData) worstFrom(e *Envelope, peakDB, from float64) float64 {
	d.pcs = e.pieces(d.noteOff, d.pcs)
	d.gains = d.gains[:0]
	for i := range d.pcs {
		d.gains = append(d.gains, d.sm.gain(d.pcs[i].g))
	}
	w := 0.0
	for m, t := range d.times {
		if d.db[m] < max(d.floor, peakDB-60) || t < from {
			continue
		}
		y := d.sm.average(d.pcs, d.gains, t)
		ydb := d.floor - 60
		if y > 0 {
			ydb = peakDB + dbPerNeper*math.Log(y)
		}
		noise := 3 * dbPerNeper / math.Sqrt2 * math.Pow(10, (d.noiseDB-d.db[m])/20)
		w = max(w, math.Abs(ydb-d.db[m])-noise)
	}
	return w
}

// slope fits a straight line in dB to the frames above the floor whose
// times lie in [from, to] and returns its slope in dB per second and the
// number of frames, weighting each by its height above the floor.
func (d *envData) slope(from, to float64) (dbPerSecond float64, frames int) {
	var sw, st, sy, stt, sty float64
	for m, t := range d.every {
		if t < from || t > to || d.everyDB[m] < d.floor {
			continue
		}
		y := d.everyDB[m]
		w := min(1, (y-d.floor)/20+0.05)
		sw += w
		st += w * t
		sy += w * y
		stt += w * t * t
		sty += w * t * y
		frames++
	}
	den := sw*stt - st*st
	if frames < 2 || den <= 0 {
		return 0, frames
	}
	return (sw*sty - st*sy) / den, frames
}

// fitADSR fits attack, decay, sustain and release, and the peak level, to
// the measurement: a few starting points from the shape of the
// measurement, each of the two curve families (the language's landing
// curve and pure exponentials), and a decay to silence as well as to a
// held level where the measurement leaves that open. It returns the best
// fit, its peak level in dB and its cost.
func (d *envData) fitADSR() (Envelope, float64, float64) {
	top := 0
	for m := range d.db {
		if d.db[m] > d.db[top] {
			top = m
		}
	}
	peakDB, tPeak := d.db[top], d.times[top]
	half := d.sm.half
	end := min(d.noteOff, d.times[len(d.times)-1])
	if end <= tPeak {
		end = d.times[len(d.times)-1]
	}
	// The decay's early slope, and whether the level settles: the slope
	// over the last fifth before note-off against the early one.
	early, _ := d.slope(tPeak+half, tPeak+half+max(4*half, (end-tPeak)/3))
	late, lateFrames := d.slope(end-(end-tPeak)/5, end-half/2)
	lateDB := peakDB
	if lateFrames > 0 {
		lateDB = d.levelNear(end - (end-tPeak)/10)
	}
	start := Envelope{Attack: max(1e-3, tPeak-half/2), Decay: 1, Release: 0.1}
	if d.attackFixed {
		start.Attack = d.attack
	}
	if early < -0.5 {
		start.Decay = min(600, 60/-early)
	}
	sustained := lateFrames >= 3 && math.Abs(late) < max(2, -early/4) && lateDB > peakDB-60
	if sustained {
		start.Sustain = math.Pow(10, (lateDB-peakDB)/20)
		if early < -0.5 {
			start.Decay = min(600, 60*(1-start.Sustain)/-early)
		}
	}
	if !math.IsInf(d.noteOff, 1) {
		if s, n := d.slope(d.noteOff+half, d.noteOff+half+max(4*half, 0.3)); n >= 2 && s < -1 {
			start.Release = min(600, 60/-s)
		}
	}
	// Each curve family, each with and without a held level, from the
	// decay that fits best on a grid; the fit that costs least wins.
	settled := start.Sustain
	if !sustained {
		settled = math.Pow(10, (max(lateDB, peakDB-40)-peakDB)/20)
	}
	type fit struct {
		e          Envelope
		peak, cost float64
	}
	var held, silent fit
	held.cost, silent.cost = math.Inf(1), math.Inf(1)
	for _, pure := range []bool{true, false} {
		for _, hold := range []bool{true, false} {
			e := start
			e.Pure, e.Sustain = pure, 0
			if hold {
				e.Sustain = settled
			}
			e.Decay = d.decayStart(e, peakDB)
			p, c := d.refineADSR(&e, peakDB, hold)
			switch {
			case hold && c < held.cost:
				held = fit{e, p, c}
			case !hold && c < silent.cost:
				silent = fit{e, p, c}
			}
		}
	}
	if d.preferSilent(held.e, held.peak, held.cost, silent.e, silent.peak, silent.cost) {
		return silent.e, silent.peak, silent.cost
	}
	return held.e, held.peak, held.cost
}

// preferSilent reports whether a decay to silence is to be written
// rather than one to a held level: where the held level lies below the
// floor, or 10 dB under where the decay has got to when the frames end,
// where no frame shows it; or where silence fits about as well (the
// note-off cut the decay short of it, say): the simpler envelope.
func (d *envData) preferSilent(held Envelope, heldPeak, heldCost float64, silent Envelope, silentPeak, silentCost float64) bool {
	if held.Sustain == 0 {
		return true
	}
	// A level the decay is still far above when the frames end is no
	// measurement either.
	end := min(d.noteOff, d.times[len(d.times)-1])
	if 20*math.Log10(held.At(end, math.Inf(1))/held.Sustain) > 10 {
		return true
	}
	return heldPeak+20*math.Log10(held.Sustain) < d.floor+3 ||
		silentCost <= 1.2*heldCost && d.worst(&silent, silentPeak) <= max(0.1, d.worst(&held, heldPeak)+0.05)
}

// decayStart picks, for e's other settings, the decay time on a grid of
// 0.6 decades from 10 ms to 600 s that fits best, as a start for
// the least-squares fit, which from a decay far off can settle in a poor
// minimum (a slow decay standing in for a held level).
func (d *envData) decayStart(e Envelope, peakDB float64) float64 {
	best, bestCost := e.Decay, math.Inf(1)
	var r []float64
	for k := range 9 {
		e.Decay = 0.01 * math.Pow(10, float64(k)*0.6)
		r = d.residuals(&e, peakDB, r)
		if c := cost(r); c < bestCost {
			best, bestCost = e.Decay, c
		}
	}
	return min(best, 600)
}

// levelNear is the measured level of the frame nearest t.
func (d *envData) levelNear(t float64) float64 {
	i, _ := slices.BinarySearch(d.every, t)
	return d.everyDB[min(i, len(d.everyDB)-1)]
}

// fitFrom runs the least-squares fit of e from where it stands, in its
// curve family; a sustain of 0 stays 0, any other is free, and is fitted
// as 0 too to see whether silence is preferred. It returns the fitted
// envelope, its peak level and the cost.
func (d *envData) fitFrom(e Envelope, peakDB float64) (Envelope, float64, float64) {
	p, c := d.refineADSR(&e, peakDB, e.Sustain > 0)
	if e.Sustain == 0 {
		return e, p, c
	}
	silent := e
	silent.Sustain = 0
	ps, cs := d.refineADSR(&silent, p, false)
	if d.preferSilent(e, p, c, silent, ps, cs) {
		return silent, ps, cs
	}
	return e, p, c
}

// refineADSR runs the least-squares fit of e from where it stands; with
// sustained the sustain level is free, else held at 0. It returns the
// fitted peak level and the cost.
func (d *envData) refineADSR(e *Envelope, peakDB float64, sustained bool) (float64, float64) {
	released := !math.IsInf(d.noteOff, 1)
	span := d.times[len(d.times)-1]
	// theta: peak dB, ln decay, [attack], [sustain dB], [ln release]
	theta := []float64{peakDB, math.Log(e.Decay)}
	lo := []float64{peakDB - 20, math.Log(1e-3)}
	hi := []float64{peakDB + 20, math.Log(600)}
	if !d.attackFixed {
		theta = append(theta, e.Attack)
		lo, hi = append(lo, 0), append(hi, max(span, 1e-3))
	}
	if sustained {
		theta = append(theta, 20*math.Log10(max(e.Sustain, 1e-5)))
		lo, hi = append(lo, -100), append(hi, 0)
	}
	if released {
		theta = append(theta, math.Log(e.Release))
		lo, hi = append(lo, math.Log(1e-3)), append(hi, math.Log(600))
	}
	set := func(th []float64) {
		e.Decay = math.Exp(th[1])
		i := 2
		if !d.attackFixed {
			e.Attack = th[i]
			i++
		}
		if sustained {
			e.Sustain = math.Pow(10, th[i]/20)
			i++
		}
		if released {
			e.Release = math.Exp(th[i])
		}
	}
	prob := fitProblem{lo: lo, hi: hi, residuals: func(th, dst []float64) []float64 {
		set(th)
		return d.residuals(e, th[0], dst)
	}}
	c := levenberg(prob, theta, 20)
	set(theta)
	return theta[0], c
}

// fitPoints fits a breakpoint envelope where attack, decay and sustain
// miss: the language's curve through up to 16 points from the onset, the
// first at level 0. The times start where a line through the measured
// levels in dB bends most (the Ramer–Douglas–Peucker simplification of a
// polyline, U. Ramer 1972; D. Douglas and T. Peucker 1973), until every
// frame lies within half a decibel of the lines or the points are used;
// the points' levels are then fitted by least squares with the window's
// smoothing taken into account, and where that still misses by more than
// a decibel their times as well.
func (d *envData) fitPoints(start Envelope, peakDB float64) (Envelope, float64) {
	d = d.fewer(pointFrames)
	last := len(d.every) - 1
	for last > 0 && (d.every[last] > d.noteOff || d.everyDB[last] < d.floor) {
		last--
	}
	first := 0
	for first < last && d.every[first] <= 0 {
		first++
	}
	keep := []int{first, last}
	for len(keep) < maxPoints-1 {
		worst, at := 0.5, -1
		for k := 1; k < len(keep); k++ {
			a, b := keep[k-1], keep[k]
			for m := a + 1; m < b; m++ {
				u := (d.every[m] - d.every[a]) / (d.every[b] - d.every[a])
				if dev := math.Abs(d.everyDB[m] - (d.everyDB[a] + u*(d.everyDB[b]-d.everyDB[a]))); dev > worst {
					worst, at = dev, m
				}
			}
		}
		if at < 0 {
			break
		}
		keep = append(keep, at)
		slices.Sort(keep)
	}
	times := []float64{0}
	var levels []float64
	for _, m := range keep {
		if t := d.every[m]; t > times[len(times)-1]+1e-4 {
			times, levels = append(times, t), append(levels, d.everyDB[m])
		}
	}
	e := Envelope{Release: max(start.Release, 1e-3)}
	released := !math.IsInf(d.noteOff, 1)
	n := len(times) - 1
	// theta: the level of each point after the first, dB of full scale;
	// the logarithms of the gaps between the times; ln release.
	theta := slices.Clone(levels)
	lo, hi := []float64{}, []float64{}
	for range n {
		lo, hi = append(lo, d.floor-60), append(hi, peakDB+20)
	}
	for i := 1; i < len(times); i++ {
		theta = append(theta, math.Log(times[i]-times[i-1]))
		lo, hi = append(lo, math.Log(1e-4)), append(hi, math.Log(maxPointTime))
	}
	if released {
		theta = append(theta, math.Log(e.Release))
		lo, hi = append(lo, math.Log(1e-3)), append(hi, math.Log(600))
	}
	// The points stay within the frames: the times are scaled down if
	// the gaps add up to more.
	limit := min(d.noteOff, d.times[len(d.times)-1])
	set := func(th []float64) float64 {
		top := th[0]
		for _, l := range th[:n] {
			top = max(top, l)
		}
		total := 0.0
		for i := range n {
			total += math.Exp(th[n+i])
		}
		scale := min(1, limit/total)
		e.Points = append(e.Points[:0], Point{0, 0})
		t := 0.0
		for i := range n {
			t += math.Exp(th[n+i]) * scale
			e.Points = append(e.Points, Point{t, math.Pow(10, (th[i]-top)/20)})
		}
		if released {
			e.Release = math.Exp(th[2*n])
		}
		return top
	}
	// The levels and the release first, the times held; then, if that
	// misses by more than a decibel, the times too.
	free := make([]bool, len(theta))
	for i := range free {
		free[i] = i < n || i == 2*n
	}
	partial := fitProblem{lo: slices.Clone(lo), hi: slices.Clone(hi), residuals: func(th, dst []float64) []float64 {
		return d.residuals(&e, set(th), dst)
	}}
	for i := range free {
		if !free[i] {
			partial.lo[i], partial.hi[i] = theta[i], theta[i]
		}
	}
	levenberg(partial, theta, 25)
	fitted := set(theta)
	if e.FitDB = d.worst(&e, fitted); e.FitDB > 1 {
		before, beforePeak := e, fitted
		before.Points = slices.Clone(e.Points)
		levenberg(fitProblem{lo: lo, hi: hi, residuals: partial.residuals}, theta, 25)
		fitted = set(theta)
		if e.FitDB = d.worst(&e, fitted); e.FitDB > before.FitDB {
			e, fitted = before, beforePeak
		}
	}
	return e, fitted
}

// pointFrames is the most frames a breakpoint envelope is fitted to:
// sixteen points follow no finer detail, and the fit's cost grows with
// frames times points.
const pointFrames = 160

// fewer is d with at most n of its frames, evenly taken, each weighted
// for those it stands for.
func (d *envData) fewer(n int) *envData {
	stride := (len(d.times) + n - 1) / n
	if stride <= 1 {
		return d
	}
	c := *d
	c.times, c.db, c.weight = nil, nil, nil
	for m := 0; m < len(d.times); m += stride {
		c.times, c.db = append(c.times, d.times[m]), append(c.db, d.db[m])
		c.weight = append(c.weight, d.weight[m]*math.Sqrt(float64(stride)))
	}
	c.pcs, c.gains = nil, nil
	return &c
}

// maxPointTime is the latest time a breakpoint may have, seconds: the
// language's longest note.
const maxPointTime = 600

// farFrom reports whether t is at least gap from every time in times.
func farFrom(times []float64, t, gap float64) bool {
	for _, u := range times {
		if math.Abs(u-t) < gap {
			return false
		}
	}
	return true
}
