package kernel

import (
	"math"
	"math/big"
	"math/rand/v2"
	"testing"
)

// TestSinTurns holds sinTurns to math.Sin (Go's standard library, the
// reference) at phases across the whole turn, including the ends of the
// folds, where the integer arithmetic wraps.
func TestSinTurns(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	phases := []uint64{0, 1, 1 << 62, 1<<62 - 1, 1<<62 + 1, 1 << 63, 1<<63 - 1, 1<<63 + 1, 3 << 62, 3<<62 + 1, math.MaxUint64}
	for range 100000 {
		phases = append(phases, rng.Uint64())
	}
	worst := 0.0
	for len(phases)%Lanes != 0 {
		phases = append(phases, rng.Uint64())
	}
	for i := 0; i < len(phases); i += Lanes {
		var got [Lanes]float64
		sinTurns(&got, (*[Lanes]uint64)(phases[i:i+Lanes]))
		for l, p := range phases[i : i+Lanes] {
			worst = max(worst, math.Abs(got[l]-math.Sin(turnRadians(p))))
		}
	}
	// The fold rounds the phase to 2^−53 turn (an error up to 3.5e-16
	// rad) and the series is good to 1.3e-18; the rest is rounding, a few
	// units of 1.1e-16.
	if worst > 1e-15 {
		t.Errorf("sinTurns strays %.3g from math.Sin", worst)
	}
	t.Logf("largest difference from math.Sin: %.3g", worst)
}

// turnRadians converts a phase in turns of 2^64 to radians in (−π, π],
// exactly enough for a reference: the phase is centred first, so the
// conversion rounds once.
func turnRadians(p uint64) float64 {
	return float64(int64(p)) * (2 * math.Pi / (1 << 64))
}

// chirpCase builds n jobs whose partials glide and wobble: each span's
// phase, rate and curve drawn across the band, the curve of either sign.
func chirpCase(rng *rand.Rand, n int) []ChirpJob {
	jobs := make([]ChirpJob, n)
	for i := range jobs {
		job := &jobs[i]
		for m := range SpansPerBlock {
			job.From[m], job.To[m] = rng.Float64()*2-1, rng.Float64()*2-1
		}
		for m := range SpansPerBlock {
			job.Phase[m] = rng.Uint64()
			job.Rate[m] = rng.Uint64() >> 1 // up to half a turn a sample: Nyquist
			job.Curve[m] = uint64(int64(rng.Uint64()) >> 20)
		}
	}
	return jobs
}

// TestChirpsSameBitsEverySet runs every set of kernels this processor
// has on the same jobs and requires the plain Go form's bits exactly.
func TestChirpsSameBitsEverySet(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, n := range []int{1, 2, 3, 4, 5, 9} {
		jobs := chirpCase(rng, n)
		var start [BlockFrames]float64
		for i := range start {
			start[i] = rng.Float64() - 0.5
		}
		want := start
		addChirpsGo(&want, jobs)
		for _, isa := range Supported() {
			got := start
			previous := Use(isa)
			AddChirps(&got, jobs)
			Use(previous)
			for i := range got {
				if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
					t.Fatalf("%s, %d jobs: sample %d is %v, the plain form gives %v", isa, n, i, got[i], want[i])
				}
			}
		}
	}
}

// TestChirpsFollowThePhase checks the plain form against the formula it
// stands for: sample n of span m is gain·sin θ(n) with θ(n) = Phase +
// Rate·n + Curve·n², evaluated here in exact big-integer arithmetic and
// math.Sin (references: Go's math/big and math), the gain linear between
// the levels. The kernels that match the plain form bit for bit follow
// it too.
func TestChirpsFollowThePhase(t *testing.T) {
	jobs := chirpCase(rand.New(rand.NewPCG(7, 8)), 3)
	var block [BlockFrames]float64
	addChirpsGo(&block, jobs)
	turn := new(big.Int).Lsh(big.NewInt(1), 64)
	for n := range BlockFrames {
		m, k := n/ControlFrames, int64(n%ControlFrames)
		want := 0.0
		for i := range jobs {
			job := &jobs[i]
			theta := new(big.Int).SetUint64(job.Rate[m])
			theta.Mul(theta, big.NewInt(k))
			curve := big.NewInt(int64(job.Curve[m]))
			curve.Mul(curve, big.NewInt(k*k))
			theta.Add(theta, curve)
			theta.Add(theta, new(big.Int).SetUint64(job.Phase[m]))
			theta.Mod(theta, turn)
			u := float64(k) / ControlFrames
			gain := job.From[m]*(1-u) + job.To[m]*u
			want += gain * math.Sin(turnRadians(theta.Uint64()))
		}
		if math.Abs(block[n]-want) > 1e-14 {
			t.Fatalf("sample %d is %.17g, the formula gives %.17g", n, block[n], want)
		}
	}
}

// BenchmarkChirps measures each set of kernels on 64 moving partials.
func BenchmarkChirps(b *testing.B) {
	jobs := chirpCase(rand.New(rand.NewPCG(9, 10)), 64)
	for _, isa := range Supported() {
		b.Run(isa.String(), func(b *testing.B) {
			previous := Use(isa)
			defer Use(previous)
			var block [BlockFrames]float64
			for b.Loop() {
				AddChirps(&block, jobs)
			}
			b.ReportMetric(float64(len(jobs)*BlockFrames)*float64(b.N)/b.Elapsed().Seconds(), "partial-samples/s")
		})
	}
}
