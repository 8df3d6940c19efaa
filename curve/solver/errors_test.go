package solver

import (
	"errors"
	"math"
	"testing"
)

// testSmall is a valid problem: 6 rows, intercept and slope.
func testSmall() *Problem {
	return &Problem{
		Y:   []float64{1, 2, 2.5, 4, 3.5, 6},
		X:   NewDense([][]float64{{1, 0}, {1, 1}, {1, 2}, {1, 3}, {1, 4}, {1, 5}}),
		Tau: 0.5,
	}
}

// TestErrors checks that bad data returns the documented typed error (through
// errors.Is) from Solve, for every method, and from SolveGrid, without a
// panic.
func TestErrors(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	cases := []struct {
		name string
		edit func(p *Problem)
		want error
	}{
		{"NaN in y", func(p *Problem) { p.Y[2] = nan }, ErrNotFinite},
		{"Inf in y", func(p *Problem) { p.Y[0] = -inf }, ErrNotFinite},
		{"NaN in X", func(p *Problem) { p.X.Val[5] = nan }, ErrNotFinite},
		{"Inf in X", func(p *Problem) { p.X.Val[0] = inf }, ErrNotFinite},
		{"NaN weight", func(p *Problem) { p.W = []float64{1, 1, nan, 1, 1, 1} }, ErrNotFinite},
		{"Inf weight", func(p *Problem) { p.W = []float64{1, 1, 1, 1, 1, inf} }, ErrNotFinite},
		{"negative weight", func(p *Problem) { p.W = []float64{1, 1, 1, -0.5, 1, 1} }, ErrNegWeight},
		{"tau 0", func(p *Problem) { p.Tau = 0 }, ErrTau},
		{"tau 1", func(p *Problem) { p.Tau = 1 }, ErrTau},
		{"tau NaN", func(p *Problem) { p.Tau = nan }, ErrTau},
		{"one positive weight for two coefficients", func(p *Problem) { p.W = []float64{0, 0, 3, 0, 0, 0} }, ErrTooFew},
		{"fewer rows than coefficients", func(p *Problem) {
			p.Y = p.Y[:1]
			p.X = NewDense([][]float64{{1, 0}})
		}, ErrTooFew},
		{"two identical columns", func(p *Problem) {
			rows := make([][]float64, 6)
			for i := range rows {
				rows[i] = []float64{1, float64(i), float64(i)}
			}
			p.X = NewDense(rows)
		}, ErrRankDeficient},
		{"rank deficient on positive-weight rows", func(p *Problem) {
			// Rows 0 and 1 alone would pin the slope, but they carry no weight;
			// the rest all have x = 2.
			p.X = NewDense([][]float64{{1, 0}, {1, 1}, {1, 2}, {1, 2}, {1, 2}, {1, 2}})
			p.W = []float64{0, 0, 1, 1, 1, 1}
		}, ErrRankDeficient},
		{"infeasible constraints", func(p *Problem) {
			p.G = [][]float64{{1, 0}, {-1, 0}} // b1 >= 1 and -b1 >= 0
			p.H = []float64{1, 0}
		}, ErrInfeasible},
		{"NaN bound", func(p *Problem) {
			p.G = [][]float64{{1, 0}}
			p.H = []float64{nan}
		}, ErrNotFinite},
		{"NaN lambda", func(p *Problem) {
			p.Penalty = &Design{Cols: 2, Width: 2, First: []int{0}, Val: []float64{-1, 1}}
			p.Lambda = nan
		}, ErrNotFinite},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			for _, m := range []Method{Auto, Simplex, Interior} {
				p := testSmall()
				c.edit(p)
				sol, err := testSolve(p, &Settings{Method: m})
				if !errors.Is(err, c.want) {
					t.Errorf("%v: error %v, want %v", m, err, c.want)
				}
				if err != nil && sol != nil {
					t.Errorf("%v: a solution with an error", m)
				}
			}
			if c.want == ErrTau {
				return // SolveGrid ignores p.Tau
			}
			p := testSmall()
			c.edit(p)
			_, err := testSolveGrid(p, []float64{0.25, 0.5}, nil)
			if !errors.Is(err, c.want) {
				t.Errorf("SolveGrid: error %v, want %v", err, c.want)
			}
		})
	}
}

// TestGridBadTau checks that a bad tau inside a grid is refused.
func TestGridBadTau(t *testing.T) {
	for _, tau := range []float64{0, 1, -0.5, math.NaN()} {
		_, err := testSolveGrid(testSmall(), []float64{0.25, tau, 0.75}, nil)
		if !errors.Is(err, ErrTau) {
			t.Errorf("tau %v in grid: error %v, want ErrTau", tau, err)
		}
	}
}

// TestIterationLimit checks that a tiny MaxIter either reports ErrNoConverge
// or returns a verified optimum; it never returns an unverified vertex.
func TestIterationLimit(t *testing.T) {
	y, x := testEngel(t)
	for _, m := range []Method{Simplex, Interior} {
		p := &Problem{Y: y, X: x, Tau: 0.3}
		sol, err := testSolve(p, &Settings{Method: m, MaxIter: 1})
		if err != nil {
			if !errors.Is(err, ErrNoConverge) {
				t.Errorf("%v, MaxIter 1: error %v, want ErrNoConverge", m, err)
			}
			continue
		}
		checkCertificate(t, p, sol, dataCertTol)
	}
}

// TestErrorMessages checks the package prefix that STYLE.md requires.
func TestErrorMessages(t *testing.T) {
	for _, e := range []error{ErrNotFinite, ErrNegWeight, ErrTau, ErrTooFew, ErrRankDeficient, ErrInfeasible, ErrNoConverge, ErrUnverified} {
		if s := e.Error(); len(s) < 8 || s[:8] != "solver: " {
			t.Errorf("error %q lacks the \"solver: \" prefix", s)
		}
	}
}

// TestStatusTies checks Status on medians solved by hand: the median of
// {1, 2, 4} is 2 and unique; every b in [2, 3] is a median of {1, 2, 3, 4},
// so the optimum found is tied (Koenker & Bassett 1978; exact arithmetic).
func TestStatusTies(t *testing.T) {
	x := NewDense([][]float64{{1}, {1}, {1}})
	sol, err := Solve(&Problem{Y: []float64{1, 2, 4}, X: x, Tau: 0.5}, &Settings{Method: Simplex})
	if err != nil || sol.Status != Optimal || sol.Coef[0] != 2 {
		t.Errorf("{1, 2, 4}: %+v, %v", sol, err)
	}
	x4 := NewDense([][]float64{{1}, {1}, {1}, {1}})
	sol, err = Solve(&Problem{Y: []float64{1, 2, 3, 4}, X: x4, Tau: 0.5}, &Settings{Method: Simplex})
	if err != nil || sol.Status != OptimalTied || sol.Coef[0] < 2 || sol.Coef[0] > 3 {
		t.Errorf("{1, 2, 3, 4}: %+v, %v", sol, err)
	}
}
