package kernel

import (
	"math"
	"math/rand/v2"
	"testing"
)

// resonatorCase builds n jobs over n tables in shuffled order, for
// partials at frequencies spread over the band, with phases, levels
// and signs drawn at random.
func resonatorCase(rng *rand.Rand, n int) ([]ResonatorJob, []ResonatorTable) {
	tables := make([]ResonatorTable, n)
	jobs := make([]ResonatorJob, n)
	for i := range tables {
		w := math.Pi * rng.Float64() // radians per sample, 0 … Nyquist
		t := &tables[i]
		for j := range Lanes {
			t.Sin[j], t.Cos[j] = math.Sincos(float64(j) * w)
			t.StepSin[j], t.StepCos[j] = math.Sincos(float64(j-4) * w)
			t.StepSin[j] *= 2 * math.Sin(4*w)
			t.StepCos[j] *= -2 * math.Sin(4*w)
		}
		t.NegK = -4 * math.Sin(4*w) * math.Sin(4*w)
	}
	for i, p := range rng.Perm(n) {
		job := &jobs[i]
		job.Sin, job.Cos = math.Sincos(2 * math.Pi * rng.Float64())
		for m := range SpansPerBlock {
			job.From[m], job.To[m] = rng.Float64()*2-1, rng.Float64()*2-1
		}
		job.Table = p
	}
	return jobs, tables
}

// TestResonatorsSameBitsEverySet runs every set of kernels this
// processor has on the same jobs, for every group size the vector forms
// split a block into, and requires the plain Go form's bits exactly.
func TestResonatorsSameBitsEverySet(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, n := range []int{1, 2, 3, 4, 5, 7, 8, 13} {
		jobs, tables := resonatorCase(rng, n)
		var start [BlockFrames]float64
		for i := range start {
			start[i] = rng.Float64() - 0.5
		}
		want := start
		addResonatorsGo(&want, jobs, tables)
		for _, isa := range Supported() {
			got := start
			previous := Use(isa)
			AddResonators(&got, jobs, tables)
			Use(previous)
			for i := range got {
				if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
					t.Fatalf("%s, %d jobs: sample %d is %v, the plain form gives %v", isa, n, i, got[i], want[i])
				}
			}
		}
	}
}

// TestResonatorsFollowTheSine checks the plain form against the formula
// it stands for: a partial of unit level is sin(θ + nω) at sample n
// (to within the rounding of 32 resonator steps), so the kernels that
// match it bit for bit follow the sine too.
func TestResonatorsFollowTheSine(t *testing.T) {
	const w, theta = 0.0731, 1.234
	var table ResonatorTable
	for j := range Lanes {
		table.Sin[j], table.Cos[j] = math.Sincos(float64(j) * w)
		s, c := math.Sincos(float64(j-4) * w)
		table.StepCos[j], table.StepSin[j] = -2*math.Sin(4*w)*s, 2*math.Sin(4*w)*c
	}
	table.NegK = -4 * math.Sin(4*w) * math.Sin(4*w)
	job := ResonatorJob{From: [SpansPerBlock]float64{1, 1, 1, 1}, To: [SpansPerBlock]float64{1, 1, 1, 1}}
	job.Sin, job.Cos = math.Sincos(theta)
	for _, isa := range Supported() {
		var block [BlockFrames]float64
		previous := Use(isa)
		AddResonators(&block, []ResonatorJob{job}, []ResonatorTable{table})
		Use(previous)
		for n, v := range block {
			// sin(θ + nω): the definition of a sinusoid (common practice).
			if want := math.Sin(theta + float64(n)*w); math.Abs(v-want) > 1e-13 {
				t.Fatalf("%s: sample %d is %.17g, sin(θ + nω) is %.17g", isa, n, v, want)
			}
		}
	}
}

// TestResonatorsRefuseMissingTables: a job naming a table past the end
// would read outside memory in the assembly forms, so it panics first.
func TestResonatorsRefuseMissingTables(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Fatal("no panic for a job naming a missing table")
		}
	}()
	var block [BlockFrames]float64
	AddResonators(&block, []ResonatorJob{{Table: 1}}, make([]ResonatorTable, 1))
}

// BenchmarkResonators measures each set of kernels on 64 partials.
func BenchmarkResonators(b *testing.B) {
	jobs, tables := resonatorCase(rand.New(rand.NewPCG(7, 8)), 64)
	for _, isa := range Supported() {
		b.Run(isa.String(), func(b *testing.B) {
			previous := Use(isa)
			defer Use(previous)
			var block [BlockFrames]float64
			for b.Loop() {
				AddResonators(&block, jobs, tables)
			}
			b.ReportMetric(float64(len(jobs)*BlockFrames)*float64(b.N)/b.Elapsed().Seconds(), "partial-samples/s")
		})
	}
}
