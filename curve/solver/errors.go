package solver

import "errors"

// Errors returned for bad problem data. They are wrapped with context; test
// with errors.Is.
var (
	ErrNotFinite     = errors.New("solver: y, design, weights or constraints hold NaN or Inf")
	ErrNegWeight     = errors.New("solver: negative weight")
	ErrTau           = errors.New("solver: tau must lie strictly between 0 and 1")
	ErrTooFew        = errors.New("solver: fewer observations with positive weight than coefficients")
	ErrRankDeficient = errors.New("solver: design is rank deficient")
	ErrInfeasible    = errors.New("solver: constraints are infeasible")
	ErrNoConverge    = errors.New("solver: iteration limit reached without an optimal vertex")
	// ErrUnverified: an answer failed the optimality check on the full
	// problem and solving it again did not give one that passes. It means
	// a defect in the solver, not in the data.
	ErrUnverified = errors.New("solver: answer failed its optimality check")
)
