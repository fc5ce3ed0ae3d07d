package analysis

import (
	"math"
	"slices"
)

// LawKind is the rule a recording's partials follow.
type LawKind int

// The laws, simplest first.
const (
	Free     LawKind = iota // no rule: each partial at its own ratio
	Harmonic                // whole multiples of one fundamental
	Stiff                   // a stiff string: f_n = n·f0·√(1 + B·n²)
)

// String names the law as the report writes it.
func (k LawKind) String() string {
	return [...]string{"free ratios", "harmonic series", "stiff string"}[k]
}

// Law is the rule the partials were found to follow.
type Law struct {
	Kind LawKind
	// F0 is the law's fundamental in Hz: for a stiff string the flexible
	// string's, which its first partial lies above by √(1 + B).
	F0 float64
	B  float64 // inharmonicity, for Stiff
	// RMSCents and MaxCents are how far the partials that follow the law
	// lie from it: the fit error.
	RMSCents, MaxCents float64
	// Tolerance is what the law was held to, in cents: each member within
	// three of its standard errors, and never less than this.
	Tolerance float64
}

// lawFloorCents is the least any partial is held to by a law: half the
// accuracy the analysis aims at (0.1 cent), so a law that fits within it
// costs no accuracy worth hearing.
const lawFloorCents = 0.05

// cents is the interval from b up to a.
func cents(a, b float64) float64 { return 1200 * math.Log2(a/b) }

// stiffRatio is partial n's ratio to f0 on a stiff string (H. Fletcher,
// "Normal vibration frequencies of a stiff piano string", JASA 36(1),
// 1964).
func stiffRatio(n, b float64) float64 { return n * math.Sqrt(1+b*n*n) }

// harmonicNumber is the n whose stiff-string partial lies nearest hz:
// n² solves B·n⁴ + n² = (hz/f0)², written as 2r²/(√(1 + 4B·r²) + 1)
// rather than the textbook (√(1 + 4B·r²) − 1)/(2B), which cancels to
// nothing for a B of 1e-17 that a fit of a harmonic series returns.
func harmonicNumber(hz, f0, b float64) int {
	r := hz / f0
	n2 := 2 * r * r / (math.Sqrt(1+4*max(b, 0)*r*r) + 1)
	return max(1, int(math.Round(math.Sqrt(n2))))
}

// member is a partial's place in a fit: its frequency, its harmonic
// number, its weight and its error.
type member struct {
	index   int
	hz      float64
	n       int
	energy  float64
	errCent float64 // standard error, cents
}

// fitStiff fits f0 and, with stiff, B to the members by least squares on
// (hz/n)² = f0² + f0²·B·n², which is linear (common practice for
// inharmonicity fits), each weighted by the inverse variance of its
// (hz/n)²; B is held at 0 or above.
func fitStiff(ms []member, stiff bool) (f0, b float64) {
	var sw, sx, sy, sxx, sxy float64
	for _, m := range ms {
		y := m.hz / float64(m.n)
		x := float64(m.n * m.n)
		rel := max(m.errCent, lawFloorCents/3) / 1200 * math.Ln2
		y *= y
		w := 1 / (4 * y * y * rel * rel) // y² has twice y's relative error
		sw += w
		sx += w * x
		sy += w * y
		sxx += w * x * x
		sxy += w * x * y
	}
	if !stiff || len(ms) < 2 {
		return math.Sqrt(sy / sw), 0
	}
	den := sw*sxx - sx*sx
	slope := (sw*sxy - sx*sy) / den
	icpt := (sy - slope*sx) / sw
	if den <= 0 || icpt <= 0 || slope <= 0 {
		return math.Sqrt(sy / sw), 0
	}
	return math.Sqrt(icpt), slope / icpt
}

// lawResidual is member m's distance from the law in cents.
func lawResidual(m member, f0, b float64) float64 {
	return cents(m.hz, f0*stiffRatio(float64(m.n), b))
}

// tolerance is what member m is held to by a law.
func tolerance(m member) float64 { return max(3*m.errCent, lawFloorCents) }

// reaches are the spans, in harmonics of the fundamental, that a series
// is fitted over in turn: a stiff string's partial n strays half a
// harmonic from n only where B·n³ nears 1, far beyond each span for the
// stiffness the span before it measured.
var reaches = []float64{6.5, 12.5, 24.5, math.Inf(1), math.Inf(1)}

// fitLaw fits a harmonic (stiff false) or stiff-string law to the
// partials from f0 up, dropping the partial that misses most until every
// one left is within its tolerance; it returns the law and its members.
func fitLaw(ms []member, f0 float64, stiff bool) (Law, []member) {
	b := 0.0
	// Harmonic numbers from the guess, then from each fit over a wider
	// span, so a stiff string's upper partials, sharp by many cents (half
	// a harmonic above n = 15 at B = 3e-4), get their own numbers.
	for _, reach := range reaches {
		var low []member
		for i := range ms {
			ms[i].n = harmonicNumber(ms[i].hz, f0, b)
			if ms[i].hz <= reach*f0 {
				low = append(low, ms[i])
			}
		}
		if len(low) > 0 {
			f0, b = fitStiff(low, stiff)
		}
	}
	for i := range ms {
		ms[i].n = harmonicNumber(ms[i].hz, f0, b)
	}
	keep := slices.Clone(ms)
	for len(keep) > 0 {
		f0, b = fitStiff(keep, stiff)
		worst, at := 0.0, -1
		for i, m := range keep {
			if r := math.Abs(lawResidual(m, f0, b)) / tolerance(m); r > 1 && r > worst {
				worst, at = r, i
			}
		}
		if at < 0 {
			break
		}
		keep = slices.Delete(keep, at, at+1)
	}
	law := Law{Kind: Harmonic, F0: f0, B: b, Tolerance: lawFloorCents}
	if stiff {
		law.Kind = Stiff
	}
	var ss float64
	for _, m := range keep {
		r := lawResidual(m, f0, b)
		ss += r * r
		law.MaxCents = max(law.MaxCents, math.Abs(r))
	}
	if len(keep) > 0 {
		law.RMSCents = math.Sqrt(ss / float64(len(keep)))
	}
	return law, keep
}

// energyOf sums the members' energy.
func energyOf(ms []member) float64 {
	s := 0.0
	for _, m := range ms {
		s += m.energy
	}
	return s
}

// pitchTolerance is how near, in cents, a partial must lie to a candidate
// fundamental's series (stiffness allowed for) to count as one of its
// harmonics when the pitch is searched: loose enough for an instrument's
// small departures from any law, tight enough that a bar's modes (2.757,
// 5.404 …) fit no series with a low number.
const pitchTolerance = 15

// findPitch searches for the fundamental that explains the strong
// partials as a harmonic series (stiffness allowed for), a harmonic-sum
// search over the subharmonics of the lowest strong partials (after
// A. M. Noll's harmonic sum spectrum, 1969; from memory): a candidate
// counts the energy of the strong partials lying within pitchTolerance of
// its series, and the highest candidate that explains nine tenths of it,
// with the lowest strong partial among its first three harmonics and at
// least every other harmonic up to its highest one strong, is the pitch.
// That last condition keeps a sound whose one loud partial holds nearly
// all the energy from taking a subharmonic as its pitch, on the strength
// of a few far-apart upper partials that the series' two free parameters
// can always be bent to pass through. ok is false for an unpitched sound.
func findPitch(strong []member) (f0 float64, ok bool) {
	total := energyOf(strong)
	best := 0.0
	for i := range min(6, len(strong)) {
		for k := 1; k <= 8; k++ {
			cand := strong[i].hz / float64(k)
			if cand < 16 || cand <= best {
				continue
			}
			f, explained, lowest, count, highest := looseFit(strong, cand)
			if explained >= 0.9*total && lowest >= 1 && lowest <= 3 && 2*count >= highest && f > best && math.Abs(cents(f, cand)) < 50 {
				best = f
			}
		}
	}
	return best, best > 0
}

// looseFit fits a stiff-string series to the partials within
// pitchTolerance of it, starting from f0 with no stiffness and letting
// each fit bring in partials higher up; it returns the fundamental, the
// energy of the partials on the series, how many they are and the lowest
// and highest harmonic numbers among them.
func looseFit(strong []member, f0 float64) (fit, explained float64, lowest, count, highest int) {
	b := 0.0
	on := make([]member, 0, len(strong))
	for _, reach := range reaches {
		on = on[:0]
		for _, m := range strong {
			m.n = harmonicNumber(m.hz, f0, b)
			m.errCent = pitchTolerance // every partial alike
			if m.hz <= reach*f0 && math.Abs(lawResidual(m, f0, b)) <= pitchTolerance {
				on = append(on, m)
			}
		}
		if len(on) == 0 {
			return f0, 0, 0, 0, 0
		}
		f0, b = fitStiff(on, len(on) >= 3)
	}
	for _, m := range on {
		if lowest == 0 || m.n < lowest {
			lowest = m.n
		}
		highest = max(highest, m.n)
	}
	return f0, energyOf(on), lowest, len(on), highest
}
