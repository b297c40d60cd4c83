package parsers

import (
	"errors"
	"fmt"
)

// Reasons a file is refused; a *ParseError wraps one of them.
var (
	ErrEmpty         = errors.New("file is empty")
	ErrBinary        = errors.New("file is not text")
	ErrNoHeader      = errors.New("header row not found")
	ErrMissingColumn = errors.New("column not found")
	ErrBadNumber     = errors.New("not a number")
	ErrNoData        = errors.New("no data rows")
	ErrNoRunID       = errors.New("no run id")
	ErrSyntax        = errors.New("malformed line")
	ErrMissingValue  = errors.New("value not found")
	// ErrIncomplete means the file is not finished yet (no trailer, too
	// few rows): the agent waits for it, and quarantines it only after
	// the format's incomplete_timeout.
	ErrIncomplete = errors.New("file is incomplete")
)

// ParseError says where in which file parsing failed and why. Line and
// Column count from 1; 0 means not known.
type ParseError struct {
	File   string
	Line   int
	Column int
	Err    error
}

func (e *ParseError) Error() string {
	switch {
	case e.Line > 0 && e.Column > 0:
		return fmt.Sprintf("%s:%d:%d: %v", e.File, e.Line, e.Column, e.Err)
	case e.Line > 0:
		return fmt.Sprintf("%s:%d: %v", e.File, e.Line, e.Err)
	default:
		return fmt.Sprintf("%s: %v", e.File, e.Err)
	}
}

func (e *ParseError) Unwrap() error { return e.Err }

func perr(file string, line, col int, err error) *ParseError {
	return &ParseError{File: file, Line: line, Column: col, Err: err}
}
