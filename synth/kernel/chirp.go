package kernel

import "math"

// ChirpJob is one moving partial's block for AddChirps. Over span m of the
// block (ControlFrames samples from m·ControlFrames on) its phase, in
// turns of 2^64 per cycle, is
//
//	θ(n) = Phase[m] + Rate[m]·n + Curve[m]·n²  (mod 2^64), n = 0 … ControlFrames−1,
//
// a frequency that moves linearly across the span, and its sample is
// gain·sin θ(n), the gain running in a straight line from From[m] to
// To[m]. The phase is exact integer arithmetic, so however long a
// note is and however its frequency moves, the only rounding is that of
// the sine itself.
type ChirpJob struct {
	From, To [SpansPerBlock]float64
	Phase    [SpansPerBlock]uint64
	Rate     [SpansPerBlock]uint64
	// Curve is a two's-complement integer: the frequency may fall.
	Curve [SpansPerBlock]uint64
}

// AddChirps adds one block of each job's moving partial into block, in
// the order of jobs. Lane j of the kernel takes samples j, j+8, … of a
// span, whose phases step by 8·Rate + 64·Curve + 16·Curve·j, a step
// that itself grows by 128·Curve: integer additions only. Every set of
// kernels gives the same bits.
func AddChirps(block *[BlockFrames]float64, jobs []ChirpJob) {
	if len(jobs) == 0 {
		return
	}
	addChirps(active, block, jobs)
}

// Constants of sinTurn. A phase in turns of 2^64 is folded into
// [−π/2, π/2] in integers, keeps its top 53 bits through the exponent
// trick (adding an integer up to 2^52 to the bits of 2^52 gives the
// float64 2^52 plus that integer, exactly), and the
// sine comes from its Taylor series to the x^21 term, whose first
// neglected term is below 1.3e-18 on that interval (Abramowitz & Stegun
// 4.3.65).
const (
	quarterTurn = 1 << 62
	// halfTurn is half a turn, plus half the step the fold's shift keeps,
	// so the shift rounds to nearest instead of down.
	halfTurn = 1<<63 + 1<<(foldShift-1)
	// exponentOf2p52 is the bit pattern of 2^52; adding an integer up to
	// 2^52 to it gives the bits of 2^52 + that integer (up to 2^53, where
	// the carry moves into the exponent), exactly.
	exponentOf2p52 = 0x4330000000000000
	// foldOffset is 2^52 + 2^51: subtracting it centres the folded phase.
	foldOffset = 1<<52 + 1<<51
	// turnScale converts the centred value, in units of 2^−53 turn, to
	// radians.
	turnScale = 2 * math.Pi / (1 << 53)
	// foldShift drops the bits below the 53 a float64 holds exactly.
	foldShift = 11
)

// sineTaylor holds the coefficients (−1)^k/(2k+1)! of sin x, k = 0 … 10:
// sin x = x·Σ sineTaylor[k]·(x²)^k.
var sineTaylor = func() (c [11]float64) {
	f := 1.0 // (2k+1)!
	for k := range c {
		if k > 0 {
			f *= float64(2*k) * float64(2*k+1)
		}
		c[k] = math.Pow(-1, float64(k)) / f
	}
	return c
}()

// sinTurns sets each lane of dst to sin of the phase in the same lane of
// phase, in turns of 2^64, to within 1e-15: step for step what the vector
// forms do to every lane. The lanes go through each step together, so
// that the processor overlaps their chains of dependent operations.
func sinTurns(dst *[Lanes]float64, phase *[Lanes]uint64) {
	var a, z [Lanes]float64
	for l, p := range phase {
		// Fold: x = phase − ¼ turn, signed, so |x| is the distance from ¼
		// turn, and ¼ turn − that distance has the same sine as phase and
		// lies in [−¼, ¼] turn. Here it is offset by ¼ turn so it is never
		// negative: folded = ½ turn − |x| ∈ [0, ½ turn], plus the rounding.
		x := int64(p - quarterTurn)
		if x < 0 {
			x = -x // −2^63 stays −2^63, read as 2^63 below, as the vector forms do
		}
		folded := halfTurn - uint64(x)
		a[l] = (math.Float64frombits(folded>>foldShift+exponentOf2p52) - foldOffset) * turnScale
		z[l] = a[l] * a[l]
	}
	// Σ sineTaylor[k]·z^k by Horner's rule, from the highest term down,
	// four lanes at a time in variables of their own, which the compiler
	// keeps in registers (it keeps arrays in memory).
	c := &sineTaylor
	for h := 0; h < Lanes; h += 4 {
		z0, z1, z2, z3 := z[h], z[h+1], z[h+2], z[h+3]
		p0, p1, p2, p3 := math.FMA(c[10], z0, c[9]), math.FMA(c[10], z1, c[9]), math.FMA(c[10], z2, c[9]), math.FMA(c[10], z3, c[9])
		for k := 8; k >= 0; k-- {
			p0, p1, p2, p3 = math.FMA(p0, z0, c[k]), math.FMA(p1, z1, c[k]), math.FMA(p2, z2, c[k]), math.FMA(p3, z3, c[k])
		}
		dst[h], dst[h+1], dst[h+2], dst[h+3] = a[h]*p0, a[h+1]*p1, a[h+2]*p2, a[h+3]*p3
	}
}

// chirpLanes returns the lanes' phases at the start of span m of job and
// their first steps, and the growth of the steps, shared by all lanes.
func chirpLanes(job *ChirpJob, m int) (phase, step [Lanes]uint64, growth uint64) {
	r, c := job.Rate[m], job.Curve[m]
	for j := range uint64(Lanes) {
		phase[j] = job.Phase[m] + r*j + c*(j*j)
		step[j] = r<<3 + c<<6 + c*(16*j)
	}
	return phase, step, c << 7
}

// addChirpsGo is the plain form of AddChirps: each lane does what the
// vector forms do to it.
func addChirpsGo(block *[BlockFrames]float64, jobs []ChirpJob) {
	for i := range jobs {
		job := &jobs[i]
		for m := range SpansPerBlock {
			phase, step, growth := chirpLanes(job, m)
			g, d := ramp(job.From[m], job.To[m])
			span := block[m*ControlFrames : (m+1)*ControlFrames]
			var sin [Lanes]float64
			for v := 0; v < ControlFrames; v += Lanes {
				out := (*[Lanes]float64)(span[v : v+Lanes])
				sinTurns(&sin, &phase)
				for l := range Lanes {
					out[l] = math.FMA(g[l], sin[l], out[l])
					phase[l] += step[l]
					step[l] += growth
					g[l] += d
				}
			}
		}
	}
}
