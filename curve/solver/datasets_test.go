package solver

import (
	"encoding/csv"
	"math"
	"math/rand/v2"
	"os"
	"strconv"
	"testing"
)

// Tolerances of the published-data checks.
const (
	// refCoefRound is half a unit in the fifth decimal: the reference
	// coefficients below are printed rounded to 5 decimals.
	refCoefRound = 0.5e-5
	// refRelTol is the relative agreement required beyond that rounding, and
	// for the objective (printed to 5 decimals, i.e. better than 1e-6
	// relative for every objective in the tables).
	refRelTol = 1e-6
	// dataCertTol is the certificate tolerance for the real datasets, whose
	// entries reach 5000 (income, francs): a little looser than lpCertTol.
	dataCertTol = 1e-9
)

// testReadCSV reads a numeric CSV file with a header line into columns.
func testReadCSV(t testing.TB, path string) (header []string, cols [][]float64) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	header = recs[0]
	cols = make([][]float64, len(header))
	for li, rec := range recs[1:] {
		for k, s := range rec {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil {
				t.Fatalf("%s line %d: %v", path, li+2, err)
			}
			cols[k] = append(cols[k], v)
		}
	}
	return header, cols
}

// testEngel returns the Engel data: foodexp on an intercept and income.
func testEngel(t testing.TB) (y []float64, x *Design) {
	t.Helper()
	h, c := testReadCSV(t, "../../testdata/engel.csv")
	if len(h) != 2 || h[0] != "income" || h[1] != "foodexp" || len(c[0]) != 235 {
		t.Fatalf("engel.csv: unexpected header %q or %d rows", h, len(c[0]))
	}
	rows := make([][]float64, len(c[0]))
	for i, inc := range c[0] {
		rows[i] = []float64{1, inc}
	}
	return c[1], NewDense(rows)
}

// testStackLoss returns the stack loss data: loss on 1, air, water, acid.
func testStackLoss(t testing.TB) (y []float64, x *Design) {
	t.Helper()
	h, c := testReadCSV(t, "../../testdata/stackloss.csv")
	if len(h) != 4 || len(c[0]) != 21 {
		t.Fatalf("stackloss.csv: unexpected header %q or %d rows", h, len(c[0]))
	}
	rows := make([][]float64, 21)
	for i := range rows {
		rows[i] = []float64{1, c[1][i], c[2][i], c[3][i]}
	}
	return c[0], NewDense(rows)
}

type refFit struct {
	tau  float64
	coef []float64
	obj  float64
}

// engelRef: exact LP optima by HiGHS in SciPy 1.10.1, agreeing with the
// tables of Koenker & Bassett (1982), Econometrica 50, 43-61, and Koenker &
// Hallock (2001), J. Economic Perspectives 15(4), 143-156, to their printed
// digits (/work/shared/data/README.md).
var engelRef = []refFit{
	{0.05, []float64{124.88004, 0.34336}, 2174.31732},
	{0.10, []float64{110.14157, 0.40177}, 3869.93216},
	{0.25, []float64{95.48354, 0.47410}, 7082.31590},
	{0.50, []float64{81.48225, 0.56018}, 8779.96632},
	{0.75, []float64{62.39659, 0.64401}, 6529.25028},
	{0.90, []float64{67.35087, 0.68630}, 3391.98371},
	{0.95, []float64{64.10396, 0.70907}, 1900.24422},
}

// stackLossRef: exact LP optima by HiGHS in SciPy 1.10.1; the tau = 0.5 row
// is the least-absolute-deviations fit published by Barrodale & Roberts
// (1973), SIAM J. Numer. Anal. 10, 839-848 (/work/shared/data/README.md).
var stackLossRef = []refFit{
	{0.25, []float64{-36.00000, 0.50000, 1.00000, 0.00000}, 16.62500},
	{0.50, []float64{-39.68986, 0.83188, 0.57391, -0.06087}, 21.04058},
	{0.75, []float64{-54.18966, 0.87069, 0.98276, 0.00000}, 16.25216},
}

func testPublished(t *testing.T, name string, y []float64, x *Design, refs []refFit) {
	for _, ref := range refs {
		for _, m := range []Method{Simplex, Interior} {
			p := &Problem{Y: y, X: x, Tau: ref.tau}
			sol, err := testSolve(p, &Settings{Method: m})
			if err != nil {
				t.Errorf("%s tau=%v %v: %v", name, ref.tau, m, err)
				continue
			}
			checkCertificate(t, p, sol, dataCertTol)
			if !testRelClose(sol.Objective, ref.obj, refRelTol) {
				t.Errorf("%s tau=%v %v: objective %.6f, HiGHS %.5f", name, ref.tau, m, sol.Objective, ref.obj)
			}
			for k, want := range ref.coef {
				if got := sol.Coef[k]; math.Abs(got-want) > refCoefRound+refRelTol*math.Abs(want) {
					t.Errorf("%s tau=%v %v: b%d = %.7f, published %.5f (unique optimum: %v)",
						name, ref.tau, m, k, got, want, testUnique(p, sol))
				}
			}
		}
	}
}

func TestEngelPublished(t *testing.T) {
	y, x := testEngel(t)
	testPublished(t, "engel", y, x, engelRef)
}

func TestStackLossPublished(t *testing.T) {
	y, x := testStackLoss(t)
	testPublished(t, "stackloss", y, x, stackLossRef)
}

// TestEngelPreprocess fits a large resampled Engel sample with Interior, where
// preprocessing runs (more than PreprocessRows rows), and compares it with the
// same method with preprocessing off: both must reach the same optimum.
func TestEngelPreprocess(t *testing.T) {
	y0, x0 := testEngel(t)
	n := 50000
	if testing.Short() {
		n = PreprocessRows + 5000
	}
	rng := rand.New(rand.NewPCG(1857, 235))
	y := make([]float64, n)
	rows := make([][]float64, n)
	for i := range n {
		k := rng.IntN(len(y0))
		// Jitter of about 1e-4 francs breaks the ties that replication creates
		// without changing the data's character.
		rows[i] = []float64{1, x0.Val[2*k+1] + 1e-4*rng.NormFloat64()}
		y[i] = y0[k] + 1e-4*rng.NormFloat64()
	}
	x := NewDense(rows)
	if n <= PreprocessRows {
		t.Fatalf("n = %d does not exercise preprocessing (PreprocessRows = %d)", n, PreprocessRows)
	}
	for _, tau := range []float64{0.5, 0.9} {
		p := &Problem{Y: y, X: x, Tau: tau}
		pre, err := testSolve(p, &Settings{Method: Interior})
		if err != nil {
			t.Fatalf("tau=%v preprocessed: %v", tau, err)
		}
		full, err := testSolve(p, &Settings{Method: Interior, NoPreprocess: true})
		if err != nil {
			t.Fatalf("tau=%v full: %v", tau, err)
		}
		checkCertificate(t, p, pre, dataCertTol)
		checkCertificate(t, p, full, dataCertTol)
		// Both are exact vertices of one LP: equal objectives up to rounding
		// of a 50,000-term sum (common practice).
		if !testRelClose(pre.Objective, full.Objective, 1e-9) {
			t.Errorf("tau=%v: objective %.12g with preprocessing, %.12g without", tau, pre.Objective, full.Objective)
		}
		if testUnique(p, full) {
			for k := range full.Coef {
				if !testRelClose(pre.Coef[k], full.Coef[k], 1e-7) {
					t.Errorf("tau=%v: b%d = %.10g with preprocessing, %.10g without", tau, k, pre.Coef[k], full.Coef[k])
				}
			}
		}
		t.Logf("tau=%v: %d reductions, %d and %d iterations", tau, pre.Reductions, pre.Iterations, full.Iterations)
	}
}
