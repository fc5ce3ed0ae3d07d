package kernel

// The one place where each kernel turns into the form for the active set.

func addResonators(isa ISA, block *[BlockFrames]float64, jobs []ResonatorJob, tables []ResonatorTable) {
	switch isa {
	case AVX512:
		addResonatorsAVX512(block, &jobs[0], &tables[0], len(jobs))
	case AVX2:
		addResonatorsAVX2(block, &jobs[0], &tables[0], len(jobs))
	default:
		addResonatorsGo(block, jobs, tables)
	}
}

func kWeight(isa ISA, x []float64, channels int, f *KWeighting, st *KState, energy *[2]float64) {
	if isa == Plain {
		kWeightGo(x, channels, f, st, energy)
		return
	}
	// AVX-512 processors run the AVX2 form (see KWeight).
	if channels == 1 {
		kWeightMonoAVX2(&x[0], len(x), f, st, energy)
	} else {
		kWeightStereoAVX2(&x[0], len(x)/2, f, st, energy)
	}
}
