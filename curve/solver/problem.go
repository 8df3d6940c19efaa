package solver

import (
	"fmt"
)

// Design is a sparse matrix whose row i holds Width consecutive entries
// Val[i*Width:(i+1)*Width] starting at column First[i]; all other entries are
// zero. B-spline design rows and difference-penalty rows have this shape.
type Design struct {
	Cols  int       // number of columns (coefficients)
	Width int       // stored entries per row
	First []int     // first stored column of each row
	Val   []float64 // row-major stored entries, len(First)*Width
}

// NewDense returns a Design holding the dense rows of a (every row full width).
func NewDense(rows [][]float64) *Design {
	if len(rows) == 0 {
		return &Design{}
	}
	p := len(rows[0])
	d := &Design{Cols: p, Width: p, First: make([]int, len(rows)), Val: make([]float64, 0, len(rows)*p)}
	for i, r := range rows {
		if len(r) != p {
			panic(fmt.Sprintf("solver: row %d has %d entries, want %d", i, len(r), p))
		}
		d.Val = append(d.Val, r...)
	}
	return d
}

// Rows returns the number of rows.
func (d *Design) Rows() int { return len(d.First) }

// Row returns the first stored column and the stored entries of row i.
func (d *Design) Row(i int) (first int, val []float64) {
	return d.First[i], d.Val[i*d.Width : (i+1)*d.Width]
}

// Dot returns x_i'b.
func (d *Design) Dot(i int, b []float64) float64 {
	f, v := d.Row(i)
	s := 0.0
	for k, x := range v {
		s += x * b[f+k]
	}
	return s
}

// check panics when the stored shape is inconsistent: a programming mistake.
func (d *Design) check() {
	if d.Width < 0 || len(d.Val) != len(d.First)*d.Width {
		panic(fmt.Sprintf("solver: design stores %d entries for %d rows of width %d", len(d.Val), len(d.First), d.Width))
	}
	for i, f := range d.First {
		if f < 0 || f+d.Width > d.Cols {
			panic(fmt.Sprintf("solver: design row %d spans columns %d..%d of %d", i, f, f+d.Width-1, d.Cols))
		}
	}
}

// Problem is one weighted, penalised, constrained quantile regression.
type Problem struct {
	Y   []float64 // responses
	X   *Design   // design, one row per response
	W   []float64 // weights >= 0; nil means all 1
	Tau float64   // quantile level in (0,1)

	Lambda  float64 // L1 penalty weight (>= 0) on the rows of Penalty
	Penalty *Design // penalty rows d_j; nil means no penalty

	G [][]float64 // constraint rows, G b >= H; nil means none
	H []float64
}

// Method names a solution method.
type Method int

const (
	Auto     Method = iota // choose by problem size
	Simplex                // edge-descending simplex from scratch
	Interior               // interior point, crossover, simplex finish
)

func (m Method) String() string {
	switch m {
	case Auto:
		return "auto"
	case Simplex:
		return "simplex"
	case Interior:
		return "interior"
	}
	return fmt.Sprintf("Method(%d)", int(m))
}

// Settings tune Solve. The zero value, and nil, mean the documented defaults.
type Settings struct {
	// Method forces a method; Auto uses Simplex below SimplexRows rows
	// (data plus penalty) and Interior above.
	Method Method
	// NoPreprocess turns off the sign-fixing reduction of large problems.
	NoPreprocess bool
	// MaxIter bounds simplex pivots (default 50*(rows+coefficients)+1000)
	// and interior-point iterations (default 200).
	MaxIter int
	// Start is a solution of a neighbouring problem on the same rows (another
	// tau, or other constraint bounds). Its residual signs reduce the problem
	// and its basis starts the simplex method; the answer is still verified.
	// A Start with Coef only (no Basis) is a guess of the answer, for
	// example another design's fit projected on this one: above
	// PreprocessRows rows it places the band of rows the reduction keeps,
	// in place of a subsample's fit, when the share of rows below it is
	// near tau; otherwise, and at or below PreprocessRows, it is ignored.
	Start *Solution
	// Ordered, for SolveGrid, constrains each tau's coefficients by those
	// of the tau before it on the walk outward from the tau nearest 0.5:
	// b_tau >= b_prev componentwise above that tau and b_tau <= b_prev
	// below it. With basis functions that are non-negative and sum to one
	// (B-splines) the fitted curves then never cross; see SolveGrid.
	Ordered bool
	// Solved, if not nil, is called by SolveGrid after each tau is solved
	// and verified, from the calling goroutine, with that tau; a caller
	// can report progress with it.
	Solved func(tau float64)
}

// SimplexRows is the problem size (rows) below which Auto uses the simplex
// method from scratch: beyond it pivots from a cold start grow with n.
const SimplexRows = 600

// PreprocessRows is the number of data rows above which Interior first solves a
// reduced problem (Portnoy & Koenker 1997).
const PreprocessRows = 20000

// Solution is an exact optimal vertex.
type Solution struct {
	Coef       []float64 // b
	Objective  float64   // sum of weighted check losses plus penalty
	Iterations int       // simplex pivots plus interior-point iterations
	Method     Method    // method that ran
	// Basis lists the p conditions that define the vertex: a value k < n is
	// data row k, n <= k < n+r is penalty row k-n, and n+r+j is constraint j.
	Basis []int
	// Zero lists, in increasing order, the soft rows (data rows k < n, then
	// penalty rows n+j) whose residual is zero at the vertex, the basis rows
	// among them, and ZeroDual their multipliers d_k in [-c_k, a_k]. Every
	// other soft row's multiplier is fixed by the sign of its residual (a_k
	// if positive, -c_k if negative), so the optimality certificate
	// X'd + D'd_pen + G'mu = 0 costs memory for these rows only; Duals
	// expands it to every row.
	Zero     []int
	ZeroDual []float64
	// ConstraintDual holds mu_j >= 0 for each constraint.
	ConstraintDual []float64
	// Reductions counts how many times the preprocessing had to repair a
	// wrongly fixed sign.
	Reductions int
	// Status says whether the optimum is known to be unique. A problem
	// that cannot be solved returns an error instead.
	Status Status
}

// Status is what a Solution proves about its optimum.
type Status int

const (
	// Optimal: every basis condition has its multiplier strictly inside
	// its range (soft rows in (-c_i, a_i), constraints > 0), so every
	// optimum satisfies the same p conditions: Coef is the unique optimum.
	Optimal Status = iota + 1
	// OptimalTied: Coef is optimal, but a basis multiplier sits at the end
	// of its range, so other optima may exist; regression quantiles of a
	// sample are tied so, for example, when n·tau is a whole number
	// (Koenker & Bassett 1978).
	OptimalTied
)

func (s Status) String() string {
	switch s {
	case Optimal:
		return "optimal"
	case OptimalTied:
		return "optimal, possibly tied"
	}
	return fmt.Sprintf("Status(%d)", int(s))
}

// tiedMultiplier: a basis multiplier within tiedMultiplier times its
// range of the range's end counts as at the end (rounding of the basis
// solve, common practice).
const tiedMultiplier = 1e-9

// validate returns a typed error for bad user data.
func (p *Problem) validate() error {
	if p.X == nil {
		panic("solver: nil design")
	}
	p.X.check()
	n, q := p.X.Rows(), p.X.Cols
	if len(p.Y) != n {
		panic(fmt.Sprintf("solver: %d responses for %d design rows", len(p.Y), n))
	}
	if p.W != nil && len(p.W) != n {
		panic(fmt.Sprintf("solver: %d weights for %d rows", len(p.W), n))
	}
	if !(p.Tau > 0 && p.Tau < 1) {
		return fmt.Errorf("%w: tau = %v", ErrTau, p.Tau)
	}
	for i, y := range p.Y {
		if !finite(y) {
			return fmt.Errorf("%w: y[%d] = %v", ErrNotFinite, i, y)
		}
	}
	for i, x := range p.X.Val {
		if !finite(x) {
			return fmt.Errorf("%w: design row %d", ErrNotFinite, i/max(p.X.Width, 1))
		}
	}
	pos := n
	if p.W != nil {
		pos = 0
		for i, w := range p.W {
			if !finite(w) {
				return fmt.Errorf("%w: weight[%d] = %v", ErrNotFinite, i, w)
			}
			if w < 0 {
				return fmt.Errorf("%w: weight[%d] = %v", ErrNegWeight, i, w)
			}
			if w > 0 {
				pos++
			}
		}
	}
	if pos < q {
		return fmt.Errorf("%w: %d rows for %d coefficients", ErrTooFew, pos, q)
	}
	if !finite(p.Lambda) || p.Lambda < 0 {
		return fmt.Errorf("%w: lambda = %v", ErrNotFinite, p.Lambda)
	}
	if p.Penalty != nil {
		p.Penalty.check()
		if p.Penalty.Cols != q {
			panic(fmt.Sprintf("solver: penalty has %d columns, design %d", p.Penalty.Cols, q))
		}
		for i, x := range p.Penalty.Val {
			if !finite(x) {
				return fmt.Errorf("%w: penalty row %d", ErrNotFinite, i/max(p.Penalty.Width, 1))
			}
		}
	}
	if len(p.G) != len(p.H) {
		panic(fmt.Sprintf("solver: %d constraint rows for %d bounds", len(p.G), len(p.H)))
	}
	for j, g := range p.G {
		if len(g) != q {
			panic(fmt.Sprintf("solver: constraint %d has %d entries, want %d", j, len(g), q))
		}
		for _, x := range g {
			if !finite(x) {
				return fmt.Errorf("%w: constraint %d", ErrNotFinite, j)
			}
		}
		if !finite(p.H[j]) {
			return fmt.Errorf("%w: bound %d", ErrNotFinite, j)
		}
	}
	return nil
}

// finite reports whether x is neither NaN nor infinite: x - x is 0 for
// finite x and NaN otherwise (IEEE 754), one subtraction per value.
func finite(x float64) bool { return x-x == 0 }

// resize returns s with length n, reusing its storage when it is large enough.
func resize(s []float64, n int) []float64 {
	if cap(s) >= n {
		return s[:n]
	}
	return make([]float64, n)
}

// Solve returns the exact optimal vertex of p. It returns a wrapped typed
// error (see errors.go) for bad data or an infeasible or unsolved problem,
// and panics only on inconsistent shapes (a programming mistake).
//
// It is SolveGrid at the one tau p.Tau: a single problem and a grid take the
// same path.
func Solve(p *Problem, s *Settings) (*Solution, error) {
	sols, err := solveGrid(p, []float64{p.Tau}, s)
	if err != nil {
		return nil, err
	}
	return sols[0], nil
}

// SolveGrid solves p at each tau of taus (in any order): first the tau
// nearest 0.5, then outward both ways, each tau started from its neighbour
// on the walk (see preprocess.go: the pass over the data that verifies one
// tau classifies the rows for the next). p.Tau is ignored; s.Start, if
// given, starts the first tau.
//
// With s.Ordered each tau after the first is also constrained by its
// neighbour on the walk (Settings.Ordered). Its Solution then solves p with
// p.Cols further constraints after p.G, the ordering rows, in coefficient
// order: b_j >= b_prev,j above the first tau and -b_j >= -b_prev,j below
// it; Basis and ConstraintDual number them so (the first tau's Solution has
// none). This is the stepwise scheme of Wu & Liu (2009, Statistics and Its
// Interface 2, 299–310) with a componentwise constraint set.
//
// Every answer is verified on the full problem as Solve's are. SolveGrid
// returns the first error, wrapped with the tau concerned.
func SolveGrid(p *Problem, taus []float64, s *Settings) ([]*Solution, error) {
	return solveGrid(p, taus, s)
}

// Duals returns the multiplier of every soft row of p (data rows, then
// penalty rows) at the solution: ZeroDual for the rows listed in Zero, and
// for the others a_i or -c_i by the sign of the residual at Coef. p must be
// the problem s solves; Duals takes O(n) time and memory.
func (s *Solution) Duals(p *Problem) []float64 {
	t := newTable(p)
	r := make([]float64, t.rows())
	t.residuals(r, s.Coef)
	d := r[:t.nSoft]
	for i, ri := range d {
		switch {
		case ri > 0:
			d[i] = t.a[i]
		case ri < 0:
			d[i] = -t.c[i]
		}
	}
	for k, i := range s.Zero {
		d[i] = s.ZeroDual[k]
	}
	return d
}
