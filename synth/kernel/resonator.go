package kernel

import (
	"fmt"
	"math"
)

// The resonator kernel's shape. A block is BlockFrames samples cut into
// spans of ControlFrames, over each of which a partial's gain runs in a
// straight line; Lanes consecutive samples share a vector.
const (
	Lanes         = 8
	BlockFrames   = 256
	ControlFrames = 64
	SpansPerBlock = BlockFrames / ControlFrames
)

// ResonatorTable holds one partial's constants for AddResonators. Lane j
// (0 ≤ j < Lanes) of the kernel holds samples j, j+8, j+16, … of a block
// and runs the strided resonator y[n+8] = 2·cos 8ω·y[n] − y[n−8] in
// difference form, s += −K·y; y += s with K = 4·sin² 4ω, so eight
// consecutive samples advance per step with no sum across lanes.
type ResonatorTable struct {
	// Cos and Sin hold cos jω and sin jω, which turn the phase θ at the
	// block start into lane j's first value sin(θ + jω).
	Cos, Sin [Lanes]float64
	// StepCos and StepSin turn θ into lane j's first difference,
	// sin(θ + jω) − sin(θ + (j−8)ω).
	StepCos, StepSin [Lanes]float64
	// NegK is −K.
	NegK float64
}

// ResonatorJob is one partial's block for AddResonators.
type ResonatorJob struct {
	// Sin and Cos are of the partial's phase at the block start.
	Sin, Cos float64
	// From and To hold amplitude × envelope at the start and the end of
	// each span; across span m the gain runs in a straight line from
	// From[m] to To[m]. The ends of neighbouring spans are usually equal;
	// a span left to other code has both at 0.
	From, To [SpansPerBlock]float64
	// Table is the index of the partial's constants in the tables
	// AddResonators is given.
	Table int
}

// rampFrom and rampTo weight a span's start and end levels for lane j
// (1 − j/64 and j/64); a vector step moves the gain by rampStep of the
// span's change.
var rampFrom, rampTo = func() (from, to [Lanes]float64) {
	for j := range from {
		to[j] = float64(j) / ControlFrames
		from[j] = 1 - to[j]
	}
	return from, to
}()

const rampStep = float64(Lanes) / ControlFrames

// ramp returns the lanes' gains at the start of a span whose gain runs
// from lo to hi, and what a vector step adds to each: the arithmetic the
// vector forms do for every span, lane for lane.
func ramp(lo, hi float64) (gain [Lanes]float64, step float64) {
	for l := range Lanes {
		gain[l] = math.FMA(lo, rampFrom[l], hi*rampTo[l])
	}
	return gain, (hi - lo) * rampStep
}

// AddResonators adds one block of each job's partial into block, in the
// order of jobs. Every set of kernels gives the same bits wherever the
// processor has fused multiply-add (math.FMA rounds as the instruction
// does). It panics if a job names a table that is not there.
func AddResonators(block *[BlockFrames]float64, jobs []ResonatorJob, tables []ResonatorTable) {
	for i := range jobs {
		if t := jobs[i].Table; t < 0 || t >= len(tables) {
			panic(fmt.Sprintf("kernel: resonator job %d names table %d of %d", i, t, len(tables)))
		}
	}
	if len(jobs) == 0 {
		return
	}
	addResonators(active, block, jobs, tables)
}

// addResonatorsGo is the plain form of AddResonators. Each lane does what
// the vector forms do to it, one multiply-add for one.
func addResonatorsGo(block *[BlockFrames]float64, jobs []ResonatorJob, tables []ResonatorTable) {
	for i := range jobs {
		job := &jobs[i]
		t := &tables[job.Table]
		var y, s [Lanes]float64
		for l := range Lanes {
			y[l] = math.FMA(job.Sin, t.Cos[l], job.Cos*t.Sin[l])
			s[l] = math.FMA(job.Sin, t.StepCos[l], job.Cos*t.StepSin[l])
		}
		for m := range SpansPerBlock {
			g, d := ramp(job.From[m], job.To[m])
			span := block[m*ControlFrames : (m+1)*ControlFrames]
			for v := 0; v < ControlFrames; v += Lanes {
				out := (*[Lanes]float64)(span[v : v+Lanes])
				for l := range Lanes {
					out[l] = math.FMA(g[l], y[l], out[l])
					s[l] = math.FMA(t.NegK, y[l], s[l])
					y[l] += s[l]
					g[l] += d
				}
			}
		}
	}
}
