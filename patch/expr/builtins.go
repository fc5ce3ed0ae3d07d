package expr

import (
	"fmt"
	"maps"
	"math"
	"slices"

	"sinter/patch/spelling"
)

var constants = map[string]float64{
	"pi": math.Pi,
	"e":  math.E,
}

// function is a built-in function.
type function struct {
	arity    int  // number of arguments; the least number when variadic
	variadic bool // accepts any number of arguments from arity up
	build    func(args []evalFunc) evalFunc
}

var functions = map[string]function{
	"sqrt":  unaryFunction(math.Sqrt),
	"exp":   unaryFunction(math.Exp),
	"log":   unaryFunction(math.Log),
	"log2":  unaryFunction(math.Log2),
	"log10": unaryFunction(math.Log10),
	"sin":   unaryFunction(math.Sin),
	"cos":   unaryFunction(math.Cos),
	"tan":   unaryFunction(math.Tan),
	"abs":   unaryFunction(math.Abs),
	"floor": unaryFunction(math.Floor),
	"ceil":  unaryFunction(math.Ceil),
	"round": unaryFunction(math.Round),
	"pow":   {arity: 2, build: binaryFunction(math.Pow)},
	"min":   {arity: 2, variadic: true, build: foldFunction(math.Min)},
	"max":   {arity: 2, variadic: true, build: foldFunction(math.Max)},
	// clamp(x, lo, hi) is min(max(x, lo), hi), so hi wins when lo > hi.
	"clamp": {arity: 3, build: func(args []evalFunc) evalFunc {
		x, lo, hi := args[0], args[1], args[2]
		return func(v []float64) float64 { return math.Min(math.Max(x(v), lo(v)), hi(v)) }
	}},
}

// Sorted, so that messages and suggestions come out the same every time.
var (
	constantNames = slices.Sorted(maps.Keys(constants))
	functionNames = slices.Sorted(maps.Keys(functions))
)

func unaryFunction(f func(float64) float64) function {
	return function{arity: 1, build: func(args []evalFunc) evalFunc {
		x := args[0]
		return func(v []float64) float64 { return f(x(v)) }
	}}
}

func binaryFunction(f func(x, y float64) float64) func(args []evalFunc) evalFunc {
	return func(args []evalFunc) evalFunc {
		x, y := args[0], args[1]
		return func(v []float64) float64 { return f(x(v), y(v)) }
	}
}

// foldFunction extends the two-argument f to any number of arguments by
// applying it from the left: f(f(a, b), c) and so on.
func foldFunction(f func(x, y float64) float64) func(args []evalFunc) evalFunc {
	return func(args []evalFunc) evalFunc {
		first, rest := args[0], args[1:]
		return func(v []float64) float64 {
			acc := first(v)
			for _, next := range rest {
				acc = f(acc, next(v))
			}
			return acc
		}
	}
}

// checkArity returns why calling the function named name with n arguments
// is wrong, or "" if it is not.
func (f function) checkArity(name string, n int) string {
	if n == f.arity || f.variadic && n > f.arity {
		return ""
	}
	plural := "s"
	if f.arity == 1 {
		plural = ""
	}
	orMore := ""
	if f.variadic {
		orMore = " or more"
	}
	return fmt.Sprintf("%s takes %d%s argument%s, got %d", name, f.arity, orMore, plural, n)
}

// suggestion returns ` (did you mean "x"?)` naming the candidate closest to
// name, or "" if none is close (see spelling.Nearest).
func suggestion(name string, candidateLists ...[]string) string {
	if best := spelling.Nearest(name, candidateLists...); best != "" {
		return fmt.Sprintf(" (did you mean %q?)", best)
	}
	return ""
}
