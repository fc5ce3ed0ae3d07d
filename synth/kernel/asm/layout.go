package main

import (
	"fmt"
	"go/constant"
	"go/types"

	"golang.org/x/tools/go/packages"
)

// kernelPackage is the kernel package as go/types sees it: its Go files
// only, so the layouts below can be read even while its assembly is out
// of date, type-checked from source so that unexported constants, which
// compiled export data leaves out, are there too.
var kernelPackage = func() *types.Package {
	pkgs, err := packages.Load(&packages.Config{Mode: packages.NeedTypes | packages.NeedTypesSizes | packages.NeedSyntax}, "sinter/synth/kernel")
	if err != nil {
		panic(err)
	}
	if len(pkgs) != 1 || len(pkgs[0].Errors) > 0 {
		panic(fmt.Sprintf("loading sinter/synth/kernel: %v", pkgs[0].Errors))
	}
	return pkgs[0].Types
}()

// sizes are the gc compiler's sizes on amd64, which the assembly targets.
var sizes = types.SizesFor("gc", "amd64")

// layout is the size of a struct type of the kernel package and the byte
// offset of each of its fields.
type layout struct {
	size   int
	fields map[string]int
}

func structLayout(name string) layout {
	obj := kernelPackage.Scope().Lookup(name)
	if obj == nil {
		panic("no type " + name + " in the kernel package")
	}
	st := obj.Type().Underlying().(*types.Struct)
	vars := make([]*types.Var, st.NumFields())
	for i := range vars {
		vars[i] = st.Field(i)
	}
	offsets := sizes.Offsetsof(vars)
	l := layout{size: int(sizes.Sizeof(st)), fields: map[string]int{}}
	for i, v := range vars {
		l.fields[v.Name()] = int(offsets[i])
	}
	return l
}

// field is the offset of a field, which must exist.
func (l layout) field(name string) int {
	off, ok := l.fields[name]
	if !ok {
		panic("no field " + name)
	}
	return off
}

// intConst is the value of an integer constant of the kernel package.
func intConst(name string) int {
	c, ok := kernelPackage.Scope().Lookup(name).(*types.Const)
	if !ok {
		panic("no constant " + name + " in the kernel package")
	}
	v, exact := constant.Int64Val(c.Val())
	if !exact {
		panic("constant " + name + " is not an integer")
	}
	return int(v)
}

// The kernels' shape, as the kernel package declares it.
var (
	lanes         = intConst("Lanes")
	controlFrames = intConst("ControlFrames")
	spansPerBlock = intConst("SpansPerBlock")
)

// uintConst is the value of an unsigned integer constant of the kernel
// package, which may not fit an int.
func uintConst(name string) uint64 {
	c, ok := kernelPackage.Scope().Lookup(name).(*types.Const)
	if !ok {
		panic("no constant " + name + " in the kernel package")
	}
	v, exact := constant.Uint64Val(c.Val())
	if !exact {
		panic("constant " + name + " is not an unsigned integer")
	}
	return v
}

// floatConst is the value of a floating-point constant of the kernel
// package, rounded to float64.
func floatConst(name string) float64 {
	c, ok := kernelPackage.Scope().Lookup(name).(*types.Const)
	if !ok {
		panic("no constant " + name + " in the kernel package")
	}
	v, _ := constant.Float64Val(c.Val())
	return v
}
