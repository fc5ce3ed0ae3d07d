package expr

import (
	"fmt"
	"math"
	"slices"
	"strings"
)

// The grammar, from lowest to highest precedence:
//
//	sum     = product { ("+" | "-") product }
//	product = unary { ("*" | "/" | "%") unary }
//	unary   = ("-" | "+") unary | power
//	power   = primary [ "^" unary ]
//	primary = number | name | name "(" [ sum { "," sum } ] ")" | "(" sum ")"
//
// The exponent of power is a unary rather than a power, which makes ^ right
// associative and lets the exponent carry a sign ("2^-1"), while a sign in
// front of a power applies to the whole power ("-2^2" is -4).

// node is a compiled subexpression.
type node struct {
	eval     evalFunc
	constant bool // the subexpression reads no variable
}

// constantNode returns the node that always evaluates to c.
func constantNode(c float64) node {
	return node{eval: func([]float64) float64 { return c }, constant: true}
}

// combine returns the node that computes eval from operands, folded to a
// constant when no operand reads a variable. The constant is what eval
// itself returns, so folding never changes a result.
func combine(eval evalFunc, operands ...node) node {
	for _, o := range operands {
		if !o.constant {
			return node{eval: eval}
		}
	}
	return constantNode(eval(nil))
}

// binaryOperators maps the operators of one precedence level to the
// function that builds the evaluation of "a op b".
type binaryOperators map[string]func(a, b evalFunc) evalFunc

var sumOperators = binaryOperators{
	"+": func(a, b evalFunc) evalFunc { return func(v []float64) float64 { return a(v) + b(v) } },
	"-": func(a, b evalFunc) evalFunc { return func(v []float64) float64 { return a(v) - b(v) } },
}

var productOperators = binaryOperators{
	"*": func(a, b evalFunc) evalFunc { return func(v []float64) float64 { return a(v) * b(v) } },
	"/": func(a, b evalFunc) evalFunc { return func(v []float64) float64 { return a(v) / b(v) } },
	"%": func(a, b evalFunc) evalFunc { return func(v []float64) float64 { return math.Mod(a(v), b(v)) } },
}

// parser is a recursive-descent parser that compiles as it parses.
type parser struct {
	scanner
	vars  []string
	uses  []bool // uses[i] is set once the source reads vars[i]
	tok   token  // the current token
	depth int    // how many parentheses, signs, exponents and calls enclose tok
}

// parse compiles the whole source.
func (p *parser) parse() (node, error) {
	if err := p.advance(); err != nil {
		return node{}, err
	}
	if p.tok.kind == tokEnd {
		return node{}, &Error{Offset: 0, Msg: "empty expression"}
	}
	n, err := p.sum()
	if err != nil {
		return node{}, err
	}
	switch {
	case p.tok.kind == tokEnd:
		return n, nil
	case p.tok.is(")"):
		return node{}, p.errorf(p.tok.offset, `unexpected ")" with no matching "("`)
	default:
		return node{}, p.errorf(p.tok.offset, "expected an operator or end of expression, found %s", p.tok.describe())
	}
}

func (p *parser) advance() error {
	t, err := p.next()
	if err != nil {
		return err
	}
	p.tok = t
	return nil
}

func (p *parser) errorf(offset int, format string, args ...any) *Error {
	return &Error{Offset: offset, Msg: fmt.Sprintf(format, args...)}
}

// enter notes one more level of nesting at the current token, failing once
// there are too many; each successful enter is paired with a leave.
func (p *parser) enter() error {
	if p.depth == maxDepth {
		return p.errorf(p.tok.offset, "expression nests more than %d levels deep", maxDepth)
	}
	p.depth++
	return nil
}

func (p *parser) leave() {
	p.depth--
}

func (p *parser) sum() (node, error) {
	return p.leftAssociative(sumOperators, p.product)
}

func (p *parser) product() (node, error) {
	return p.leftAssociative(productOperators, p.unary)
}

// leftAssociative parses operands separated by operators of one precedence
// level, grouping them from the left. It loops rather than recurses, so a
// long chain such as "1+1+1+..." adds no nesting.
func (p *parser) leftAssociative(operators binaryOperators, operand func() (node, error)) (node, error) {
	left, err := operand()
	if err != nil {
		return node{}, err
	}
	for p.tok.kind == tokPunct {
		build, ok := operators[p.tok.text]
		if !ok {
			break
		}
		if err := p.advance(); err != nil {
			return node{}, err
		}
		right, err := operand()
		if err != nil {
			return node{}, err
		}
		left = combine(build(left.eval, right.eval), left, right)
	}
	return left, nil
}

func (p *parser) unary() (node, error) {
	if !p.tok.is("-") && !p.tok.is("+") {
		return p.power()
	}
	negate := p.tok.is("-")
	if err := p.enter(); err != nil {
		return node{}, err
	}
	defer p.leave()
	if err := p.advance(); err != nil {
		return node{}, err
	}
	operand, err := p.unary()
	if err != nil || !negate {
		return operand, err
	}
	x := operand.eval
	return combine(func(v []float64) float64 { return -x(v) }, operand), nil
}

func (p *parser) power() (node, error) {
	base, err := p.primary()
	if err != nil || !p.tok.is("^") {
		return base, err
	}
	if err := p.enter(); err != nil {
		return node{}, err
	}
	defer p.leave()
	if err := p.advance(); err != nil {
		return node{}, err
	}
	exponent, err := p.unary()
	if err != nil {
		return node{}, err
	}
	b, x := base.eval, exponent.eval
	return combine(func(v []float64) float64 { return math.Pow(b(v), x(v)) }, base, exponent), nil
}

func (p *parser) primary() (node, error) {
	t := p.tok
	switch {
	case t.kind == tokNumber:
		return constantNode(t.value), p.advance()
	case t.kind == tokName:
		if err := p.advance(); err != nil {
			return node{}, err
		}
		if p.tok.is("(") {
			return p.call(t)
		}
		return p.name(t)
	case t.is("("):
		return p.parenthesized()
	}
	return node{}, p.errorf(t.offset, `unexpected %s; expected a number, a name or "("`, t.describe())
}

func (p *parser) parenthesized() (node, error) {
	open := p.tok
	if err := p.enter(); err != nil {
		return node{}, err
	}
	defer p.leave()
	if err := p.advance(); err != nil {
		return node{}, err
	}
	inner, err := p.sum()
	if err != nil {
		return node{}, err
	}
	if !p.tok.is(")") {
		return node{}, p.errorf(p.tok.offset, `expected ")" to close "(" at column %d, found %s`, open.offset+1, p.tok.describe())
	}
	return inner, p.advance()
}

// name resolves a name that is not followed by "(": a variable, or else a
// constant.
func (p *parser) name(t token) (node, error) {
	if i := slices.Index(p.vars, t.text); i >= 0 {
		p.uses[i] = true
		return node{eval: func(v []float64) float64 { return v[i] }}, nil
	}
	if c, ok := constants[t.text]; ok {
		return constantNode(c), nil
	}
	if _, ok := functions[t.text]; ok {
		return node{}, p.errorf(t.offset, `%q is a function; expected "(" after it, found %s`, t.text, p.tok.describe())
	}
	known := "there are no variables"
	if len(p.vars) > 0 {
		known = "variables are " + strings.Join(p.vars, ", ")
	}
	return node{}, p.errorf(t.offset, "unknown name %q; %s%s",
		t.text, known, suggestion(t.text, p.vars, constantNames, functionNames))
}

// call compiles a call of the function named by t; the current token is
// the "(" after the name.
func (p *parser) call(t token) (node, error) {
	fn, ok := functions[t.text]
	if !ok {
		if slices.Contains(p.vars, t.text) {
			return node{}, p.errorf(t.offset, "%q is a variable, not a function", t.text)
		}
		if _, ok := constants[t.text]; ok {
			return node{}, p.errorf(t.offset, "%q is a constant, not a function", t.text)
		}
		return node{}, p.errorf(t.offset, "unknown function %q; functions are %s%s",
			t.text, strings.Join(functionNames, ", "), suggestion(t.text, functionNames))
	}
	open := p.tok
	if err := p.enter(); err != nil {
		return node{}, err
	}
	defer p.leave()
	if err := p.advance(); err != nil {
		return node{}, err
	}
	var args []node
	for !p.tok.is(")") {
		if len(args) > 0 {
			if !p.tok.is(",") {
				return node{}, p.errorf(p.tok.offset, `expected "," or ")" to close "(" at column %d, found %s`, open.offset+1, p.tok.describe())
			}
			if err := p.advance(); err != nil {
				return node{}, err
			}
		}
		arg, err := p.sum()
		if err != nil {
			return node{}, err
		}
		args = append(args, arg)
	}
	if err := p.advance(); err != nil {
		return node{}, err
	}
	if msg := fn.checkArity(t.text, len(args)); msg != "" {
		return node{}, p.errorf(t.offset, "%s", msg)
	}
	evals := make([]evalFunc, len(args))
	for i, a := range args {
		evals[i] = a.eval
	}
	return combine(fn.build(evals), args...), nil
}
