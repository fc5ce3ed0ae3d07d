package analysis

import (
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"sinter/patch"
)

// Recording names the file a Result was measured from, for the patch's
// comments.
type Recording struct {
	Name   string // file name, without its folder
	SHA256 string // hex
	// Channel says which channel was analysed: "mono", "left", "right"
	// or "sum".
	Channel string
}

// Tolerances within which partials are written as one rule: half the
// accuracy the analysis aims at, so writing a rule costs less than
// measuring does.
const (
	levelLawDB   = 0.1   // a level rule's largest miss, dB
	timeLawShare = 0.025 // a time rule's largest miss, of the time
	// timeLawFloor is the least a time rule is held to, in seconds: an
	// attack is measured to about a millisecond in a recording whose
	// onset has a transient of its own.
	timeLawFloor = 1e-3
	sustainLawDB = 0.25 // a sustain rule's largest miss, dB
	phaseAgree   = 10.0 // degrees within which a group's phases count as one
)

// Draft writes the result as a patch: the simplest groups that hold the
// partials within the tolerances above, each with a comment giving what
// was measured, the recording's name and SHA-256, the residual and the
// law at the top. The patch renders the recording's note at its key; its
// other keys, its layers and its levelling are defaults a designer edits.
func (res *Result) Draft(name string, rec Recording) patch.Draft {
	keyHz := patch.KeyFrequency(res.Key, 440)
	d := patch.Draft{Name: name, SampleRate: min(patch.MaxSampleRate, max(patch.MinSampleRate, res.SampleRate)), BitDepth: 24}
	d.Keys = keyRange(res.Key)
	d.Comment = res.header(rec)
	// The length follows the recording from its onset: the hold up to the
	// note-off, the tail after it; a note the recording never releases
	// holds to its end, and the tail holds the longest release written.
	total := min(patch.MaxSeconds, max(0.01, res.Length-res.Onset))
	if res.Released {
		d.Hold, d.Tail = min(res.NoteOff, total), max(0, total-res.NoteOff)
	} else {
		d.Hold, d.Tail = total, 0.1
		for _, p := range res.Partials {
			d.Tail = max(d.Tail, releaseOf(p.Envelope))
		}
		d.Tail = min(d.Tail, patch.MaxSeconds-d.Hold)
	}
	highest := 0.0
	for _, p := range res.Partials {
		highest = max(highest, p.Hz)
	}
	// The default band limit (0.45 of the rate, faded over its last
	// tenth) would drop or soften a recording's highest partials.
	if limit := 0.45 * float64(d.SampleRate); highest > 0.9*limit {
		d.BandLimit = 0.5
		d.BandFade = max(0, min(0.1, 1-highest*1.001/(0.5*float64(d.SampleRate))))
	}
	for _, g := range res.groups() {
		d.Groups = append(d.Groups, res.draftGroup(g, keyHz))
	}
	return d
}

// keyRange is two octaves around key in steps of a minor third, within
// MIDI's range, always through key itself.
func keyRange(key int) patch.KeyRange {
	lo, hi := max(0, key-12), min(127, key+12)
	lo = key - 3*((key-lo)/3)
	hi = key + 3*((hi-key)/3)
	return patch.KeyRange{From: lo, To: hi, Step: 3}
}

// header is the patch's opening comment.
func (res *Result) header(rec Recording) []string {
	lines := []string{
		fmt.Sprintf("Measured by sinter analyze from %s (%s), sha256 %s.", rec.Name, rec.Channel, rec.SHA256),
		fmt.Sprintf("%d Hz, %.3f s; the note starts %.3f s in%s.", res.SampleRate, res.Length, res.Onset, res.releaseText()),
		res.PitchText() + ".",
		"Law: " + res.LawText() + ".",
		fmt.Sprintf("Residual (energy outside the partials: breath, bow, noise): %.1f dB%s.", res.ResidualDB, res.transientText()),
		"Levels are as recorded, in dBFS; render levels the set to -1 dBFS peak",
		"(normalize's default). Keys and velocities are defaults to edit.",
	}
	if res.Dropped > 0 {
		lines = append(lines, fmt.Sprintf("%d quieter partials above the floor were left out (--partials).", res.Dropped))
	}
	return lines
}

// transientText says how much of the onset the partials leave out.
func (res *Result) transientText() string {
	if math.IsNaN(res.TransientDB) {
		return ""
	}
	return fmt.Sprintf("; of the onset, %.1f dB", res.TransientDB)
}

// releaseText says where the note was released, if it was.
func (res *Result) releaseText() string {
	if !res.Released {
		return " and is not released before the recording ends"
	}
	return fmt.Sprintf(" and is released %.3f s after that", res.NoteOff)
}

// PitchText says the pitch as the report and the patch write it.
func (res *Result) PitchText() string {
	key := fmt.Sprintf("%s %+.2f cents (%.3f Hz)", patch.NoteName(res.Key), res.Cents, res.Reference)
	switch {
	case res.Given:
		return "Reference " + key + ", as given; ratios are to it"
	case res.Pitched:
		return "Pitch " + key
	}
	return "Unpitched: ratios are to the lowest strong partial, " + key
}

// LawText names the law and its fit.
func (res *Result) LawText() string {
	l := res.Law
	switch l.Kind {
	case Harmonic:
		return fmt.Sprintf("harmonic series of %.4f Hz, fit error %.4f cents RMS, %.4f at most", l.F0, l.RMSCents, l.MaxCents)
	case Stiff:
		return fmt.Sprintf("stiff string, f0 %.4f Hz, B = %.4g, fit error %.4f cents RMS, %.4f at most", l.F0, l.B, l.RMSCents, l.MaxCents)
	}
	return "free ratios (no series fits within the measured error)"
}

// group is a set of partials written as one patch group.
type group struct {
	members []int // indices into Partials, lowest first
	series  bool  // harmonics of the law
}

// minRun is the fewest partials written as one group with rules; fewer
// are gathered with the other partials left over.
const minRun = 3

// groups splits the partials into the groups the patch writes. The law's
// series, lowest first, is cut into the longest runs that one group with a
// rule for each setting holds (a complete harmonic series, a level rule,
// an envelope rule), and so are the partials outside the law as ratios
// groups; what no run of minRun or more holds is gathered into groups of
// partials whose envelopes agree; each partial with a breakpoint envelope
// stands alone.
func (res *Result) groups() []group {
	var series, free, alone []int
	for i, p := range res.Partials {
		switch {
		case len(p.Envelope.Points) > 0:
			alone = append(alone, i)
		case p.Harmonic > 0:
			series = append(series, i)
		default:
			free = append(free, i)
		}
	}
	slices.SortFunc(series, func(a, b int) int { return res.Partials[a].Harmonic - res.Partials[b].Harmonic })
	var out []group
	for _, set := range []struct {
		members []int
		series  bool
	}{{series, true}, {free, false}} {
		var left []int
		for i := 0; i < len(set.members); {
			j := len(set.members)
			for ; j-i >= minRun; j-- {
				if res.fitsOneGroup(set.members[i:j], set.series) {
					break
				}
			}
			if j-i >= minRun {
				out = append(out, group{members: set.members[i:j], series: set.series})
				i = j
				continue
			}
			left = append(left, set.members[i])
			i++
		}
		for _, c := range res.agreeing(left) {
			out = append(out, group{members: c, series: set.series})
		}
	}
	for _, i := range alone {
		out = append(out, group{members: []int{i}})
	}
	return out
}

// agreeing clusters partials whose envelopes agree, loudest first: each
// joins the first cluster whose loudest member it agrees with.
func (res *Result) agreeing(members []int) [][]int {
	order := slices.Clone(members)
	slices.SortStableFunc(order, func(a, b int) int { return cmpFloat(res.Partials[b].Level, res.Partials[a].Level) })
	var clusters [][]int
	for _, i := range order {
		placed := false
		for c := range clusters {
			if agree(&res.Partials[clusters[c][0]], &res.Partials[i]) {
				clusters[c] = append(clusters[c], i)
				placed = true
				break
			}
		}
		if !placed {
			clusters = append(clusters, []int{i})
		}
	}
	for _, c := range clusters {
		slices.Sort(c)
	}
	slices.SortFunc(clusters, func(a, b []int) int { return a[0] - b[0] })
	return clusters
}

// agree reports whether two envelopes are the same within the
// tolerances a rule is held to, twice over (each lies within one
// tolerance of their mean).
func agree(a, b *Partial) bool {
	near := func(x, y float64) bool { return math.Abs(x-y) <= 2*max(timeLawShare*max(x, y), timeLawFloor) }
	sus := func(x, y float64) bool {
		if x == 0 || y == 0 {
			return x == y
		}
		return math.Abs(20*math.Log10(x/y)) <= 2*sustainLawDB
	}
	// A release no frame shows agrees with any.
	release := a.ReleaseUnheard || b.ReleaseUnheard || near(a.Envelope.Release, b.Envelope.Release)
	return near(a.Envelope.Attack, b.Envelope.Attack) && near(a.Envelope.Decay, b.Envelope.Decay) && release &&
		sus(a.Envelope.Sustain, b.Envelope.Sustain)
}

// fitsOneGroup reports whether one group with a rule for each envelope
// setting holds every member within the tolerances: as a harmonics group
// where the members are a complete series with a level rule, the rules in
// the harmonic number; else as a ratios group listing their levels, the
// rules in the position in the list.
func (res *Result) fitsOneGroup(members []int, series bool) bool {
	_, ok := res.envelopeLaws(members, res.ruleVariable(members, series))
	return ok
}

// harmonicsGroup reports whether members, partials of the law's series,
// can be written as a harmonics group: a complete series whose levels
// follow a rule.
func (res *Result) harmonicsGroup(members []int) bool {
	if _, ok := seriesOf(res.numbers(members)); !ok {
		return false
	}
	_, _, ok := res.seriesLevels(members)
	return ok
}

// ruleVariable is what a group's rules are written in: n, the harmonic
// number for a harmonics group, the position in the list for a ratios
// group.
func (res *Result) ruleVariable(members []int, series bool) []float64 {
	return res.lawVariable(members, series && res.harmonicsGroup(members))
}

// numbers are the members' harmonic numbers.
func (res *Result) numbers(members []int) []int {
	ns := make([]int, len(members))
	for k, i := range members {
		ns[k] = res.Partials[i].Harmonic
	}
	return ns
}

// levels are the members' peak levels in dB.
func (res *Result) levels(members []int) []float64 {
	ls := make([]float64, len(members))
	for k, i := range members {
		ls[k] = res.Partials[i].LevelDB()
	}
	return ls
}

// lawVariable is what a group's rules are written in: the harmonic
// number n for a harmonics group, the position n in the list for a ratios
// group (as the language counts them).
func (res *Result) lawVariable(members []int, series bool) []float64 {
	x := make([]float64, len(members))
	for k, i := range members {
		x[k] = float64(k + 1)
		if series {
			x[k] = float64(res.Partials[i].Harmonic)
		}
	}
	return x
}

// seriesOf finds count, first and step of ns if they are a complete
// arithmetic series.
func seriesOf(ns []int) (patch.Series, bool) {
	if len(ns) == 0 {
		return patch.Series{}, false
	}
	s := patch.Series{Count: len(ns), First: ns[0], Step: 1}
	if len(ns) > 1 {
		s.Step = ns[1] - ns[0]
	}
	for k, n := range ns {
		if s.Step < 1 || n != s.First+k*s.Step {
			return s, false
		}
	}
	return s, true
}

// envelopeRules are a group's envelope settings as the language writes
// them.
type envelopeRules struct{ attack, decay, sustain, release string }

// envelopeLaws finds a rule in the law variable x for each envelope
// setting of the members, or reports there is none within the
// tolerances.
func (res *Result) envelopeLaws(members []int, x []float64) (envelopeRules, bool) {
	get := func(f func(Envelope) float64) []float64 {
		v := make([]float64, len(members))
		for k, i := range members {
			v[k] = f(res.Partials[i].Envelope)
		}
		return v
	}
	// Releases no frame shows hold a rule to nothing.
	unheard := make([]bool, len(members))
	for k, i := range members {
		unheard[k] = res.Partials[i].ReleaseUnheard
	}
	var r envelopeRules
	var ok [4]bool
	r.attack, ok[0] = timeLaw(x, get(func(e Envelope) float64 { return e.Attack }), nil)
	r.decay, ok[1] = timeLaw(x, get(func(e Envelope) float64 { return e.Decay }), nil)
	r.release, ok[2] = timeLaw(x, get(func(e Envelope) float64 { return releaseOf(e) }), unheard)
	r.sustain, ok[3] = sustainLaw(x, get(func(e Envelope) float64 { return e.Sustain }))
	return r, ok[0] && ok[1] && ok[2] && ok[3]
}

// releaseOf is the release a partial's envelope writes: the measured one,
// or the language's default where the recording holds none.
func releaseOf(e Envelope) float64 {
	if e.Release > 0 {
		return e.Release
	}
	return 0.1
}

// timeLaw finds t = a + b·x^p, or a constant, holding every time within
// timeLawShare (or timeLawFloor) and writes it as an expression. Times
// marked free (a release no frame shows) hold the rule to nothing but a
// time the language takes, above 0 and at most 600 s.
func timeLaw(x, t []float64, free []bool) (string, bool) {
	all := x
	var hx, ht []float64 // the times held
	for k := range x {
		if free == nil || !free[k] {
			hx, ht = append(hx, x[k]), append(ht, t[k])
		}
	}
	if len(hx) == 0 {
		hx, ht = x, t // all alike as far as the recording tells: their mean
	}
	within := func(f func(float64) float64) bool {
		for k := range hx {
			if math.Abs(f(hx[k])-ht[k]) > max(timeLawShare*ht[k], timeLawFloor) {
				return false
			}
		}
		for _, v := range all {
			if y := f(v); !(y > 0 && y <= 600) {
				return false
			}
		}
		return true
	}
	c := round(mean(ht), 4)
	if within(func(float64) float64 { return c }) {
		return fmtNum(c, 4), true
	}
	x, t = hx, ht // the fits below see only the times held
	// Least squares for a and b at each exponent p on a grid of 0.05,
	// the written coefficients rounded and checked again. A rule must
	// have fewer settings than the partials it holds, by two, or it
	// describes nothing: a power law needs four partials, one with an
	// offset five; and an offset is never negative, which would make
	// times of partials further up negative.
	best, bestErr := "", math.Inf(1)
	for step := -60; step <= 60; step++ {
		p := float64(step) / 20
		if p == 0 {
			continue
		}
		for _, offset := range []bool{false, true} {
			if offset && len(x) < 5 || len(x) < 4 {
				continue
			}
			a, b := fitLine(x, t, func(v float64) float64 { return math.Pow(v, p) }, offset)
			if a < 0 {
				continue
			}
			a, b = round(a, 4), round(b, 4)
			f := func(v float64) float64 { return a + b*math.Pow(v, p) }
			worst := 0.0
			for k := range x {
				worst = max(worst, math.Abs(f(x[k])-t[k])/max(t[k], timeLawFloor/timeLawShare))
			}
			if worst < bestErr && within(f) {
				best, bestErr = powerExpr(a, b, p), worst
			}
		}
	}
	return best, best != ""
}

// fitLine fits t = a + b·g(x) by least squares, or t = b·g(x) without
// offset.
func fitLine(x, t []float64, g func(float64) float64, offset bool) (a, b float64) {
	var sg, st, sgg, sgt float64
	n := float64(len(x))
	for k := range x {
		v := g(x[k])
		sg += v
		st += t[k]
		sgg += v * v
		sgt += v * t[k]
	}
	if !offset {
		return 0, sgt / sgg
	}
	den := n*sgg - sg*sg
	if den == 0 {
		return st / n, 0
	}
	b = (n*sgt - sg*st) / den
	return (st - b*sg) / n, b
}

// powerExpr writes a + b·n^p in the language: "0.05 + 0.2/n",
// "1.2/sqrt(n)", "0.3*n^1.5", "0.6 - 0.1*n^0.5".
func powerExpr(a, b, p float64) string {
	var term string
	m := math.Abs(b)
	switch {
	case p == -1:
		term = fmtNum(m, 4) + "/n"
	case p == -0.5:
		term = fmtNum(m, 4) + "/sqrt(n)"
	case p == 1:
		term = fmtNum(m, 4) + "*n"
	case p < 0:
		term = fmtNum(m, 4) + "/n^" + fmtNum(-p, 3)
	default:
		term = fmtNum(m, 4) + "*n^" + fmtNum(p, 3)
	}
	switch {
	case a == 0 && b < 0:
		return "-" + term
	case a == 0:
		return term
	case b < 0:
		return fmtNum(a, 4) + " - " + term
	}
	return fmtNum(a, 4) + " + " + term
}

// sustainLaw finds a sustain rule: 0 for all, or a level in dB that is
// constant or linear in log2 of x, within sustainLawDB.
func sustainLaw(x, s []float64) (string, bool) {
	zero := 0
	for _, v := range s {
		if v == 0 {
			zero++
		}
	}
	switch zero {
	case len(s):
		return "0", true
	case 0:
	default:
		return "", false
	}
	db := make([]float64, len(s))
	for k, v := range s {
		db[k] = 20 * math.Log10(v)
	}
	return dbLaw(x, db, sustainLawDB)
}

// seriesLevels finds a level rule for harmonics of the law: a level in dB
// linear in log2(n) (a power law), and where the law is a stiff string
// and that misses, also in log2 of the partial's ratio, which the
// language's tilt gives (dB per octave of ratio, the ratio after
// stiffness), all within levelLawDB.
func (res *Result) seriesLevels(members []int) (amp string, tilt float64, ok bool) {
	n := res.lawVariable(members, true)
	db := res.levels(members)
	if amp, ok := dbLaw(n, db, levelLawDB); ok || res.Law.Kind != Stiff {
		return amp, 0, ok
	}
	// db = a + b·log2(n) + c·log2(ratio), by least squares on the
	// normal equations of the three terms.
	var m [3][4]float64
	for k := range n {
		row := [4]float64{1, math.Log2(n[k]), math.Log2(stiffRatio(n[k], res.Law.B)), db[k]}
		for i := range 3 {
			for j := range 4 {
				m[i][j] += row[i] * row[j]
			}
		}
	}
	c, solved := solve3(m)
	if !solved {
		return "", 0, false
	}
	a, b, t := round(c[0], 5), round(c[1], 4), round(c[2], 4)
	// The language's tilt is −60..60 dB per octave; a larger one is the
	// two terms cancelling over too little stiffness to tell them apart.
	if math.Abs(t) > 60 {
		return "", 0, false
	}
	for k := range n {
		if math.Abs(a+b*math.Log2(n[k])+t*math.Log2(stiffRatio(n[k], res.Law.B))-db[k]) > levelLawDB {
			return "", 0, false
		}
	}
	return dbExpr(a, b), t, true
}

// solve3 solves three normal equations, each row [a b c | y], by Cramer's
// rule.
func solve3(m [3][4]float64) ([3]float64, bool) {
	det := func(c0, c1, c2 int) float64 {
		return m[0][c0]*(m[1][c1]*m[2][c2]-m[1][c2]*m[2][c1]) -
			m[0][c1]*(m[1][c0]*m[2][c2]-m[1][c2]*m[2][c0]) +
			m[0][c2]*(m[1][c0]*m[2][c1]-m[1][c1]*m[2][c0])
	}
	d := det(0, 1, 2)
	if d == 0 || math.IsNaN(d) {
		return [3]float64{}, false
	}
	return [3]float64{det(3, 1, 2) / d, det(0, 3, 2) / d, det(0, 1, 3) / d}, true
}

// dbLaw fits db = a + b·log2(x) and writes it as a level in dB; the
// slope needs three partials to say anything.
func dbLaw(x, db []float64, tol float64) (string, bool) {
	a, b := fitLine(x, db, math.Log2, true)
	a, b = round(a, 5), round(b, 4)
	if math.Abs(b) < 1e-3 || len(x) < 3 {
		a, b = round(mean(db), 5), 0
	}
	for k := range x {
		if math.Abs(a+b*math.Log2(x[k])-db[k]) > tol {
			return "", false
		}
	}
	return dbExpr(a, b), true
}

// dbExpr writes a + b·log2(n) as a level in dB.
func dbExpr(a, b float64) string {
	switch {
	case b == 0:
		return fmtNum(a, 5) + " dB"
	case b < 0:
		return fmtNum(a, 5) + " - " + fmtNum(-b, 4) + "*log2(n) dB"
	}
	return fmtNum(a, 5) + " + " + fmtNum(b, 4) + "*log2(n) dB"
}

func mean(xs []float64) float64 {
	s := 0.0
	for _, v := range xs {
		s += v
	}
	return s / float64(len(xs))
}

// round keeps digits significant digits.
func round(x float64, digits int) float64 {
	v, _ := strconv.ParseFloat(strconv.FormatFloat(x, 'g', digits, 64), 64)
	return v
}

// fmtNum writes x to digits significant digits, the shortest way.
func fmtNum(x float64, digits int) string {
	return strconv.FormatFloat(round(x, digits), 'g', -1, 64)
}

// dbText writes a linear level as the language's dB level, "-6.021 dB".
func dbText(level float64) string { return fmtNum(20*math.Log10(level), 5) + " dB" }

// draftGroup writes group g.
func (res *Result) draftGroup(g group, keyHz float64) patch.DraftGroup {
	var out patch.DraftGroup
	parts := make([]*Partial, len(g.members))
	for k, i := range g.members {
		parts[k] = &res.Partials[i]
	}
	law := res.Law
	x := res.ruleVariable(g.members, g.series)
	if g.series && res.harmonicsGroup(g.members) {
		series, _ := seriesOf(res.numbers(g.members))
		amp, tilt, _ := res.seriesLevels(g.members)
		out.Harmonics = &series
		out.Amplitude, out.Tilt = amp, tilt
		if law.Kind == Stiff {
			out.Stiffness = law.B
		}
		out.Detune = cents(law.F0, keyHz)
	} else {
		out.Detune = cents(res.Reference, keyHz)
		for _, p := range parts {
			out.Ratios = append(out.Ratios, p.Ratio)
			out.Amplitudes = append(out.Amplitudes, dbText(p.Level))
		}
		if len(parts) == 1 {
			out.Amplitude, out.Amplitudes = out.Amplitudes[0], nil
		}
	}
	if math.Abs(out.Detune) < 5e-5 {
		out.Detune = 0
	}
	if p := parts[0]; len(p.Envelope.Points) > 0 {
		for _, pt := range p.Envelope.Points {
			out.Envelope.Points = append(out.Envelope.Points, [2]float64{round(pt.Time, 5), round(pt.Level, 5)})
		}
		out.Envelope.Release = fmtNum(releaseOf(p.Envelope), 4)
	} else if rules, ok := res.envelopeLaws(g.members, x); ok {
		out.Envelope = patch.DraftEnvelope{Attack: rules.attack, Decay: rules.decay, Sustain: rules.sustain, Release: rules.release}
	} else {
		// Members that agree only within twice the tolerance: their mean.
		var e Envelope
		for _, p := range parts {
			e.Attack += p.Envelope.Attack / float64(len(parts))
			e.Decay += p.Envelope.Decay / float64(len(parts))
			e.Release += releaseOf(p.Envelope) / float64(len(parts))
			e.Sustain += p.Envelope.Sustain / float64(len(parts))
		}
		out.Envelope = patch.DraftEnvelope{Attack: fmtNum(e.Attack, 4), Decay: fmtNum(e.Decay, 4), Sustain: "0", Release: fmtNum(e.Release, 4)}
		if e.Sustain > 0 {
			out.Envelope.Sustain = dbText(e.Sustain)
		}
	}
	phase, same := groupPhase(parts)
	out.Phase = phase
	out.Comment = res.groupComment(g, parts, out)
	if !same {
		out.Comment = append(out.Comment, "  their phases differ, which a group cannot hold: written as 0 (the spectrum is the same, the waveform is not)")
	}
	return out
}

// groupPhase is the members' common starting phase in degrees, to a tenth,
// where they agree within phaseAgree; else 0 and same false, each
// partial's own phase being something a group cannot hold.
func groupPhase(parts []*Partial) (phase float64, same bool) {
	var sx, sy float64
	for _, p := range parts {
		sx += math.Cos(p.Phase * math.Pi / 180)
		sy += math.Sin(p.Phase * math.Pi / 180)
	}
	m := math.Atan2(sy, sx) * 180 / math.Pi
	for _, p := range parts {
		d := math.Mod(math.Abs(p.Phase-m), 360)
		if min(d, 360-d) > phaseAgree {
			return 0, false
		}
	}
	m = math.Round(math.Mod(m+360, 360)*10) / 10
	if m < 0.5 || m > 359.5 {
		return 0, true
	}
	return m, true
}

// groupComment gives the group's measured values, a line per partial.
func (res *Result) groupComment(g group, parts []*Partial, out patch.DraftGroup) []string {
	var kind string
	switch {
	case out.Harmonics != nil:
		kind = fmt.Sprintf("%s: harmonics %d", res.Law.Kind, parts[0].Harmonic)
		if len(parts) > 1 {
			kind += fmt.Sprintf("–%d", parts[len(parts)-1].Harmonic)
		}
	case len(parts[0].Envelope.Points) > 0:
		kind = "a partial whose envelope attack, decay and sustain miss by more than 1 dB, as breakpoints"
	case g.series:
		kind = fmt.Sprintf("%s, written as ratios (no rule holds their levels)", res.Law.Kind)
	default:
		kind = "partials outside any series"
	}
	lines := []string{fmt.Sprintf("%s; %d partial%s measured:", kind, len(parts), map[bool]string{true: "", false: "s"}[len(parts) == 1])}
	for _, p := range parts {
		e := p.Envelope
		env := fmt.Sprintf("attack %.1f ms, T60 %.3f s, sustain %s", 1000*e.Attack, e.Decay, sustainText(e.Sustain))
		if len(e.Points) > 0 {
			env = fmt.Sprintf("%d points", len(e.Points))
		}
		rel := "release not in the recording"
		switch {
		case p.ReleaseUnheard:
			rel = "release unheard (died away before the note-off)"
		case e.Release > 0:
			rel = fmt.Sprintf("release T60 %.3f s", e.Release)
		}
		lines = append(lines, fmt.Sprintf("  %9.3f Hz ±%.4f c, ratio %.6f, %.2f dBFS, %s, %s, phase %.0f°, fit %.2f dB",
			p.Hz, p.ErrCents, p.Ratio, p.LevelDB(), env, rel, p.Phase, e.FitDB))
	}
	return lines
}

// sustainText writes a sustain level.
func sustainText(s float64) string {
	if s == 0 {
		return "none"
	}
	return strings.TrimSpace(fmt.Sprintf("%.2f dB", 20*math.Log10(s)))
}
