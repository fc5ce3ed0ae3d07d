package kernel

import "golang.org/x/sys/cpu"

// detect returns the widest set of kernels this processor and its
// operating system can run, and why. golang.org/x/sys/cpu reports a
// feature only when the operating system also saves its registers.
func detect() (ISA, string) {
	x := cpu.X86
	switch {
	case x.HasAVX512F && x.HasAVX512DQ && x.HasAVX512BW && x.HasAVX512VL && x.HasAVX2 && x.HasFMA:
		return AVX512, "the processor has AVX-512 F, DQ, BW and VL"
	case x.HasAVX2 && x.HasFMA:
		return AVX2, "the processor has AVX2 and FMA but not all of AVX-512 F, DQ, BW and VL"
	}
	return Plain, "the processor lacks AVX2 or FMA"
}
