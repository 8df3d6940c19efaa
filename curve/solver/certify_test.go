package solver

import (
	"errors"
	"slices"
	"testing"
)

// TestVerifyRebuildsWrongPools plants a defect of the kind that once made
// SolveGrid return a non-optimal answer with a nil error: pooled sums that
// do not match the rows pooled (here scaled by 1.3, as a stale cost factor
// would). Every pooled sign still holds, so only the check of the full
// optimality conditions can notice; the solve must rebuild the reduction
// and return the certified optimum (the same objective as the clean solve,
// exact identity).
func TestVerifyRebuildsWrongPools(t *testing.T) {
	p := testGrowthProblem(PreprocessRows + 5000)
	p.Tau = 0.7
	tab := newTable(p)
	clean, err := solveOn(tab, p, &Settings{}, nil, &carry{})
	if err != nil {
		t.Fatal(err)
	}
	checkCertificate(t, p, clean, dataCertTol)

	cr := &carry{guess: clean.Coef}
	cr.scale = newRowScale(tab.x, tab.y, len(p.Y), clean.Coef)
	red := cr.reduction(tab, len(p.Y))
	red.classify(clean.Coef, p.Tau, warmMiddle(len(p.Y), tab.p()))
	for k := range red.up {
		red.up[k] *= 1.3 // the planted defect
	}
	red.upY *= 1.3
	cr.ready = red
	got, err := solveOn(tab, p, &Settings{}, clean, cr)
	if err != nil {
		t.Fatal(err)
	}
	checkCertificate(t, p, got, dataCertTol)
	if !testRelClose(got.Objective, clean.Objective, identObjTol) {
		t.Errorf("objective %.15g after the planted defect, clean %.15g", got.Objective, clean.Objective)
	}
	if got.Reductions == 0 {
		t.Errorf("the planted defect went unnoticed (no rebuild counted)")
	}
}

// TestCertifyTableRejects checks the full-problem check on an optimum and on
// two answers that are not: a moved coefficient (stationarity and the signs
// of the residuals fail) and a multiplier out of its range.
func TestCertifyTableRejects(t *testing.T) {
	tp := testTiedAges(0.25, nil)
	p := tp.p
	sol, err := testSolve(p, &Settings{Method: Simplex})
	if err != nil {
		t.Fatal(err)
	}
	tab := newTable(p)
	check := func(b []float64, d []float64) error {
		r := make([]float64, tab.rows())
		tab.residuals(r, b)
		return certifyTable(tab, b, r, func(i int) float64 { return d[i] }, nil, tab.objective(r))
	}
	d := sol.Duals(p)
	if err := check(sol.Coef, d); err != nil {
		t.Fatalf("optimum rejected: %v", err)
	}
	moved := slices.Clone(sol.Coef)
	moved[0] += 1 // 1 kg: far past every tie of the rounded responses
	if err := check(moved, d); !errors.Is(err, ErrUnverified) {
		t.Errorf("moved coefficient: got %v, want ErrUnverified", err)
	}
	bad := slices.Clone(d)
	bad[sol.Zero[0]] = 2 // costs are tau = 0.25 and 0.75, so 2 is outside
	if err := check(sol.Coef, bad); !errors.Is(err, ErrUnverified) {
		t.Errorf("multiplier out of range: got %v, want ErrUnverified", err)
	}
}
