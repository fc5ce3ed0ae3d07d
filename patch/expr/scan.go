package expr

import (
	"fmt"
	"strconv"
	"strings"
	"unicode/utf8"
)

type tokenKind int

const (
	tokEnd    tokenKind = iota // end of the source
	tokNumber                  // decimal literal
	tokName                    // variable, constant or function name
	tokPunct                   // one of the operators + - * / % ^ or ( ) ,
)

const punctuation = "+-*/%^(),"

type token struct {
	kind   tokenKind
	text   string
	offset int     // byte offset of the token's first character
	value  float64 // value of a tokNumber
}

// is reports whether t is the punctuation mark punct.
func (t token) is(punct string) bool {
	return t.kind == tokPunct && t.text == punct
}

// describe names t the way error messages show what was found.
func (t token) describe() string {
	if t.kind == tokEnd {
		return "end of expression"
	}
	return strconv.Quote(t.text)
}

// scanner splits the source into tokens, one at a time, so that the parser
// reports problems in the order in which they appear.
type scanner struct {
	src string
	pos int
}

// next skips blanks and returns the token that starts after them.
func (s *scanner) next() (token, error) {
	for s.pos < len(s.src) && (s.src[s.pos] == ' ' || s.src[s.pos] == '\t') {
		s.pos++
	}
	start := s.pos
	if start == len(s.src) {
		return token{kind: tokEnd, offset: start}, nil
	}
	c := s.src[start]
	switch {
	case isDigit(c) || c == '.' && isDigit(s.byteAt(start+1)):
		return s.number()
	case isNameStart(c):
		s.pos++
		for isNameStart(s.byteAt(s.pos)) || isDigit(s.byteAt(s.pos)) {
			s.pos++
		}
		return token{kind: tokName, text: s.src[start:s.pos], offset: start}, nil
	case strings.IndexByte(punctuation, c) >= 0:
		s.pos++
		return token{kind: tokPunct, text: s.src[start:s.pos], offset: start}, nil
	}
	return token{}, &Error{Offset: start, Msg: "unexpected character " + s.describeChar(start)}
}

// number scans a decimal literal: digits with an optional fraction, or a
// fraction alone, then an optional exponent.
func (s *scanner) number() (token, error) {
	start := s.pos
	s.skipDigits()
	if s.byteAt(s.pos) == '.' {
		s.pos++
		s.skipDigits()
	}
	if c := s.byteAt(s.pos); c == 'e' || c == 'E' {
		s.pos++
		if c := s.byteAt(s.pos); c == '+' || c == '-' {
			s.pos++
		}
		if !isDigit(s.byteAt(s.pos)) {
			return token{}, &Error{
				Offset: s.pos,
				Msg:    fmt.Sprintf("expected digits in the exponent of %q, found %s", s.src[start:s.pos], s.describeChar(s.pos)),
			}
		}
		s.skipDigits()
	}
	text := s.src[start:s.pos]
	value, err := strconv.ParseFloat(text, 64)
	if err != nil {
		// The text is a well-formed literal, so the only way to fail is a
		// magnitude beyond float64. Tiny values round to zero without error.
		return token{}, &Error{Offset: start, Msg: fmt.Sprintf("number %s is too large", text)}
	}
	return token{kind: tokNumber, text: text, offset: start, value: value}, nil
}

func (s *scanner) skipDigits() {
	for isDigit(s.byteAt(s.pos)) {
		s.pos++
	}
}

// byteAt returns the byte at offset i, or 0 past the end, which no token
// contains.
func (s *scanner) byteAt(i int) byte {
	if i < len(s.src) {
		return s.src[i]
	}
	return 0
}

// describeChar quotes the whole, possibly multi-byte, character at offset
// i for an error message.
func (s *scanner) describeChar(i int) string {
	if i == len(s.src) {
		return "end of expression"
	}
	_, size := utf8.DecodeRuneInString(s.src[i:])
	return strconv.Quote(s.src[i : i+size])
}

func isDigit(c byte) bool {
	return '0' <= c && c <= '9'
}

func isNameStart(c byte) bool {
	return 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z' || c == '_'
}
