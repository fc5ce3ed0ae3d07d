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

func addChirps(isa ISA, block *[BlockFrames]float64, jobs []ChirpJob) {
	switch isa {
	case AVX512:
		addChirpsAVX512(block, &jobs[0], len(jobs))
	case AVX2:
		addChirpsAVX2(block, &jobs[0], len(jobs))
	default:
		addChirpsGo(block, jobs)
	}
}
