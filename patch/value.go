package patch

import (
	"errors"
	"fmt"
	"math"
	"regexp"
	"strconv"
	"strings"

	"gopkg.in/yaml.v3"

	"sinter/patch/expr"
)

// Variables are the names an expression in a patch may read, in the order
// of the values slice passed to Value.eval.
var Variables = []string{"n", "ratio", "hz", "f0", "key", "vel"}

// Indices into a variable slice, matching Variables.
const (
	varN = iota
	varRatio
	varHz
	varF0
	varKey
	varVel
	varCount
)

var exprColumn = regexp.MustCompile(`column \d+`)

// Value is a patch setting that is a number or an expression of the partial
// (see Variables), optionally written in decibels ("-6 dB" or "-3*log2(n) dB").
type Value struct {
	prog     *expr.Program
	decibels bool
	file     string // where it was written; a patch or a file it includes
	line     int
	column   int
	path     string
}

// constValue is a Value fixed at v, used for defaults.
func constValue(v float64) Value {
	p, err := expr.Compile(fmt.Sprint(v), nil)
	if err != nil {
		panic(err) // a formatted float64 always compiles
	}
	return Value{prog: p}
}

// eval returns the value for one partial, converting decibels to a gain.
func (v Value) eval(vars []float64) float64 {
	x := v.prog.Eval(vars)
	if v.decibels {
		return math.Pow(10, x/20)
	}
	return x
}

// String returns the setting as written in the patch.
func (v Value) String() string {
	if v.decibels {
		return strings.TrimSpace(v.prog.Source()) + " dB"
	}
	return v.prog.Source()
}

// value reads a number, or an expression string; with decibels allowed a
// trailing "dB" makes the rest a level in decibels.
func (d *decoder) value(n *yaml.Node, path string, decibelsAllowed bool) (Value, bool) {
	n = d.resolve(n)
	if n.Kind == yaml.ScalarNode && (n.ShortTag() == "!!int" || n.ShortTag() == "!!float") {
		x, ok := d.number(n, path)
		if !ok {
			return Value{}, false
		}
		v := constValue(x)
		v.file, v.line, v.column, v.path = d.file, n.Line, n.Column, path
		return v, true
	}
	if n.Kind != yaml.ScalarNode || n.ShortTag() != "!!str" {
		d.errorf(n, path, "expected a number or an expression, found %s", describe(n))
		return Value{}, false
	}
	src := n.Value
	v := Value{file: d.file, line: n.Line, column: n.Column, path: path}
	if n.Style&(yaml.DoubleQuotedStyle|yaml.SingleQuotedStyle) != 0 {
		v.column++ // the expression starts after the opening quote
	}
	if trimmed := strings.TrimRight(src, " \t"); strings.HasSuffix(trimmed, "dB") {
		if !decibelsAllowed {
			d.errorf(n, path, "a level in dB is not allowed here; write a plain number")
			return Value{}, false
		}
		src, v.decibels = strings.TrimSuffix(trimmed, "dB"), true
	}
	prog, err := expr.Compile(src, Variables)
	if err != nil {
		var ee *expr.Error
		// Columns inside the expression map onto the file only where the
		// file holds its text verbatim on one line: not a block scalar, a
		// scalar folded over several lines or a quoted one with escapes.
		if errors.As(err, &ee) && d.verbatim(n) {
			// The expression counts columns from its own start; shift them so
			// they match the file's columns like the position before them.
			msg := exprColumn.ReplaceAllStringFunc(ee.Msg, func(m string) string {
				c, _ := strconv.Atoi(strings.TrimPrefix(m, "column "))
				return fmt.Sprintf("column %d", c+v.column-1)
			})
			d.errs = append(d.errs, &Error{File: d.file, Line: v.line, Column: v.column + ee.Offset, Path: path,
				Msg: fmt.Sprintf("in expression %q: %s", clip(strings.TrimSpace(src)), msg)})
		} else {
			d.errorf(n, path, "in expression %q: %v", clip(strings.TrimSpace(src)), err)
		}
		return Value{}, false
	}
	v.prog = prog
	return v, true
}

// verbatim reports whether scalar n's text stands as it is on the line
// where it starts, after its opening quote if it has one, and, if quoted,
// is closed there.
func (d *decoder) verbatim(n *yaml.Node) bool {
	if n.Style&(yaml.LiteralStyle|yaml.FoldedStyle) != 0 || n.Line < 1 || n.Line > len(d.lines) {
		return false
	}
	line := string(d.lines[n.Line-1])
	start := n.Column - 1
	quote := ""
	switch {
	case n.Style&yaml.DoubleQuotedStyle != 0:
		quote = "\""
	case n.Style&yaml.SingleQuotedStyle != 0:
		quote = "'"
	}
	start += len(quote)
	if start < 0 || start > len(line) || !strings.HasPrefix(line[start:], n.Value) {
		return false
	}
	return quote == "" || strings.HasPrefix(line[start+len(n.Value):], quote)
}

// at returns an error located where the value was written, in file
// unless the value came from a file the patch includes.
func (v Value) at(file, format string, args ...any) *Error {
	if v.file != "" {
		file = v.file
	}
	return &Error{File: file, Line: v.line, Column: v.column, Path: v.path, Msg: fmt.Sprintf(format, args...)}
}
