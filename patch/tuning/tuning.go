// Package tuning reads scale files in the open exchange format of a scale
// (.scl) and a keyboard mapping (.kbm), as the format's published
// description gives them (the "Scala scale file format" and "keyboard
// mapping" pages of the Scala documentation, huygens-fokker.org), and
// works out the frequency of every MIDI key from them.
package tuning

import (
	"bytes"
	"fmt"
	"strings"
)

// Error is a place in a .scl or .kbm file that cannot be read, or a value
// there that cannot tune a keyboard.
type Error struct {
	File         string
	Line, Column int // 1-based; the column counts bytes
	Msg          string
}

// Error writes FILE:LINE:COLUMN: MESSAGE, as sinter's patch errors do.
func (e *Error) Error() string {
	return fmt.Sprintf("%s:%d:%d: %s", e.File, e.Line, e.Column, e.Msg)
}

// MaxFileBytes bounds a scale or mapping file; the largest scales in
// circulation are a few kilobytes.
const MaxFileBytes = 1 << 20

// maxPitches bounds a scale's pitch count; the description allows a
// reader to refuse files beyond "a certain size".
const maxPitches = 100_000

// line is one line of a file with its 1-based number.
type line struct {
	n    int
	text string
}

// meaningful returns the lines that are not comments: the description
// says lines beginning with '!' are to be ignored. A trailing carriage
// return is dropped, so files written on any system read alike.
func meaningful(data []byte) []line {
	var out []line
	raw := bytes.Split(data, []byte("\n"))
	if len(raw[len(raw)-1]) == 0 {
		raw = raw[:len(raw)-1] // what follows the last line break is no line
	}
	for i, raw := range raw {
		text := strings.TrimSuffix(string(raw), "\r")
		if strings.HasPrefix(text, "!") {
			continue
		}
		out = append(out, line{i + 1, text})
	}
	return out
}

// lastLine is the number of the file's last line, where an error about
// something missing points.
func lastLine(data []byte) int {
	n := bytes.Count(data, []byte("\n")) + 1
	if len(data) > 0 && data[len(data)-1] == '\n' {
		n--
	}
	return max(n, 1)
}

// blank reports whether a line holds nothing but spaces and tabs.
func blank(s string) bool { return strings.Trim(s, " \t") == "" }

// indent is the 0-based offset of the first character that is not a
// space or a tab.
func indent(s string) int { return len(s) - len(strings.TrimLeft(s, " \t")) }

// clip shortens text quoted in a message.
func clip(s string) string {
	if len(s) > 40 {
		return s[:37] + "..."
	}
	return s
}
