package solver

import (
	"math"
	"math/rand/v2"
	"runtime"
	"sort"
	"testing"
	"time"

	"gonum.org/v1/gonum/mat"
)

// Benchmarks on growth-like data. Speed is judged by the ratio to an ordinary
// least-squares fit of the same design timed in the same run ("x-lsq"), never
// by absolute times.

// Sinks keep the compiler from discarding benchmark results.
var (
	benchSolution *Solution
	benchGrid     []*Solution
	benchLSQ      []float64
)

// benchCoefs is the number of cubic B-spline coefficients of the benchmark
// design (a typical growth-reference basis).
const (
	benchCoefs  = 12
	benchDegree = 3
)

// testGrowthData returns n seeded rows sorted by age: ages 0-60 months,
// denser in infancy (age = 60 u^2), weight in kg around the smooth median
// 3.3 + 9(1 - exp(-age/14)) + 0.12 age with right-skewed multiplicative
// (log-normal, sd 0.12 on the log scale) noise. Invented data, for speed only.
func testGrowthData(n int, seed uint64) (age, kg []float64) {
	rng := rand.New(rand.NewPCG(seed, 60))
	age = make([]float64, n)
	for i := range age {
		u := rng.Float64()
		age[i] = 60 * u * u
	}
	sort.Float64s(age)
	kg = make([]float64, n)
	for i, a := range age {
		median := 3.3 + 9*(1-math.Exp(-a/14)) + 0.12*a
		kg[i] = median * math.Exp(0.12*rng.NormFloat64())
	}
	return age, kg
}

// testKnots returns the clamped knot vector of benchCoefs cubic B-splines on
// [0, 60] with interior knots equally spaced in sqrt(age), so that they crowd
// where the curve bends.
func testKnots() []float64 {
	inner := benchCoefs - benchDegree - 1
	var k []float64
	for range benchDegree + 1 {
		k = append(k, 0)
	}
	for j := 1; j <= inner; j++ {
		s := float64(j) / float64(inner+1)
		k = append(k, 60*s*s)
	}
	for range benchDegree + 1 {
		k = append(k, 60)
	}
	return k
}

// testBSplineRow writes the degree+1 non-zero B-spline values at x into dst
// and returns the index of the first, by the Cox-de Boor recursion in the
// triangular form of de Boor (1972), J. Approx. Theory 6, 50-62. x is clamped
// to the knot range; x at the right end belongs to the last span.
func testBSplineRow(dst, knots []float64, deg int, x float64) int {
	nb := len(knots) - deg - 1
	x = math.Max(knots[deg], math.Min(x, knots[nb]))
	// span s: knots[s] <= x < knots[s+1], deg <= s < nb.
	s := sort.Search(nb-deg, func(j int) bool { return knots[deg+j+1] > x }) + deg
	if s >= nb {
		s = nb - 1
	}
	var left, right [8]float64
	dst[0] = 1
	for j := 1; j <= deg; j++ {
		left[j] = x - knots[s+1-j]
		right[j] = knots[s+j] - x
		saved := 0.0
		for r := 0; r < j; r++ {
			tmp := dst[r] / (right[r+1] + left[j-r])
			dst[r] = saved + right[r+1]*tmp
			saved = left[j-r] * tmp
		}
		dst[j] = saved
	}
	return s - deg
}

// testGrowthProblem is the median regression of testGrowthData on the cubic
// B-spline basis.
func testGrowthProblem(n int) *Problem {
	age, kg := testGrowthData(n, uint64(n))
	knots := testKnots()
	w := benchDegree + 1
	x := &Design{Cols: benchCoefs, Width: w, First: make([]int, n), Val: make([]float64, n*w)}
	for i, a := range age {
		x.First[i] = testBSplineRow(x.Val[i*w:(i+1)*w], knots, benchDegree, a)
	}
	return &Problem{Y: kg, X: x, Tau: 0.5}
}

// testLSQ is the yardstick: the least-squares fit of the same design,
// accumulating the banded normal equations X'X b = X'y and solving them by
// Cholesky (gonum mat).
func testLSQ(x *Design, y []float64) []float64 {
	q := x.Cols
	xtx := mat.NewSymDense(q, nil)
	xty := make([]float64, q)
	for i := range y {
		f, v := x.Row(i)
		for a, va := range v {
			xty[f+a] += va * y[i]
			for c := a; c < len(v); c++ {
				xtx.SetSym(f+a, f+c, xtx.At(f+a, f+c)+va*v[c])
			}
		}
	}
	var chol mat.Cholesky
	if !chol.Factorize(xtx) {
		panic("solver: benchmark design is singular")
	}
	var b mat.VecDense
	if err := chol.SolveVecTo(&b, mat.NewVecDense(q, xty)); err != nil {
		panic(err)
	}
	return b.RawVector().Data
}

// benchRun times solve and the least-squares yardstick in the same loop and
// reports their ratio and the solver's allocated bytes per row.
// lsqRepeats: timings of the least-squares yardstick before and after each
// solver run; the fastest counts. The yardstick is short, so a single timing
// of it catches whatever else the machine is doing; timings on both sides
// of the long solver run keep a slow spell from favouring either.
const lsqRepeats = 3

func benchRun(b *testing.B, n int, solve func(p *Problem) error) {
	if testing.Short() {
		n /= 10
	}
	p := testGrowthProblem(n)
	var solveTime, lsqTime time.Duration
	var allocated uint64
	var ms runtime.MemStats
	iters := 0
	lsq := func(best time.Duration) time.Duration {
		for range lsqRepeats {
			t1 := time.Now()
			benchLSQ = testLSQ(p.X, p.Y)
			best = min(best, time.Since(t1))
		}
		return best
	}
	for b.Loop() {
		best := lsq(time.Duration(math.MaxInt64))
		runtime.ReadMemStats(&ms)
		before := ms.TotalAlloc
		t0 := time.Now()
		if err := solve(p); err != nil {
			b.Fatal(err)
		}
		solveTime += time.Since(t0)
		runtime.ReadMemStats(&ms)
		allocated += ms.TotalAlloc - before
		lsqTime += lsq(best)
		iters++
	}
	b.ReportMetric(float64(solveTime)/float64(lsqTime), "x-lsq")
	b.ReportMetric(float64(lsqTime)/1e6/float64(iters), "lsq-ms")
	b.ReportMetric(float64(allocated)/float64(iters*n), "B/row")
}

func benchFit(b *testing.B, n int) {
	benchRun(b, n, func(p *Problem) (err error) {
		benchSolution, err = Solve(p, nil)
		return err
	})
}

// benchTaus is 0.01, 0.02, ..., 0.99.
func benchTaus() []float64 {
	taus := make([]float64, 99)
	for k := range taus {
		taus[k] = float64(k+1) / 100
	}
	return taus
}

// benchGridRun reports the ratio of a 99-tau grid, ordered as curve fits
// it (the product path: non-crossing constraints outward from the median),
// to one least-squares fit.
func benchGridRun(b *testing.B, n int) {
	taus := benchTaus()
	benchRun(b, n, func(p *Problem) (err error) {
		benchGrid, err = SolveGrid(p, taus, &Settings{Ordered: true})
		return err
	})
}

func BenchmarkFit1e4(b *testing.B)     { benchFit(b, 1e4) }
func BenchmarkFit1e5(b *testing.B)     { benchFit(b, 1e5) }
func BenchmarkFit1e6(b *testing.B)     { benchFit(b, 1e6) }
func BenchmarkGrid99x1e5(b *testing.B) { benchGridRun(b, 1e5) }
func BenchmarkGrid99x1e6(b *testing.B) { benchGridRun(b, 1e6) }

// TestBenchDesign checks the benchmark's basis helper against exact
// identities: B-splines are non-negative and sum to one on the knot range
// (partition of unity), and the median fit of the growth data carries a
// certificate.
func TestBenchDesign(t *testing.T) {
	p := testGrowthProblem(2000)
	for i := range p.Y {
		_, v := p.X.Row(i)
		sum := 0.0
		for _, x := range v {
			if x < 0 {
				t.Fatalf("row %d: negative B-spline value %g", i, x)
			}
			sum += x
		}
		if math.Abs(sum-1) > 1e-14 { // exact identity, rounding only
			t.Fatalf("row %d: B-splines sum to %.17g", i, sum)
		}
	}
	// A cubic spline reproduces cubics exactly: the least-squares fit of
	// y = (age/60)^3 has zero residual (exact identity).
	age, _ := testGrowthData(2000, 2000)
	cube := make([]float64, len(age))
	for i, a := range age {
		cube[i] = math.Pow(a/60, 3)
	}
	b := testLSQ(p.X, cube)
	for i, a := range age {
		if r := cube[i] - p.X.Dot(i, b); math.Abs(r) > 1e-9 {
			t.Fatalf("age %g: cubic not reproduced, residual %g", a, r)
		}
	}
	sol, err := testSolve(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	checkCertificate(t, p, sol, dataCertTol)
}
