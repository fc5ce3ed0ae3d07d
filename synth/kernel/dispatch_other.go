//go:build !amd64

package kernel

// Without vector forms, every kernel runs its plain Go form.

func addResonators(_ ISA, block *[BlockFrames]float64, jobs []ResonatorJob, tables []ResonatorTable) {
	addResonatorsGo(block, jobs, tables)
}

func addChirps(_ ISA, block *[BlockFrames]float64, jobs []ChirpJob) {
	addChirpsGo(block, jobs)
}
