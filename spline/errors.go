package spline

import "errors"

// Errors returned for bad knots, degrees, data or evaluation points. They are
// wrapped with context; test with errors.Is.
var (
	ErrOutOfRange = errors.New("spline: x outside the knot range")
	ErrKnots      = errors.New("spline: invalid knot vector")
	ErrDegree     = errors.New("spline: degree must be non-negative")
	ErrData       = errors.New("spline: unusable data for knot placement")
)
