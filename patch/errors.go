package patch

import (
	"bytes"
	"fmt"
	"slices"
	"strings"
)

// Error is a problem in a patch, located at a line and column of its file.
type Error struct {
	File   string // path of the patch file as given
	Line   int    // 1-based; 0 when the problem has no single place
	Column int    // 1-based
	Path   string // the key's path inside the patch, such as "partials[1].envelope.decay"
	Msg    string // what was expected and what was found
}

func (e *Error) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		fmt.Fprintf(&b, ":%d:%d", e.Line, e.Column)
	}
	b.WriteString(": ")
	if e.Path != "" {
		b.WriteString(e.Path)
		b.WriteString(": ")
	}
	b.WriteString(e.Msg)
	return b.String()
}

// ErrorList is every problem found in one patch, in file order.
type ErrorList []*Error

func (l ErrorList) Error() string {
	lines := make([]string, len(l))
	for i, e := range l {
		lines[i] = e.Error()
	}
	return strings.Join(lines, "\n")
}

// sortByPosition puts the list in file order, keeping the order in which
// problems at the same place were found; problems in included files stay
// together, after the first problem reported in them.
func (l ErrorList) sortByPosition() {
	rank := map[string]int{}
	for _, e := range l {
		if _, ok := rank[e.File]; !ok {
			rank[e.File] = len(rank)
		}
	}
	slices.SortStableFunc(l, func(a, b *Error) int {
		if a.File != b.File {
			return rank[a.File] - rank[b.File]
		}
		if a.Line != b.Line {
			return a.Line - b.Line
		}
		return a.Column - b.Column
	})
}

// tabInIndent finds the first tab in the indentation of lines[from-1] or a
// later line, returning its 1-based line and 0-based byte offset, or the
// first tab anywhere on lines[from-1]; l is 0 when there is none.
func tabInIndent(lines [][]byte, from int) (l, i int) {
	for l := from; l <= len(lines); l++ {
		text := lines[l-1]
		indent := text[:len(text)-len(bytes.TrimLeft(text, " \t"))]
		if i := bytes.IndexByte(indent, '\t'); i >= 0 {
			return l, i
		}
	}
	if i := bytes.IndexByte(lines[from-1], '\t'); i >= 0 {
		return from, i
	}
	return 0, 0
}
