package clinic

import (
	"errors"
	"fmt"
)

// Errors returned by RunServe and Serve. They are wrapped with context; test
// with errors.Is.
var (
	// ErrUsage: bad command-line flags or arguments.
	ErrUsage = errors.New("clinic: bad usage")
	// ErrAddr: an address that cannot be listened on, or a non-loopback
	// address without Options.AllowRemote.
	ErrAddr = errors.New("clinic: unusable listen address")
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
