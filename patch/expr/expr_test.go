package expr

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// testVars are the variables a patch gives its expressions, and testValues
// the values the tests bind to them.
var (
	testVars   = []string{"n", "ratio", "hz", "f0", "key", "vel"}
	testValues = []float64{3, 2.5, 440, 220, 60, 0.75}
)

// The names below stand for testValues, to write expected values with.
const (
	n     = 3.0
	ratio = 2.5
	hz    = 440.0
	vel   = 0.75
)

// sameFloat reports whether a and b are the same value, treating every NaN
// as the same and telling -0 from +0.
func sameFloat(a, b float64) bool {
	if math.IsNaN(a) || math.IsNaN(b) {
		return math.IsNaN(a) && math.IsNaN(b)
	}
	return math.Float64bits(a) == math.Float64bits(b)
}

func TestEval(t *testing.T) {
	// Unless a comment says otherwise, each expected value is the same
	// computation written with Go's operators and math package, so the
	// table checks parsing and dispatch rather than arithmetic.
	tests := []struct {
		src  string
		want float64
	}{
		// Numbers.
		{"3", 3},
		{"0.5", 0.5},
		{".5", 0.5},
		{"1.", 1},
		{"1e-3", 1e-3},
		{"2.5E+2", 250},

		// Variables and constants.
		{"n", n},
		{"ratio * hz", ratio * hz},
		{"f0 + key", 220 + 60},
		{"pi", math.Pi},
		{"e", math.E},
		{"2*pi*hz", 2 * math.Pi * hz},

		// Precedence and associativity of the binary operators.
		{"1 + 2 * 3", 7},
		{"(1 + 2) * 3", 9},
		{"10 - 4 - 3", (10 - 4) - 3},
		{"100 / 10 / 5", (100.0 / 10) / 5},
		{"2 * 3 % 4", math.Mod(2*3, 4)},
		{"7 % 4 * 3", math.Mod(7, 4) * 3},
		{"1 + 7 % 4", 1 + math.Mod(7, 4)},
		{"1 - 2 + 3", (1 - 2) + 3},

		// Power: right associative, and tighter than a unary sign, as is
		// common practice in mathematics notation.
		{"2^3^2", math.Pow(2, math.Pow(3, 2))},
		{"(2^3)^2", math.Pow(math.Pow(2, 3), 2)},
		{"-2^2", -math.Pow(2, 2)},
		{"(-2)^2", math.Pow(-2, 2)},
		{"2^-1", math.Pow(2, -1)},
		{"2^-1^2", math.Pow(2, -math.Pow(1, 2))},
		{"-2^-2", -math.Pow(2, -2)},
		{"2^+3", math.Pow(2, 3)},
		{"2 * 3^2", 2 * math.Pow(3, 2)},
		{"2^3 * 2", math.Pow(2, 3) * 2},
		{"1/n^2 * (-1)^((n-1)/2)", 1 / math.Pow(n, 2) * math.Pow(-1, (n-1)/2)},

		// Unary signs.
		{"-n", -n},
		{"+n", n},
		{"--n", n},
		{"-+-n", n},
		{"2 - -1", 3},
		{"2 * -n", 2 * -n},
		{"-0", math.Copysign(0, -1)},

		// Floating modulo keeps the sign of the dividend, as math.Mod does.
		{"7.5 % 2", math.Mod(7.5, 2)},
		{"-7 % 3", math.Mod(-7, 3)},
		{"7 % -3", math.Mod(7, -3)},
		{"1 % 0", math.Mod(1, 0)},

		// Every function.
		{"sqrt(n)", math.Sqrt(n)},
		{"exp(vel)", math.Exp(vel)},
		{"log(hz)", math.Log(hz)},
		{"log2(hz)", math.Log2(hz)},
		{"log10(hz)", math.Log10(hz)},
		{"sin(vel)", math.Sin(vel)},
		{"cos(vel)", math.Cos(vel)},
		{"tan(vel)", math.Tan(vel)},
		{"abs(-ratio)", math.Abs(-ratio)},
		{"floor(ratio)", math.Floor(ratio)},
		{"floor(-ratio)", math.Floor(-ratio)},
		{"ceil(ratio)", math.Ceil(ratio)},
		{"ceil(-ratio)", math.Ceil(-ratio)},
		{"round(ratio)", math.Round(ratio)},
		{"round(-ratio)", math.Round(-ratio)},
		{"pow(ratio, n)", math.Pow(ratio, n)},
		{"min(1, 440/hz)", math.Min(1, 440/hz)},
		{"min(n, ratio, vel)", math.Min(math.Min(n, ratio), vel)},
		{"max(n, ratio)", math.Max(n, ratio)},
		{"max(vel, n, ratio, 1)", math.Max(math.Max(math.Max(vel, n), ratio), 1)},
		{"clamp(n, 0, 1)", 1},
		{"clamp(-n, 0, 1)", 0},
		{"clamp(vel, 0, 1)", vel},
		{"clamp(vel, 1, 0)", 0}, // lo > hi: hi wins, as documented on clamp
		{"0.6/sqrt(n)", 0.6 / math.Sqrt(n)},
		{"sqrt(pow(3, 2) + pow(4, 2))", 5},

		// Values that are not finite come back rather than failing.
		{"1/0", math.Inf(1)},
		{"-1/0", math.Inf(-1)},
		{"log(-1)", math.NaN()},
		{"sqrt(-n)", math.NaN()},
		{"min(log(-1), 1)", math.NaN()},

		// Whitespace, spaces and tabs, between any tokens.
		{" \t1\t+ 2 ", 3},
		{"sqrt ( n )", math.Sqrt(n)},
		{"min(1,2)", 1},
		{"min( 1 , 2 )", 1},
		{"- 2 ^ 2", -4},
	}
	for _, tt := range tests {
		p, err := Compile(tt.src, testVars)
		if err != nil {
			t.Errorf("Compile(%q): %v", tt.src, err)
			continue
		}
		if got := p.Eval(testValues); !sameFloat(got, tt.want) {
			t.Errorf("Compile(%q).Eval = %v; want %v", tt.src, got, tt.want)
		}
	}
}

func TestFoldingMatchesEvaluation(t *testing.T) {
	// Each pair is one computation written twice: once reading variables,
	// so nothing can be folded, and once with their values written as
	// literals (n=3, ratio=2.5, vel=0.75), so that everything is folded at
	// compile time. The results must agree to the bit.
	tests := []struct{ variable, literal string }{
		{"0.1 * n + 0.2", "0.1 * 3 + 0.2"},
		{"sin(n)/n^0.5 + n%2", "sin(3)/3^0.5 + 3%2"},
		{"-n^-vel * pi", "-3^-0.75 * pi"},
		{"clamp(log(n), vel, ratio) - round(n/2)", "clamp(log(3), 0.75, 2.5) - round(3/2)"},
		{"min(n, ratio, vel) * max(n, -0) / e", "min(3, 2.5, 0.75) * max(3, -0) / e"},
		{"exp(n) * tan(ratio) / 7 - log10(vel) + log2(n) - cos(n)", "exp(3) * tan(2.5) / 7 - log10(0.75) + log2(3) - cos(3)"},
		{"pow(ratio, 1/n) + sqrt(abs(-vel)) + floor(ratio) * ceil(vel)", "pow(2.5, 1/3) + sqrt(abs(-0.75)) + floor(2.5) * ceil(0.75)"},
	}
	for _, tt := range tests {
		variable, err := Compile(tt.variable, testVars)
		if err != nil {
			t.Fatalf("Compile(%q): %v", tt.variable, err)
		}
		literal, err := Compile(tt.literal, testVars)
		if err != nil {
			t.Fatalf("Compile(%q): %v", tt.literal, err)
		}
		if _, ok := variable.Constant(); ok {
			t.Errorf("Compile(%q).Constant() reports a constant", tt.variable)
		}
		folded, ok := literal.Constant()
		if !ok {
			t.Errorf("Compile(%q).Constant() reports no constant", tt.literal)
		}
		if got := variable.Eval(testValues); !sameFloat(got, folded) {
			t.Errorf("%q evaluates to %v, but %q folds to %v", tt.variable, got, tt.literal, folded)
		}
	}
}

func TestCompileErrors(t *testing.T) {
	tests := []struct {
		src    string
		offset int
		msg    string // a substring of the message
	}{
		{"", 0, "empty expression"},
		{" \t ", 0, "empty expression"},

		// Names.
		{"q", 0, `unknown name "q"; variables are n, ratio, hz, f0, key, vel`},
		{"1 + ratoi", 4, `unknown name "ratoi"`},
		{"1 + ratoi", 4, `(did you mean "ratio"?)`},
		{"sqrt + 1", 0, `"sqrt" is a function; expected "(" after it, found "+"`},
		{"n(2)", 0, `"n" is a variable, not a function`},
		{"pi(2)", 0, `"pi" is a constant, not a function`},
		{"sinh(1)", 0, `unknown function "sinh"`},
		{"2 * sinh(1)", 4, `(did you mean "sin"?)`},

		// Arity.
		{"sqrt(1, 2)", 0, "sqrt takes 1 argument, got 2"},
		{"sqrt()", 0, "sqrt takes 1 argument, got 0"},
		{"pow(2)", 0, "pow takes 2 arguments, got 1"},
		{"1 + min(1)", 4, "min takes 2 or more arguments, got 1"},
		{"max()", 0, "max takes 2 or more arguments, got 0"},
		{"clamp(1, 2)", 0, "clamp takes 3 arguments, got 2"},

		// Structure.
		{"*2", 0, `unexpected "*"`},
		{"2 ** 3", 3, `unexpected "*"; expected a number, a name or "("`},
		{"2 +", 3, "unexpected end of expression"},
		{"2^", 2, "unexpected end of expression"},
		{"()", 1, `unexpected ")"`},
		{"1)", 1, `unexpected ")" with no matching "("`},
		{"(1+2", 4, `expected ")" to close "(" at column 1, found end of expression`},
		{"2 * (1 + (2)", 12, `expected ")" to close "(" at column 5, found end of expression`},
		{"(1 2)", 3, `expected ")" to close "(" at column 1, found "2"`},
		{"2 3", 2, `expected an operator or end of expression, found "3"`},
		{"3n", 1, `expected an operator or end of expression, found "n"`},
		{"1, 2", 1, `found ","`},
		{"min(1 2)", 6, `expected "," or ")" to close "(" at column 4, found "2"`},
		{"min(1, 2", 8, `expected "," or ")" to close "(" at column 4, found end of expression`},
		{"min(1,)", 6, `unexpected ")"`},

		// Characters and numbers.
		{"2 $ 3", 2, `unexpected character "$"`},
		{"2 × 3", 2, `unexpected character "×"`},
		{"1\n+2", 1, `unexpected character "\n"`},
		{".", 0, `unexpected character "."`},
		{"1.2.3", 3, `found ".3"`},
		{"2e", 2, `expected digits in the exponent of "2e", found end of expression`},
		{"2e+x", 3, `expected digits in the exponent of "2e+", found "x"`},
		{"1e999", 0, "number 1e999 is too large"},
		{"0x10", 1, `found "x10"`},   // no hexadecimal
		{"1_000", 1, `found "_000"`}, // no digit separators
	}
	for _, tt := range tests {
		_, err := Compile(tt.src, testVars)
		var e *Error
		if !errors.As(err, &e) {
			t.Errorf("Compile(%q) error = %v; want an *Error", tt.src, err)
			continue
		}
		if e.Offset != tt.offset || !strings.Contains(e.Msg, tt.msg) {
			t.Errorf("Compile(%q) error at offset %d: %s\nwant offset %d and a message containing %s",
				tt.src, e.Offset, e.Msg, tt.offset, tt.msg)
		}
	}
}

func TestErrorString(t *testing.T) {
	_, err := Compile("2 ** 3", testVars)
	want := `column 4: unexpected "*"; expected a number, a name or "("`
	if err == nil || err.Error() != want {
		t.Errorf("Compile(%q) error = %v; want %s", "2 ** 3", err, want)
	}
}

func TestSuggestions(t *testing.T) {
	tests := []struct {
		name string
		want string // "" for no suggestion
	}{
		{"ratoi", "ratio"},
		{"fo", "f0"},
		{"hzz", "hz"},
		{"sqr", "sqrt"},
		{"pie", "pi"},
		// One-letter names are not "corrected" into unrelated one-letter
		// names such as n or e.
		{"q", ""},
		{"x", ""},
		{"velocity", ""},
	}
	for _, tt := range tests {
		_, err := Compile(tt.name, testVars)
		if err == nil {
			t.Fatalf("Compile(%q) succeeded; want an unknown-name error", tt.name)
		}
		msg := err.Error()
		if tt.want == "" {
			if strings.Contains(msg, "did you mean") {
				t.Errorf("Compile(%q) error = %s; want no suggestion", tt.name, msg)
			}
		} else if want := `(did you mean "` + tt.want + `"?)`; !strings.Contains(msg, want) {
			t.Errorf("Compile(%q) error = %s; want it to contain %s", tt.name, msg, want)
		}
	}
}

func TestUnknownNameWithoutVariables(t *testing.T) {
	_, err := Compile("n", nil)
	if err == nil || !strings.Contains(err.Error(), `unknown name "n"; there are no variables`) {
		t.Errorf(`Compile("n", nil) error = %v; want it to say there are no variables`, err)
	}
}

func TestSourceLengthLimit(t *testing.T) {
	// "1+1+...+1 " is exactly maxSourceLen bytes: accepted, and a long
	// left-associative chain does not count as nesting.
	longest := strings.Repeat("1+", maxSourceLen/2-1) + "1 "
	p, err := Compile(longest, nil)
	if err != nil {
		t.Fatalf("Compile of %d bytes: %v", len(longest), err)
	}
	if got, want := p.Eval(nil), float64(maxSourceLen/2); got != want {
		t.Errorf("Eval = %v; want %v", got, want)
	}

	_, err = Compile(longest+" ", nil)
	var e *Error
	if !errors.As(err, &e) || e.Offset != maxSourceLen || !strings.Contains(e.Msg, "the limit is 4096") {
		t.Errorf("Compile of %d bytes: error = %v; want one at offset %d about the limit", len(longest)+1, err, maxSourceLen)
	}
}

func TestNestingLimit(t *testing.T) {
	tests := []struct {
		name   string
		nested func(depth int) string
		// failAt gives the offset of the token that opens level depth+1.
		failAt func(depth int) int
	}{
		{"parentheses",
			func(d int) string { return strings.Repeat("(", d) + "1" + strings.Repeat(")", d) },
			func(d int) int { return d }},
		{"signs",
			func(d int) string { return strings.Repeat("-", d) + "1" },
			func(d int) int { return d }},
		{"calls",
			func(d int) string { return strings.Repeat("abs(", d) + "1" + strings.Repeat(")", d) },
			func(d int) int { return 4*d + 3 }},
		{"exponents",
			func(d int) string { return strings.Repeat("1^", d) + "1" },
			func(d int) int { return 2*d + 1 }},
		{"mixed",
			func(d int) string { return strings.Repeat("-(", d/2) + "1" + strings.Repeat(")", d/2) },
			func(d int) int { return d }},
	}
	for _, tt := range tests {
		if _, err := Compile(tt.nested(maxDepth), nil); err != nil {
			t.Errorf("%s nested %d deep: %v", tt.name, maxDepth, err)
		}
		_, err := Compile(tt.nested(maxDepth+2), nil)
		var e *Error
		if !errors.As(err, &e) || e.Offset != tt.failAt(maxDepth) || !strings.Contains(e.Msg, "nests more than 100 levels deep") {
			t.Errorf("%s nested %d deep: error = %v; want one at offset %d about nesting", tt.name, maxDepth+2, err, tt.failAt(maxDepth))
		}
	}

	// The deepest nesting the length limit allows fails cleanly.
	if _, err := Compile(strings.Repeat("(", maxSourceLen), nil); err == nil {
		t.Errorf("Compile of %d parentheses succeeded", maxSourceLen)
	}
}

func TestProgramMethods(t *testing.T) {
	src := "ratio * hz + n*0"
	p, err := Compile(src, testVars)
	if err != nil {
		t.Fatal(err)
	}
	if p.Source() != src {
		t.Errorf("Source() = %q; want %q", p.Source(), src)
	}
	// n*0 still reads n: Uses reports what the source reads, not what
	// happens to matter to the result.
	wantUses := []bool{true, true, true, false, false, false}
	for i, want := range wantUses {
		if got := p.Uses(i); got != want {
			t.Errorf("Uses(%d) = %v; want %v", i, got, want)
		}
	}
	for _, i := range []int{-1, len(testVars)} {
		if p.Uses(i) {
			t.Errorf("Uses(%d) = true for an index outside vars", i)
		}
	}
	if v, ok := p.Constant(); ok {
		t.Errorf("Constant() = %v, true; want false", v)
	}

	c, err := Compile("2 * pi", testVars)
	if err != nil {
		t.Fatal(err)
	}
	if v, ok := c.Constant(); !ok || v != 2*math.Pi {
		t.Errorf("Constant() = %v, %v; want %v, true", v, ok, 2*math.Pi)
	}
	for i := range testVars {
		if c.Uses(i) {
			t.Errorf("Uses(%d) = true for a constant expression", i)
		}
	}
	if got := c.Eval(nil); got != 2*math.Pi {
		t.Errorf("Eval(nil) of a constant = %v; want %v", got, 2*math.Pi)
	}
}

func TestVariableShadowsConstant(t *testing.T) {
	p, err := Compile("e", []string{"e"})
	if err != nil {
		t.Fatal(err)
	}
	if got := p.Eval([]float64{7}); got != 7 {
		t.Errorf("Eval = %v; want the variable's value 7", got)
	}
	if !p.Uses(0) {
		t.Error("Uses(0) = false; want true")
	}
}

func TestDuplicateVariableUsesFirst(t *testing.T) {
	p, err := Compile("x", []string{"x", "x"})
	if err != nil {
		t.Fatal(err)
	}
	if got := p.Eval([]float64{1, 2}); got != 1 || !p.Uses(0) || p.Uses(1) {
		t.Errorf("Eval = %v, Uses = %v, %v; want 1, true, false", got, p.Uses(0), p.Uses(1))
	}
}

func TestConcurrentEval(t *testing.T) {
	p, err := Compile("sin(2*pi*hz*vel) * min(1, n/ratio)", testVars)
	if err != nil {
		t.Fatal(err)
	}
	want := p.Eval(testValues)
	done := make(chan float64)
	for range 8 {
		go func() {
			var got float64
			for range 1000 {
				got = p.Eval(testValues)
			}
			done <- got
		}()
	}
	for range 8 {
		if got := <-done; got != want {
			t.Errorf("concurrent Eval = %v; want %v", got, want)
		}
	}
}

func TestEvalDoesNotAllocate(t *testing.T) {
	for _, src := range []string{
		"1/n^2 * (-1)^((n-1)/2)",
		"min(n, ratio, vel, hz) + max(1, key) + clamp(vel, 0, 1)",
		"sqrt(n) + pow(ratio, vel) % 3 - -log(hz)",
		"2*pi",
	} {
		p, err := Compile(src, testVars)
		if err != nil {
			t.Fatalf("Compile(%q): %v", src, err)
		}
		if allocs := testing.AllocsPerRun(100, func() { p.Eval(testValues) }); allocs != 0 {
			t.Errorf("Compile(%q).Eval allocates %v times per call; want 0", src, allocs)
		}
	}
}

func BenchmarkEval(b *testing.B) {
	p, err := Compile("1/n^2 * (-1)^((n-1)/2)", testVars)
	if err != nil {
		b.Fatal(err)
	}
	// b.Loop keeps the result of each call alive, so none is optimized
	// away.
	for b.Loop() {
		p.Eval(testValues)
	}
}
