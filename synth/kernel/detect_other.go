//go:build !amd64

package kernel

import "runtime"

// detect returns Plain: vector kernels exist for amd64 only.
func detect() (ISA, string) {
	return Plain, "vector kernels are written for amd64 only, and this is " + runtime.GOARCH
}
