package kernel

import (
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// TestAssemblyEncodings disassembles every assembly function of this
// package in its test binary and fails on an instruction that would cost
// a state transition or fault:
//
//   - a vector register (xmm, ymm or zmm) on an instruction whose
//     mnemonic does not start with v: a legacy SSE encoding, which after
//     a 256- or 512-bit instruction costs an AVX–SSE transition on Intel
//     processors (Intel 64 and IA-32 Architectures Optimization Reference
//     Manual, "Mixing AVX code with SSE code");
//   - in an AVX2 function, anything that needs AVX-512: a zmm or mask
//     register, a register numbered 16 or above, or an EVEX prefix (first
//     byte 0x62, not a valid opcode in 64-bit mode);
//   - a ret not right after vzeroupper, which would hand dirty upper
//     halves to the Go code that follows.
//
// The binary `go test` runs has no symbol table, so the test builds one
// with go test -c. It reads it with GNU objdump (binutils), because go
// tool objdump does not decode EVEX instructions. The assembly functions
// are the package's ABI0 symbols; the wrappers the toolchain adds around
// them are Go code and are not checked.
func TestAssemblyEncodings(t *testing.T) {
	goTool, err := exec.LookPath("go")
	if err != nil {
		t.Fatalf("the go command is needed to build the test binary: %v", err)
	}
	objdump, err := exec.LookPath("objdump")
	if err != nil {
		t.Fatalf("GNU objdump is needed to disassemble the kernels (Debian: apt-get install binutils): %v", err)
	}
	binary := filepath.Join(t.TempDir(), "kernel.test")
	if out, err := exec.Command(goTool, "test", "-c", "-o", binary, "sinter/synth/kernel").CombinedOutput(); err != nil {
		t.Fatalf("go test -c: %v\n%s", err, out)
	}
	out, err := exec.Command(objdump, "-d", "-M", "intel", "--insn-width=16", binary).Output()
	if err != nil {
		t.Fatalf("objdump: %v", err)
	}
	functions := disassembly(string(out))
	for _, name := range []string{
		"addResonatorsAVX2", "addResonatorsAVX512", "addChirpsAVX2", "addChirpsAVX512",
		"packPCM16AVX2", "packPCM16AVX512", "packPCM16DitherAVX2", "packPCM16DitherAVX512",
		"packPCM24AVX2", "packPCM24AVX512", "packPCM24DitherAVX2", "packPCM24DitherAVX512",
		"packFloat32AVX2", "packFloat32AVX512",
		"kWeightMonoAVX2", "kWeightStereoAVX2",
		"deinterleaveAVX2", "deinterleaveAVX512", "spreadAVX2", "spreadAVX512", "midpointsAVX2", "midpointsAVX512",
		"quadruplePeakAVX2", "quadruplePeakAVX512", "peakAVX2", "peakAVX512",
	} {
		if functions[name] == nil {
			t.Errorf("%s is not in the disassembly", name)
		}
	}
	vector := regexp.MustCompile(`\b([xyz])mm([0-9]+)\b`)
	mask := regexp.MustCompile(`\bk[0-7]\b`)
	for name, code := range functions {
		avx2 := strings.HasSuffix(name, "AVX2")
		if !avx2 && !strings.HasSuffix(name, "AVX512") {
			t.Errorf("%s: an assembly function's name must end in AVX2 or AVX512", name)
		}
		for i, in := range code {
			regs := vector.FindAllStringSubmatch(in.operands, -1)
			if len(regs) > 0 && !strings.HasPrefix(in.mnemonic, "v") && !strings.HasPrefix(in.mnemonic, "k") {
				t.Errorf("%s: legacy SSE encoding: %s %s", name, in.mnemonic, in.operands)
			}
			if avx2 {
				for _, r := range regs {
					if n, _ := strconv.Atoi(r[2]); r[1] == "z" || n >= 16 {
						t.Errorf("%s: AVX-512 register in an AVX2 function: %s %s", name, in.mnemonic, in.operands)
					}
				}
				if mask.MatchString(in.operands) || strings.HasPrefix(in.hex, "62") {
					t.Errorf("%s: AVX-512 instruction in an AVX2 function: %s %s (%s)", name, in.mnemonic, in.operands, in.hex)
				}
			}
			if in.mnemonic == "ret" && (i == 0 || code[i-1].mnemonic != "vzeroupper") {
				t.Errorf("%s: ret without vzeroupper before it", name)
			}
		}
	}
}

// instruction is one line of objdump's output.
type instruction struct {
	hex, mnemonic, operands string
}

// disassembly returns the instructions of each of this package's ABI0
// functions, the ones written in assembly, by name.
func disassembly(out string) map[string][]instruction {
	functions := map[string][]instruction{}
	header := regexp.MustCompile(`^[0-9a-f]+ <sinter/synth/kernel\.(\w+)\.abi0>:$`)
	var current string
	for _, line := range strings.Split(out, "\n") {
		if m := header.FindStringSubmatch(line); m != nil {
			current = m[1]
			continue
		}
		if line == "" {
			current = ""
		}
		if current == "" {
			continue
		}
		// "  address:\tencoding\tmnemonic operands"
		fields := strings.Split(line, "\t")
		if len(fields) < 3 {
			continue
		}
		mnemonic, operands, _ := strings.Cut(strings.TrimSpace(fields[2]), " ")
		functions[current] = append(functions[current], instruction{
			hex: strings.ReplaceAll(strings.TrimSpace(fields[1]), " ", ""), mnemonic: mnemonic, operands: strings.TrimSpace(operands),
		})
	}
	return functions
}
