package clinic

import (
	"errors"
	"fmt"
)

// Errors returned by Serve. They are wrapped with context; test with
// errors.Is.
var (
	// ErrAddr: an address that cannot be listened on.
	ErrAddr = errors.New("clinic: unusable listen address")
	// ErrRemote: a non-loopback address without Options.AllowRemote.
	ErrRemote = errors.New("clinic: listen address reachable from other machines not allowed")
	// ErrReferences: no reference, a reference that cannot be loaded, or two
	// references with the same name.
	ErrReferences = errors.New("clinic: unusable references")
)

// inputError is a problem with one input field, shown beside the field on
// the page and returned as {"error": Msg, "field": Field} by the API.
type inputError struct {
	Field string // form or JSON field name, for example "value" or "[2].age"
	Msg   string
}

func (e *inputError) Error() string { return e.Field + ": " + e.Msg }

func fieldErr(field, format string, args ...any) *inputError {
	return &inputError{Field: field, Msg: fmt.Sprintf(format, args...)}
}
