// Command asm writes the kernel package's assembly with avo
// (github.com/mmcloughlin/avo):
//
//	go run . resonator    # one family: ../resonator_amd64.s and ../resonator_stub_amd64.go
//	go run . quantize     # PackPCM and PackFloat32: ../quantize_amd64.s and ../quantize_stub_amd64.go
//	go run . all          # every family
//
// The kernel package's go:generate line runs it for every family; the
// output is committed, and `make test` regenerates it into a temporary
// folder (-dir) and fails on any difference. It reads the kernel
// package's types for their layouts, so the package must compile: if a
// broken .s file stops it, empty that file and run again.
//
// Every family comes in an AVX2 and an AVX-512 form, except where wider
// vectors cannot help (the K-weighting kernel's two lanes), where AVX-512
// processors run the AVX2 form. The AVX2 form does to each half of a
// 512-bit vector what the AVX-512 form does to the whole, so both give the
// same bits. Only VEX and EVEX encodings appear, the AVX2 forms use no
// register above Y15, and every function ends with VZEROUPPER.
package main

import (
	"flag"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"slices"

	. "github.com/mmcloughlin/avo/build"
)

// families maps a family name to the function that writes its kernels.
var families = map[string]func(){
	"chirp":      chirp,
	"kweighting": kweighting,
	"quantize":   quantize,
	"resonator":  resonator,
	"truepeak":   truepeak,
}

func main() {
	dir := flag.String("dir", "..", "the `folder` to write into")
	flag.Parse() // with avo's own flags, which main sets itself
	names := flag.Args()
	if len(names) == 1 && names[0] == "all" {
		names = slices.Sorted(maps(families))
	}
	if len(names) == 0 || slices.ContainsFunc(names, func(n string) bool { return families[n] == nil }) {
		fmt.Fprintf(os.Stderr, "usage: asm [-dir FOLDER] all | FAMILY...\nfamilies: %v\n", slices.Sorted(maps(families)))
		os.Exit(2)
	}
	if len(names) > 1 {
		// avo builds one file per process, so each family runs in one.
		for _, name := range names {
			cmd := exec.Command(os.Args[0], "-dir", *dir, name)
			cmd.Stdout, cmd.Stderr = os.Stdout, os.Stderr
			must(cmd.Run())
		}
		return
	}
	family := names[0]
	// The package is loaded as it stands, declarations and all, before
	// any output is opened: avo truncates an output when its flag is set.
	Package("sinter/synth/kernel")
	ConstraintExpr("amd64")
	asm, stubs := filepath.Join(*dir, family+"_amd64.s"), filepath.Join(*dir, family+"_stub_amd64.go")
	must(flag.Set("pkg", "kernel"))
	must(flag.Set("out", asm+".new"))
	must(flag.Set("stubs", stubs+".new"))
	families[family]()
	// The header of each file names the command that writes it, the same
	// whatever folder it was written to.
	os.Args = []string{os.Args[0], family}
	Generate()
	must(os.Rename(asm+".new", asm))
	must(os.Rename(stubs+".new", stubs))
}

func maps(m map[string]func()) func(func(string) bool) {
	return func(yield func(string) bool) {
		for k := range m {
			if !yield(k) {
				return
			}
		}
	}
}

func must(err error) {
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}
