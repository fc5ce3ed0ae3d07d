package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"

	"sinter/patch"
)

// reporter prints a command's result and errors: as text, results on
// stdout and errors on stderr, or with --json as one JSON document on
// stdout either way, so a pipeline reads one stream and the exit status.
type reporter struct {
	json           bool
	stdout, stderr io.Writer
	command        string
}

// jsonError is one error in a --json failure report; file, line and column
// are there when the error has a place in a patch.
type jsonError struct {
	File    string `json:"file,omitempty"`
	Line    int    `json:"line,omitempty"`
	Column  int    `json:"column,omitempty"`
	Path    string `json:"path,omitempty"`
	Message string `json:"message"`
}

// fail reports err and returns code.
func (r reporter) fail(code int, err error) int {
	placed := patchErrors(err)
	switch {
	case r.json && placed == nil:
		placed = []jsonError{{Message: err.Error()}}
		fallthrough
	case r.json:
		r.write(struct {
			OK     bool        `json:"ok"`
			Errors []jsonError `json:"errors"`
		}{false, placed})
	case placed != nil:
		fmt.Fprintln(r.stderr, err) // each line already starts "file:line:column:"
	default:
		fmt.Fprintf(r.stderr, "sinter %s: %v\n", r.command, err)
	}
	return code
}

// patchErrors returns the problems err reports in a patch, or nil when it
// is not a patch error.
func patchErrors(err error) []jsonError {
	var list patch.ErrorList
	var one *patch.Error
	switch {
	case errors.As(err, &list):
	case errors.As(err, &one):
		list = patch.ErrorList{one}
	default:
		return nil
	}
	errs := make([]jsonError, len(list))
	for i, e := range list {
		errs[i] = jsonError{File: e.File, Line: e.Line, Column: e.Column, Path: e.Path, Message: e.Msg}
	}
	return errs
}

// emit prints a successful result as JSON and returns exitOK.
func (r reporter) emit(result any) int {
	r.write(struct {
		OK     bool `json:"ok"`
		Result any  `json:"result"`
	}{true, result})
	return exitOK
}

func (r reporter) write(v any) {
	enc := json.NewEncoder(r.stdout)
	enc.SetIndent("", "  ")
	enc.Encode(v)
}
