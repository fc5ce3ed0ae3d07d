package tuning

import (
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Scale is a scale as a .scl file gives it. Degree 0 is the implicit 1/1
// (0 cents), which the file leaves out; Cents holds degrees 1 to n in
// cents above it, the last of them being the period, the interval at
// which the scale repeats.
type Scale struct {
	File        string
	Description string
	Cents       []float64
	// countLine and pitchLines are where the count and each pitch stand,
	// for errors about the scale as a whole.
	countLine  int
	pitchLines []int
}

// Period is the interval in cents at which the scale repeats: its last
// pitch.
func (s *Scale) Period() float64 { return s.Cents[len(s.Cents)-1] }

// DegreeCents is the pitch of degree d in cents above degree 0, for any
// whole d: the scale repeats at its period upwards and downwards, so
// degree n is the period and degree −1 the last pitch below the period
// an octave (a period) down.
func (s *Scale) DegreeCents(d int) float64 {
	n := len(s.Cents)
	q := floorDiv(d, n)
	r := d - q*n
	c := float64(q) * s.Period()
	if r > 0 {
		c += s.Cents[r-1]
	}
	return c
}

// floorDiv divides rounding towards minus infinity, so that degrees and
// keys below the start of a pattern fall into the pattern before it.
func floorDiv(a, b int) int {
	q := a / b
	if a%b != 0 && (a < 0) != (b < 0) {
		q--
	}
	return q
}

// ParseScale reads a .scl file. As the format's description says: lines
// beginning with '!' are comments; the first other line is the scale's
// description (it may be empty); the next holds the number of pitches,
// spaces around it allowed; then come that many pitches, one to a line,
// each a value in cents if it holds a period ("386.3137"), else a ratio
// ("5/4") or a whole number standing for a ratio over 1 ("2"), with
// spaces or tabs before it and anything after it ignored. Negative ratios
// are a read error. The implicit 1/1 is not among them, and the last is
// the period. Lines after the last pitch must be blank or comments, so a
// count that says too few is caught rather than read as a short scale.
func ParseScale(file string, data []byte) (*Scale, error) {
	fail := func(l, col int, format string, args ...any) (*Scale, error) {
		return nil, &Error{File: file, Line: l, Column: col, Msg: fmt.Sprintf(format, args...)}
	}
	if len(data) > MaxFileBytes {
		return fail(1, 1, "the file is %d bytes; scale files are limited to %d", len(data), MaxFileBytes)
	}
	lines := meaningful(data)
	if len(lines) == 0 {
		return fail(lastLine(data), 1, "expected a description line and the number of pitches, found only comments")
	}
	s := &Scale{File: file, Description: strings.TrimRight(lines[0].text, " \t")}
	if len(lines) < 2 {
		return fail(lastLine(data), 1, "expected the number of pitches after the description on line %d", lines[0].n)
	}
	countAt := lines[1]
	s.countLine = countAt.n
	count, col, msg := wholeNumber(countAt.text, 0, maxPitches, "the number of pitches")
	if msg != "" {
		return fail(countAt.n, col, "%s", msg)
	}
	rest := lines[2:]
	for i := 0; i < count; i++ {
		if i >= len(rest) {
			return fail(lastLine(data), 1, "line %d says the scale has %d pitches, but the file ends after %d", countAt.n, count, i)
		}
		c, col, msg := pitch(rest[i].text)
		if msg != "" {
			return fail(rest[i].n, col, "%s", msg)
		}
		s.Cents = append(s.Cents, c)
		s.pitchLines = append(s.pitchLines, rest[i].n)
	}
	for _, l := range rest[min(count, len(rest)):] {
		if !blank(l.text) {
			return fail(l.n, indent(l.text)+1, "line %d says the scale has %d pitches; this line would be one more (is the count right?)", countAt.n, count)
		}
	}
	return s, nil
}

// pitch reads one pitch line: cents if the value holds a period, else a
// ratio n/d or a whole number n (n/1). It returns the cents, or the
// 1-based column and a message.
func pitch(text string) (cents float64, col int, msg string) {
	const want = "expected a pitch: cents with a period such as 386.3137, or a ratio such as 5/4 or 2"
	start := indent(text)
	i := start
	if i == len(text) {
		return 0, i + 1, want
	}
	sign := byte(0)
	if text[i] == '-' || text[i] == '+' {
		sign = text[i]
		i++
	}
	whole := digits(text, i)
	i += len(whole)
	if i < len(text) && text[i] == '.' {
		frac := digits(text, i+1)
		if whole == "" && frac == "" {
			return 0, start + 1, want
		}
		end := i + 1 + len(frac)
		c, err := strconv.ParseFloat(text[start:end], 64)
		if err != nil {
			return 0, start + 1, fmt.Sprintf("%s is too large for cents", clip(text[start:end]))
		}
		return c, 0, ""
	}
	if whole == "" {
		return 0, start + 1, want
	}
	if sign == '-' {
		return 0, start + 1, fmt.Sprintf("the ratio %s is negative, which the format's description makes a read error (a pitch below 1/1 is written in cents, such as -100.0)", clip(strings.Fields(text[start:])[0]))
	}
	if sign == '+' {
		return 0, start + 1, want
	}
	num, err := strconv.ParseUint(whole, 10, 64)
	if err != nil {
		return 0, start + 1, fmt.Sprintf("the numerator %s is too large", clip(whole))
	}
	den := uint64(1)
	if i < len(text) && text[i] == '/' {
		d := digits(text, i+1)
		if d == "" {
			return 0, i + 2, "expected a denominator after '/'"
		}
		if den, err = strconv.ParseUint(d, 10, 64); err != nil {
			return 0, i + 2, fmt.Sprintf("the denominator %s is too large", clip(d))
		}
		if den == 0 {
			return 0, i + 2, "a ratio's denominator cannot be 0"
		}
	}
	if num == 0 {
		return 0, start + 1, "a ratio of 0 is no pitch"
	}
	// Cents of a frequency ratio: 1200·log2(r) (common practice).
	return 1200 * (math.Log2(float64(num)) - math.Log2(float64(den))), 0, ""
}

// digits returns the run of ASCII digits in text from i.
func digits(text string, i int) string {
	j := i
	for j < len(text) && text[j] >= '0' && text[j] <= '9' {
		j++
	}
	return text[i:j]
}

// wholeNumber reads a line holding one whole number in lo..hi, spaces
// around it allowed; what names it in messages. It returns the number,
// or the 1-based column and a message.
func wholeNumber(text string, lo, hi int, what string) (n, col int, msg string) {
	start := indent(text)
	tok := token(text[start:])
	d := digits(tok, 0)
	if tok == "" || d != tok {
		return 0, start + 1, fmt.Sprintf("expected %s, a whole number from %d to %d, found %q", what, lo, hi, clip(strings.TrimSpace(text)))
	}
	v, err := strconv.Atoi(d)
	if err != nil || v < lo || v > hi {
		return 0, start + 1, fmt.Sprintf("%s is %s, outside %d..%d", what, clip(d), lo, hi)
	}
	if !blank(text[start+len(tok):]) {
		return 0, start + len(tok) + 1 + indent(text[start+len(tok):]), fmt.Sprintf("expected only %s on this line", what)
	}
	return v, 0, ""
}

// token is the text up to the first space or tab.
func token(s string) string {
	if i := strings.IndexAny(s, " \t"); i >= 0 {
		return s[:i]
	}
	return s
}
