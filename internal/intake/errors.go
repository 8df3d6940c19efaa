package intake

import (
	"errors"
	"fmt"
)

// Errors for input that cannot be used at all. They reach the caller wrapped
// in an *Error that names the file and line; test with errors.Is.
var (
	// Plan file problems.
	ErrSyntax     = errors.New("intake: plan is not valid TOML")
	ErrUnknownKey = errors.New("intake: unknown key in plan")
	ErrType       = errors.New("intake: plan key has the wrong type")
	ErrPlanValue  = errors.New("intake: invalid plan value")

	// CSV problems.
	ErrEmpty   = errors.New("intake: file is empty")
	ErrNoRows  = errors.New("intake: no data rows")
	ErrColumn  = errors.New("intake: column not in header")
	ErrBinary  = errors.New("intake: not a UTF-8 text file")
	ErrHeader  = errors.New("intake: unusable header row")
	ErrBadSpec = errors.New("intake: invalid column specification")
)

// Error is a problem at a place in a file. Its text is "file:line: message"
// (the line is left out when unknown), ready to show to a user; Unwrap
// returns one of the sentinel errors above.
type Error struct {
	File string // file name as given by the caller
	Line int    // 1-based; 0 when the problem has no single line
	Msg  string // plain-English message
	Err  error  // sentinel
}

func (e *Error) Error() string {
	switch {
	case e.File == "" && e.Line == 0:
		return e.Msg
	case e.Line == 0:
		return e.File + ": " + e.Msg
	}
	return fmt.Sprintf("%s:%d: %s", e.File, e.Line, e.Msg)
}

func (e *Error) Unwrap() error { return e.Err }

func errAt(file string, line int, sentinel error, format string, args ...any) *Error {
	return &Error{File: file, Line: line, Msg: fmt.Sprintf(format, args...), Err: sentinel}
}
