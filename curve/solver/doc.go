// Package solver fits weighted linear quantile regressions exactly, with an
// optional L1 difference penalty and linear inequality constraints.
//
// For observations y, sparse design rows x_i, weights w_i >= 0 and tau in (0,1)
// it solves the linear programme
//
//	minimise    sum_i w_i * rho_tau(y_i - x_i'b)  +  lambda * sum_j |d_j'b|
//	subject to  G b >= h
//
// where rho_tau(u) = u*(tau - 1{u<0}) is the check loss and d_j are the rows of
// a (banded) penalty matrix. Internally every term is a row with a cost a_i for
// a positive residual and c_i for a negative one (a_i = w_i*tau, c_i =
// w_i*(1-tau) for data; a_i = c_i = lambda for penalty rows), so the penalty is
// a set of pseudo-observations and one mechanism solves both.
//
// Two methods reach the same exact vertex: an edge-descending simplex method
// (simplex.go) and a primal–dual interior-point method (interior.go) whose
// approximate answer is rounded to a vertex and finished by the simplex
// method (crossover.go). Large problems are first reduced by fixing the signs
// of confidently signed residuals (preprocess.go); the answer is verified on
// the full data, never assumed: the pass over the data that checks the fixed
// signs also checks every optimality condition of the full problem (dual
// feasibility of each row's multiplier, the constraints, stationarity and a
// zero primal-dual gap; certify.go). An answer that fails is solved again,
// and an error (ErrUnverified) is returned rather than an answer that is not
// proven optimal. A tau grid reuses each solution to reduce the next problem
// (solve.go).
package solver
