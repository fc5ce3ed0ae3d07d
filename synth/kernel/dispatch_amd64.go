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

// The assembly forms of PackPCM and PackFloat32 take whole steps of this
// many samples, two vectors' worth; the plain form does the rest.
const (
	pcmStepAVX512 = 16
	pcmStepAVX2   = 8
)

// vectorSamples is how many of n samples the assembly forms of isa take.
func vectorSamples(isa ISA, n int) int {
	switch isa {
	case AVX512:
		return n / pcmStepAVX512 * pcmStepAVX512
	case AVX2:
		return n / pcmStepAVX2 * pcmStepAVX2
	}
	return 0
}

func packPCM(isa ISA, dst []byte, src []float64, bits int, dither bool, state uint64) {
	n := vectorSamples(isa, len(src))
	if n > 0 {
		d, s := &dst[0], &src[0]
		switch isa {
		case AVX512:
			switch {
			case bits == 16 && dither:
				packPCM16DitherAVX512(d, s, n, state)
			case bits == 16:
				packPCM16AVX512(d, s, n)
			case dither:
				packPCM24DitherAVX512(d, s, n, state)
			default:
				packPCM24AVX512(d, s, n)
			}
		case AVX2:
			switch {
			case bits == 16 && dither:
				packPCM16DitherAVX2(d, s, n, state)
			case bits == 16:
				packPCM16AVX2(d, s, n)
			case dither:
				packPCM24DitherAVX2(d, s, n, state)
			default:
				packPCM24AVX2(d, s, n)
			}
		}
	}
	if n < len(src) {
		packPCMGo(dst[n*bits/8:], src[n:], bits, dither, state+uint64(n)*ditherGamma)
	}
}

func packFloat32(isa ISA, dst []byte, src []float64) {
	n := vectorSamples(isa, len(src))
	if n > 0 {
		switch isa {
		case AVX512:
			packFloat32AVX512(&dst[0], &src[0], n)
		case AVX2:
			packFloat32AVX2(&dst[0], &src[0], n)
		}
	}
	if n < len(src) {
		packFloat32Go(dst[4*n:], src[n:])
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

func deinterleave(isa ISA, left, right, stereo []float64) {
	switch isa {
	case AVX512:
		deinterleaveAVX512(&left[0], &right[0], &stereo[0], len(left))
	case AVX2:
		deinterleaveAVX2(&left[0], &right[0], &stereo[0], len(left))
	default:
		deinterleaveGo(left, right, stereo)
	}
}

// The stretches laid side by side are the vector forms' alone (the plain
// form works in the signal's order), so these choose between them only.

func spreadRows(isa ISA, lanes, x []float64, starts *[Lanes]int, rows int) {
	if isa == AVX512 {
		spreadAVX512(&lanes[0], &x[0], starts, rows)
	} else {
		spreadAVX2(&lanes[0], &x[0], starts, rows)
	}
}

func midpoints(isa ISA, mid, lanes []float64, f *interpolator, rows int) {
	if isa == AVX512 {
		midpointsAVX512(&mid[0], &lanes[0], f, rows)
	} else {
		midpointsAVX2(&mid[0], &lanes[0], f, rows)
	}
}

func quadruplePeak(isa ISA, s, m []float64, f *interpolator, rows int, peak float64) float64 {
	if isa == AVX512 {
		return quadruplePeakAVX512(&s[0], &m[0], f, rows, peak)
	}
	return quadruplePeakAVX2(&s[0], &m[0], f, rows, peak)
}

func peakOf(isa ISA, x []float64, peak float64) float64 {
	switch isa {
	case AVX512:
		return peakAVX512(&x[0], len(x), peak)
	case AVX2:
		return peakAVX2(&x[0], len(x), peak)
	}
	return peakGo(x, peak)
}
