// The generator of the kernel package's assembly. It is a module of its
// own so that avo stays out of sinter's dependencies: users build the
// committed output and never need it.
module sinter/synth/kernel/asm

go 1.26.0

require sinter v0.0.0

require golang.org/x/sync v0.24.0 // indirect

require (
	github.com/mmcloughlin/avo v0.5.0
	golang.org/x/mod v0.42.0 // indirect
	golang.org/x/sys v0.50.0 // indirect
	golang.org/x/tools v0.52.0 // indirect
)

replace sinter => ../../..
