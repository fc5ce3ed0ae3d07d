// Package expr parses and compiles the small math expressions that patch
// values may be written as, such as "1/n", "0.6/sqrt(n)" or
// "min(1, 440/hz)".
//
// The language is plain arithmetic on float64 values: decimal numbers,
// variables, the constants pi and e, the operators + - * / % and ^, and a
// fixed set of functions. From lowest to highest precedence:
//
//	a + b, a - b          sum, difference; left associative
//	a * b, a / b, a % b   product, quotient, floating modulo as math.Mod; left associative
//	-a, +a                unary sign
//	a ^ b                 power; right associative
//
// Power binds tighter than a unary sign, as in mathematical notation, so
// "-2^2" is -4, and its exponent may itself carry a sign, so "2^-1" is 0.5.
//
// The functions are sqrt, exp, log (natural), log2, log10, sin, cos, tan
// (radians), abs, floor, ceil, round (half away from zero), pow(x, y),
// min and max of two or more arguments, and clamp(x, lo, hi). A name
// followed by "(" calls a function; any other name is a variable or a
// constant. Spaces and tabs may appear between any two tokens.
//
// To bound the work any input can cause, a source may be at most 4096
// bytes long, and parentheses, unary signs, exponents and function calls
// may nest at most 100 levels deep.
//
// A compiled [Program] evaluates without allocating. Evaluation never fails:
// results such as log(-1) or 1/0 come back as NaN or ±Inf, and checking for
// them is left to the caller.
package expr

import "fmt"

// Limits that keep compilation and evaluation cheap whatever the input.
const (
	// maxSourceLen is the longest source, in bytes, that Compile accepts.
	maxSourceLen = 4096
	// maxDepth bounds how deeply parentheses, unary signs, exponents and
	// function calls may nest, so that hostile input cannot exhaust the
	// stack of the recursive parser.
	maxDepth = 100
)

// evalFunc computes a subexpression from the variable values.
type evalFunc func(values []float64) float64

// Program is a compiled expression.
//
// A Program is safe for concurrent use by multiple goroutines, and
// evaluating it allocates no memory.
type Program struct {
	src      string
	eval     evalFunc
	constant bool
	uses     []bool // uses[i] reports whether the expression reads vars[i]
}

// Compile parses the expression src and resolves its names against vars,
// the variable names in the order in which [Program.Eval] receives their
// values. A variable shadows the constant of the same name. If vars holds a
// name twice, the first one is used.
//
// Subexpressions that read no variable are computed once, here, by the same
// code that would compute them during evaluation, so folding them never
// changes a result.
//
// Any error returned is an [*Error].
func Compile(src string, vars []string) (*Program, error) {
	if len(src) > maxSourceLen {
		return nil, &Error{
			Offset: maxSourceLen,
			Msg:    fmt.Sprintf("expression is %d bytes long; the limit is %d", len(src), maxSourceLen),
		}
	}
	p := &parser{scanner: scanner{src: src}, vars: vars, uses: make([]bool, len(vars))}
	root, err := p.parse()
	if err != nil {
		return nil, err
	}
	return &Program{src: src, eval: root.eval, constant: root.constant, uses: p.uses}, nil
}

// Eval evaluates the expression with values[i] bound to the variable
// vars[i] given to [Compile]. It panics if the expression reads a variable
// whose index is beyond the end of values; passing one value per variable
// always suffices.
//
// Eval does not allocate. It may return NaN or ±Inf.
func (p *Program) Eval(values []float64) float64 {
	return p.eval(values)
}

// Constant reports whether the expression reads no variable and, if so,
// returns its value.
func (p *Program) Constant() (float64, bool) {
	if !p.constant {
		return 0, false
	}
	return p.eval(nil), true
}

// Uses reports whether the expression reads the variable vars[i] given to
// [Compile]. It reports false for an index outside vars.
func (p *Program) Uses(i int) bool {
	return i >= 0 && i < len(p.uses) && p.uses[i]
}

// Source returns the text the program was compiled from.
func (p *Program) Source() string {
	return p.src
}

// Error is a problem found while compiling an expression.
type Error struct {
	Offset int    // 0-based byte offset into the source where the problem is
	Msg    string // what was expected and what was found
}

// Error returns the message prefixed by the 1-based column, counted in
// bytes, at which the problem is, as in "column 3: unexpected \"*\"".
func (e *Error) Error() string {
	return fmt.Sprintf("column %d: %s", e.Offset+1, e.Msg)
}
