package mapping

import (
	"bufio"
	"fmt"
	"io"
	"slices"
	"strings"
)

// PlacedRegion is a <region> of an SFZ file as a sampler reads it: where
// its header stands, and the opcodes that apply to it, its own over those
// of the <group>, <master> and <global> above it.
type PlacedRegion struct {
	Line, Column int // of the <region> header, 1-based
	// Sample is the sample opcode as it applies, with <control>'s
	// default_path before it; "" when the region has none.
	Sample  string
	Opcodes map[string]string
}

// ReadError is a place in an SFZ file that cannot be read.
type ReadError struct {
	Line, Column int
	Msg          string
}

// Error writes the place, line:column, and what is wrong there.
func (e *ReadError) Error() string { return fmt.Sprintf("%d:%d: %s", e.Line, e.Column, e.Msg) }

// maxSFZLine bounds one line of a mapping; sinter writes a few hundred
// bytes a region.
const maxSFZLine = 1 << 20

// levels are the headers whose opcodes regions inherit, outermost first;
// a header resets its own level and every level inside it (the SFZ
// format's header hierarchy, sfzformat.com "Headers": control, global,
// master, group, region).
var levels = []string{"control", "global", "master", "group"}

// ReadSFZ reads the regions of an SFZ file. It reads what the format's
// reference (sfzformat.com) describes and sinter's own mappings use:
// headers in angle brackets, opcode=value pairs, whose value runs to the
// next opcode, header or comment on the line, so a sample path may hold
// spaces; "//" comments to the end of the line and "/* */" comments
// (common practice in the format's players). Preprocessor lines
// (#define, #include) are refused, since reading them needs other files
// or substitution a check should not guess at.
func ReadSFZ(r io.Reader) ([]PlacedRegion, error) {
	var regions []PlacedRegion
	inherited := make([]map[string]string, len(levels))
	var current map[string]string // the opcodes of the header being read
	var region *PlacedRegion
	finish := func() {
		if region == nil {
			return
		}
		for _, level := range inherited {
			for k, v := range level {
				if _, own := region.Opcodes[k]; !own {
					region.Opcodes[k] = v
				}
			}
		}
		region.Sample = region.Opcodes["sample"]
		if region.Sample != "" && inherited[0]["default_path"] != "" {
			region.Sample = inherited[0]["default_path"] + region.Sample
		}
		regions = append(regions, *region)
		region = nil
	}
	sc := bufio.NewScanner(r)
	sc.Buffer(nil, maxSFZLine)
	inComment := false
	for line := 1; sc.Scan(); line++ {
		text := sc.Text()
		for col := 0; col < len(text); {
			switch {
			case inComment:
				end := strings.Index(text[col:], "*/")
				if end < 0 {
					col = len(text)
					continue
				}
				col += end + 2
				inComment = false
			case text[col] == ' ' || text[col] == '\t' || text[col] == '\r':
				col++
			case strings.HasPrefix(text[col:], "//"):
				col = len(text)
			case strings.HasPrefix(text[col:], "/*"):
				col += 2
				inComment = true
			case text[col] == '#':
				return nil, &ReadError{line, col + 1, fmt.Sprintf("the preprocessor line %q cannot be checked; write the mapping out without it", clip(text[col:]))}
			case text[col] == '<':
				end := strings.IndexByte(text[col:], '>')
				if end < 0 {
					return nil, &ReadError{line, col + 1, "a header opened with '<' is not closed with '>'"}
				}
				name := text[col+1 : col+end]
				finish()
				switch i := slices.Index(levels, name); {
				case name == "region":
					region = &PlacedRegion{Line: line, Column: col + 1, Opcodes: map[string]string{}}
					current = region.Opcodes
				case i >= 0:
					for j := i; j < len(levels); j++ {
						inherited[j] = map[string]string{}
					}
					current = inherited[i]
				case isName(name):
					current = map[string]string{} // a header that sets nothing regions inherit, such as <curve>
				default:
					return nil, &ReadError{line, col + 1, fmt.Sprintf("<%s> is not a header", clip(name))}
				}
				col += end + 1
			default:
				eq := strings.IndexByte(text[col:], '=')
				if eq <= 0 || !isName(text[col:col+eq]) {
					return nil, &ReadError{line, col + 1, fmt.Sprintf("expected a header such as <region> or an opcode such as sample=x.wav, found %q", clip(text[col:]))}
				}
				if current == nil {
					return nil, &ReadError{line, col + 1, fmt.Sprintf("the opcode %s comes before any header", text[col:col+eq])}
				}
				name := text[col : col+eq]
				start := col + eq + 1
				end := valueEnd(text, start)
				current[name] = strings.TrimRight(text[start:end], " \t\r")
				col = end
			}
		}
	}
	if err := sc.Err(); err != nil {
		return nil, err
	}
	finish()
	return regions, nil
}

// valueEnd is where the value starting at start ends: at the start of the
// next opcode (a name and '=' after a space), a header, a comment or the
// end of the line.
func valueEnd(text string, start int) int {
	for i := start; i < len(text); i++ {
		switch {
		case text[i] == '<' || strings.HasPrefix(text[i:], "//") || strings.HasPrefix(text[i:], "/*"):
			return i
		case (text[i] == ' ' || text[i] == '\t') && i+1 < len(text):
			rest := text[i+1:]
			if eq := strings.IndexByte(rest, '='); eq > 0 && isName(rest[:eq]) {
				return i + 1
			}
		}
	}
	return len(text)
}

// isName reports whether s is an opcode or header name: letters, digits
// and underscores.
func isName(s string) bool {
	if s == "" {
		return false
	}
	for _, c := range s {
		if !(c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '_') {
			return false
		}
	}
	return true
}

func clip(s string) string {
	if len(s) > 40 {
		return s[:37] + "..."
	}
	return s
}
