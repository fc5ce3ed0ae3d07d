//go:build !amd64

package kernel

// Without vector forms, every kernel runs its plain Go form.

func addResonators(_ ISA, block *[BlockFrames]float64, jobs []ResonatorJob, tables []ResonatorTable) {
	addResonatorsGo(block, jobs, tables)
}

func addChirps(_ ISA, block *[BlockFrames]float64, jobs []ChirpJob) {
	addChirpsGo(block, jobs)
}

func packPCM(_ ISA, dst []byte, src []float64, bits int, dither bool, state uint64) {
	packPCMGo(dst, src, bits, dither, state)
}

func packFloat32(_ ISA, dst []byte, src []float64) {
	packFloat32Go(dst, src)
}

func kWeight(_ ISA, x []float64, channels int, f *KWeighting, st *KState, energy *[2]float64) {
	kWeightGo(x, channels, f, st, energy)
}

func deinterleave(_ ISA, left, right, stereo []float64) { deinterleaveGo(left, right, stereo) }

func peakOf(_ ISA, x []float64, peak float64) float64 { return peakGo(x, peak) }
