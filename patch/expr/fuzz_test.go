package expr

import (
	"errors"
	"math"
	"testing"
)

func FuzzCompile(f *testing.F) {
	for _, src := range []string{
		// Good.
		"1/n",
		"0.6/sqrt(n)",
		"1/n^2 * (-1)^((n-1)/2)",
		"min(1, 440/hz)",
		"clamp(vel * 2^-(key-60)/12, 0, 1)",
		"max(ratio, f0, hz) % 7.5e-1",
		"-2^-2^.5",
		"round(log2(hz/f0)) + pi * e",
		// Bad.
		"",
		"(1+2",
		"sqrt(1, 2)",
		"2 ** 3",
		"ratoi",
		"1e999",
		"((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((((1",
	} {
		f.Add(src)
	}
	f.Fuzz(func(t *testing.T, src string) {
		p, err := Compile(src, testVars)
		if err != nil {
			var e *Error
			if !errors.As(err, &e) {
				t.Fatalf("Compile(%q) error %v is not an *Error", src, err)
			}
			if e.Offset < 0 || e.Offset > len(src) {
				t.Fatalf("Compile(%q) error offset %d is outside [0, %d]", src, e.Offset, len(src))
			}
			return
		}
		if p.Source() != src {
			t.Fatalf("Source() = %q; want %q", p.Source(), src)
		}
		// Ordinary values, then values at the edges of float64.
		for _, values := range [][]float64{
			testValues,
			{0, -0.0, 1, -1, 0.5, 1e-310},
			{math.NaN(), math.Inf(1), math.Inf(-1), math.MaxFloat64, -math.MaxFloat64, math.SmallestNonzeroFloat64},
		} {
			got := p.Eval(values)
			if c, ok := p.Constant(); ok && !sameFloat(got, c) {
				t.Fatalf("Compile(%q): Eval = %v but Constant() = %v", src, got, c)
			}
		}
	})
}
