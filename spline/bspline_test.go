package spline

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"sync"
	"testing"

	"gonum.org/v1/gonum/interp"
	"gonum.org/v1/gonum/mat"
)

const (
	// unityTol bounds |sum_j B_j(x) - 1|: the triangular recursion adds at
	// most a few ulps per level (common practice: a small multiple of
	// machine epsilon times the degree).
	unityTol = 1e-13
	// fdStep is the central-difference step; about eps^(1/3) balances
	// truncation and rounding error (common practice).
	fdStep = 1e-5
	// fdTol is the relative tolerance of a central difference with step
	// fdStep: truncation h^2/6*f''' plus rounding eps/h, both below 1e-9 for
	// the knot spacings used here (common practice, with margin).
	fdTol = 1e-7
	// identityTol is the relative tolerance for exact identities that only
	// suffer rounding (common practice: about 1e4 * eps).
	identityTol = 1e-12
	// solveTol is the relative tolerance for identities that go through a
	// linear solve with gonum, whose error grows with the condition number
	// (common practice).
	solveTol = 1e-9
	// maxDegree is the largest degree tested; the brief asks for 0..5.
	maxDegree = 5
)

// near reports |a-b| <= tol*max(1, |a|, |b|).
func near(a, b, tol float64) bool {
	return math.Abs(a-b) <= tol*math.Max(1, math.Max(math.Abs(a), math.Abs(b)))
}

// randomKnots returns a clamped knot vector of the given degree on [0, L]
// with nInt interior knots whose gaps are uniform in [0.5, 1.5) and which
// are, with probability 1/4 each, repeated up to degree+1 times when
// repeats is set. Seeded random data for property tests.
func randomKnots(rng *rand.Rand, degree, nInt int, repeats bool) []float64 {
	var t []float64
	for range degree + 1 {
		t = append(t, 0)
	}
	x := 0.0
	for range nInt {
		x += 0.5 + rng.Float64()
		m := 1
		if repeats && rng.IntN(4) == 0 {
			m = 1 + rng.IntN(degree+1)
		}
		for range m {
			t = append(t, x)
		}
	}
	x += 0.5 + rng.Float64()
	for range degree + 1 {
		t = append(t, x)
	}
	return t
}

// grid returns n+1 equally spaced points on [lo, hi] plus every knot.
func grid(b *Basis, n int) []float64 {
	lo, hi := b.Range()
	var xs []float64
	for i := 0; i <= n; i++ {
		xs = append(xs, min(lo+(hi-lo)*float64(i)/float64(n), hi)) // rounding may pass hi
	}
	return append(xs, b.Knots()...)
}

func mustNew(tb testing.TB, t []float64, degree int) *Basis {
	tb.Helper()
	b, err := New(t, degree)
	if err != nil {
		tb.Fatalf("New(%v, %d): %v", t, degree, err)
	}
	return b
}

func TestPartitionOfUnity(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2)) // seeded for reproducibility
	for k := 0; k <= maxDegree; k++ {
		for trial := range 5 {
			b := mustNew(t, randomKnots(rng, k, trial*3, trial%2 == 1), k)
			dst := make([]float64, k+1)
			for _, x := range grid(b, 400) {
				first, err := b.Eval(dst, x)
				if err != nil {
					t.Fatalf("degree %d: Eval(%g): %v", k, x, err)
				}
				if first < 0 || first+k >= b.Len() {
					t.Fatalf("degree %d: Eval(%g) first = %d outside [0, %d]", k, x, first, b.Len()-k-1)
				}
				sum := 0.0
				for r, v := range dst {
					if v < 0 {
						t.Errorf("degree %d: B_%d(%g) = %g < 0", k, first+r, x, v)
					}
					sum += v
				}
				if math.Abs(sum-1) > unityTol { // exact identity
					t.Errorf("degree %d: sum of basis at %g = %.17g, want 1", k, x, sum)
				}
			}
		}
	}
}

// TestCardinalValues checks the uniform B-splines against their exact
// values: the cubic at a knot is 1/6, 4/6, 1/6 with derivatives -1/2, 0, 1/2
// and second derivatives 1, -2, 1; the quadratic at a span midpoint is 1/8,
// 6/8, 1/8 (de Boor 1978, exact piecewise polynomials of the cardinal
// B-spline).
func TestCardinalValues(t *testing.T) {
	knots, err := Clamped(0, 10, UniformKnots(0, 10, 9), 3) // unit spacing
	if err != nil {
		t.Fatal(err)
	}
	cubic := mustNew(t, knots, 3)
	knots, err = Clamped(0, 10, UniformKnots(0, 10, 9), 2)
	if err != nil {
		t.Fatal(err)
	}
	quad := mustNew(t, knots, 2)
	tests := []struct {
		name  string
		b     *Basis
		x     float64
		order int
		first int
		want  []float64 // exact identity, see the doc comment
	}{
		// At x = 5 (span [5,6), i = 8) the non-zero cubics start at 5 and
		// B_8 is zero there, so the first three entries are the cardinal
		// values.
		{"cubic", cubic, 5, 0, 5, []float64{1.0 / 6, 4.0 / 6, 1.0 / 6, 0}},
		{"cubic'", cubic, 5, 1, 5, []float64{-0.5, 0, 0.5, 0}},
		{"cubic''", cubic, 5, 2, 5, []float64{1, -2, 1, 0}},
		{"cubic'''", cubic, 5.5, 3, 5, []float64{-1, 3, -3, 1}},
		{"quadratic", quad, 5.5, 0, 5, []float64{1.0 / 8, 6.0 / 8, 1.0 / 8}},
		{"quadratic'", quad, 5.5, 1, 5, []float64{-0.5, 0, 0.5}},
		{"quadratic''", quad, 5.5, 2, 5, []float64{1, -2, 1}},
	}
	for _, tc := range tests {
		dst := make([]float64, tc.b.Degree()+1)
		first, err := tc.b.Deriv(dst, tc.x, tc.order)
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		if first != tc.first {
			t.Errorf("%s: first = %d, want %d", tc.name, first, tc.first)
		}
		for r := range dst {
			if !near(dst[r], tc.want[r], identityTol) {
				t.Errorf("%s: value %d = %.17g, want %.17g", tc.name, r, dst[r], tc.want[r])
			}
		}
	}
}

// TestDerivFiniteDifference compares every derivative order 1..degree with
// a central difference of the order below, at points well inside spans so
// that x ± fdStep stay in the same polynomial piece.
func TestDerivFiniteDifference(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4)) // seeded for reproducibility
	for k := 0; k <= maxDegree; k++ {
		b := mustNew(t, randomKnots(rng, k, 6, true), k)
		tk := b.Knots()
		lo, hi := b.Range()
		d, dp, dm := make([]float64, k+1), make([]float64, k+1), make([]float64, k+1)
		for i := k; i < b.Len(); i++ {
			a, c := tk[i], tk[i+1]
			if c == a {
				continue
			}
			for _, f := range []float64{0.05, 0.3, 0.5, 0.77, 0.95} { // points inside the span, arbitrary
				x := a + f*(c-a)
				for order := 1; order <= k+1; order++ {
					first, err := b.Deriv(d, x, order)
					if err != nil {
						t.Fatal(err)
					}
					fp, _ := b.Deriv(dp, x+fdStep, order-1)
					fm, _ := b.Deriv(dm, x-fdStep, order-1)
					if fp != first || fm != first {
						t.Fatalf("degree %d: x±h left the span at %g", k, x)
					}
					scale := 0.0
					for r := range d {
						scale = math.Max(scale, math.Abs(dp[r]))
					}
					for r := range d {
						fd := (dp[r] - dm[r]) / (2 * fdStep)
						if math.Abs(fd-d[r]) > fdTol*math.Max(1, scale) {
							t.Errorf("degree %d order %d x=%g: D B_%d = %.12g, central difference %.12g",
								k, order, x, first+r, d[r], fd)
						}
					}
				}
			}
		}
		// Slope against a central difference of Value, for random coefficients.
		coef := make([]float64, b.Len())
		for j := range coef {
			coef[j] = rng.NormFloat64()
		}
		for _, x := range []float64{lo + 0.1, (lo + hi) / 2, hi - 0.1} { // away from ends, arbitrary
			if nearKnot(tk, x) <= 2*fdStep {
				continue // a difference across a knot sees another piece
			}
			s, err := b.Slope(coef, x)
			if err != nil {
				t.Fatal(err)
			}
			vp, _ := b.Value(coef, x+fdStep)
			vm, _ := b.Value(coef, x-fdStep)
			if fd := (vp - vm) / (2 * fdStep); !near(s, fd, fdTol) {
				t.Errorf("degree %d: Slope(%g) = %.12g, central difference %.12g", k, x, s, fd)
			}
		}
	}
}

func nearKnot(t []float64, x float64) float64 {
	d := math.Inf(1)
	for _, v := range t {
		d = math.Min(d, math.Abs(v-x))
	}
	return d
}

// TestDerivProperties: the derivatives of a partition of unity sum to zero
// and orders above the degree are zero (exact identities).
func TestDerivProperties(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6)) // seeded for reproducibility
	for k := 0; k <= maxDegree; k++ {
		b := mustNew(t, randomKnots(rng, k, 5, true), k)
		dst := make([]float64, k+1)
		for _, x := range grid(b, 97) {
			for order := 1; order <= k+2; order++ {
				if _, err := b.Deriv(dst, x, order); err != nil {
					t.Fatal(err)
				}
				sum, scale := 0.0, 1.0
				for _, v := range dst {
					sum += v
					scale = math.Max(scale, math.Abs(v))
					if order > k && v != 0 {
						t.Errorf("degree %d order %d at %g: got %g, want 0", k, order, x, v)
					}
				}
				if math.Abs(sum) > identityTol*scale {
					t.Errorf("degree %d order %d at %g: derivatives sum to %g", k, order, x, sum)
				}
			}
			// Order 0 is Eval.
			e := make([]float64, k+1)
			f1, _ := b.Eval(e, x)
			f2, _ := b.Deriv(dst, x, 0)
			if f1 != f2 || !slices.Equal(e, dst) {
				t.Errorf("degree %d at %g: Deriv order 0 differs from Eval", k, x)
			}
		}
	}
}

// TestMarsden checks Marsden's identity (de Boor 1978, ch. IX):
//
//	(y - x)^k = sum_j psi_j(y) B_{j,k}(x),  psi_j(y) = prod_{r=1}^{k} (y - t_{j+r}),
//
// so the basis reproduces polynomials of degree k exactly, and its
// x-derivative -k (y - x)^(k-1) through Slope.
func TestMarsden(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8)) // seeded for reproducibility
	for k := 0; k <= maxDegree; k++ {
		b := mustNew(t, randomKnots(rng, k, 4, true), k)
		tk := b.Knots()
		lo, hi := b.Range()
		for _, y := range []float64{lo - 1, (lo + hi) / 3, hi + 0.5} { // arbitrary
			coef := make([]float64, b.Len())
			for j := range coef {
				coef[j] = 1
				for r := 1; r <= k; r++ {
					coef[j] *= y - tk[j+r]
				}
			}
			for _, x := range grid(b, 53) {
				v, err := b.Value(coef, x)
				if err != nil {
					t.Fatal(err)
				}
				if want := math.Pow(y-x, float64(k)); !near(v, want, identityTol) {
					t.Errorf("degree %d y=%g x=%g: spline %.17g, (y-x)^k %.17g", k, y, x, v, want)
				}
				s, err := b.Slope(coef, x)
				if err != nil {
					t.Fatal(err)
				}
				want := 0.0
				if k > 0 {
					want = -float64(k) * math.Pow(y-x, float64(k-1))
				}
				if !near(s, want, identityTol) {
					t.Errorf("degree %d y=%g x=%g: slope %.17g, want %.17g", k, y, x, s, want)
				}
			}
		}
	}
}

// TestCollocation interpolates a polynomial of degree k at the Greville
// abscissae (which satisfy the Schoenberg–Whitney condition for simple
// interior knots, de Boor 1978), solving the collocation system with gonum
// mat, and checks the interpolant equals the polynomial at other points:
// the polynomial lies in the spline space, so interpolation is exact.
func TestCollocation(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10)) // seeded for reproducibility
	// poly is 1 - x/2 + x^2/3 - ... up to x^k, an arbitrary polynomial of
	// degree k with no zero coefficient.
	poly := func(x float64, k int) float64 {
		s, p := 0.0, 1.0
		for m := 0; m <= k; m++ {
			s += p / float64(m+1) * math.Pow(-1, float64(m))
			p *= x
		}
		return s
	}
	for k := 0; k <= maxDegree; k++ {
		b := mustNew(t, randomKnots(rng, k, 5, false), k)
		tk := b.Knots()
		n := b.Len()
		a := mat.NewDense(n, n, nil)
		rhs := mat.NewVecDense(n, nil)
		dst := make([]float64, k+1)
		for j := range n {
			// Greville abscissa mean(t_{j+1..j+k}); for k = 0 the start of
			// the support of B_j.
			g := tk[j]
			if k > 0 {
				g = 0
				for r := 1; r <= k; r++ {
					g += tk[j+r]
				}
				g = min(g/float64(k), tk[len(tk)-1]) // the mean of k copies of hi may round above it
			}
			first, err := b.Eval(dst, g)
			if err != nil {
				t.Fatal(err)
			}
			for r, v := range dst {
				a.Set(j, first+r, v)
			}
			rhs.SetVec(j, poly(g, k))
		}
		var c mat.VecDense
		if err := c.SolveVec(a, rhs); err != nil {
			t.Fatalf("degree %d: collocation solve: %v", k, err)
		}
		coef := c.RawVector().Data
		for _, x := range grid(b, 61) {
			v, _ := b.Value(coef, x)
			if want := poly(x, k); !near(v, want, solveTol) {
				t.Errorf("degree %d x=%g: interpolant %.15g, polynomial %.15g", k, x, v, want)
			}
		}
	}
}

// TestNaturalCubicInSpace: gonum's natural cubic spline (gonum v0.17.0
// interp.NaturalCubic) through points x_0 < ... < x_m is a C2 piecewise cubic
// with breaks at the interior x_i, so it lies in the span of the cubic
// B-splines with those interior knots. A least-squares fit in our basis
// (gonum mat, QR) must reproduce it and its derivative everywhere.
func TestNaturalCubicInSpace(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12)) // seeded for reproducibility
	xs := []float64{0}
	for range 7 {
		xs = append(xs, xs[len(xs)-1]+0.5+rng.Float64())
	}
	ys := make([]float64, len(xs))
	for i := range ys {
		ys[i] = rng.NormFloat64()
	}
	var nc interp.NaturalCubic
	if err := nc.Fit(xs, ys); err != nil {
		t.Fatal(err)
	}
	knots, err := Clamped(xs[0], xs[len(xs)-1], xs[1:len(xs)-1], 3)
	if err != nil {
		t.Fatal(err)
	}
	b := mustNew(t, knots, 3)
	pts := grid(b, 200)
	a := mat.NewDense(len(pts), b.Len(), nil)
	rhs := mat.NewVecDense(len(pts), nil)
	dst := make([]float64, 4)
	for i, x := range pts {
		first, _ := b.Eval(dst, x)
		for r, v := range dst {
			a.Set(i, first+r, v)
		}
		rhs.SetVec(i, nc.Predict(x))
	}
	var c mat.VecDense
	if err := c.SolveVec(a, rhs); err != nil {
		t.Fatal(err)
	}
	coef := c.RawVector().Data
	lo, hi := b.Range()
	for i := 0; i <= 300; i++ {
		x := lo + (hi-lo)*(float64(i)+0.37)/301 // off-grid points, arbitrary offset
		v, _ := b.Value(coef, x)
		s, _ := b.Slope(coef, x)
		if want := nc.Predict(x); !near(v, want, solveTol) {
			t.Errorf("x=%g: B-spline fit %.15g, gonum natural cubic %.15g", x, v, want)
		}
		if want := nc.PredictDerivative(x); !near(s, want, solveTol) {
			t.Errorf("x=%g: B-spline slope %.15g, gonum derivative %.15g", x, s, want)
		}
	}
}

// TestEnds: on a clamped vector the first basis function is 1 at lo and the
// last is 1 at hi (exact identity), and hi is in range.
func TestEnds(t *testing.T) {
	for k := 0; k <= maxDegree; k++ {
		knots, _ := Clamped(2, 7, []float64{3, 4, 4.5}, k) // arbitrary knots
		b := mustNew(t, knots, k)
		dst := make([]float64, k+1)
		first, err := b.Eval(dst, 2)
		if err != nil || first != 0 || dst[0] != 1 {
			t.Errorf("degree %d at lo: first %d, values %v, err %v", k, first, dst, err)
		}
		first, err = b.Eval(dst, 7)
		if err != nil || first != b.Len()-k-1 || dst[k] != 1 {
			t.Errorf("degree %d at hi: first %d, values %v, err %v", k, first, dst, err)
		}
		if lo, hi := b.Range(); lo != 2 || hi != 7 {
			t.Errorf("Range = %g, %g", lo, hi)
		}
		if b.Len() != 3+k+1 || b.Degree() != k { // interior + degree + 1
			t.Errorf("Len %d Degree %d", b.Len(), b.Degree())
		}
	}
}

func TestOutOfRange(t *testing.T) {
	knots, _ := Clamped(0, 1, []float64{0.5}, 2)
	b := mustNew(t, knots, 2)
	dst := make([]float64, 3)
	coef := make([]float64, b.Len())
	for _, x := range []float64{-1e-12, 1 + 1e-12, -5, 3, math.NaN(), math.Inf(1), math.Inf(-1)} {
		if _, err := b.Eval(dst, x); !errors.Is(err, ErrOutOfRange) {
			t.Errorf("Eval(%g): err = %v, want ErrOutOfRange", x, err)
		} else if !strings.Contains(err.Error(), "x = ") {
			t.Errorf("Eval(%g): error %q does not name the value", x, err)
		}
		if _, err := b.Deriv(dst, x, 1); !errors.Is(err, ErrOutOfRange) {
			t.Errorf("Deriv(%g): err = %v", x, err)
		}
		if _, err := b.Value(coef, x); !errors.Is(err, ErrOutOfRange) {
			t.Errorf("Value(%g): err = %v", x, err)
		}
		if _, err := b.Slope(coef, x); !errors.Is(err, ErrOutOfRange) {
			t.Errorf("Slope(%g): err = %v", x, err)
		}
	}
}

func TestNewBadKnots(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	tests := []struct {
		name   string
		t      []float64
		degree int
		want   error
	}{
		{"negative degree", []float64{0, 1}, -1, ErrDegree},
		{"empty", nil, 0, ErrKnots},
		{"too short", []float64{0, 0, 1}, 1, ErrKnots},
		{"decreasing", []float64{0, 0, 0.7, 0.3, 1, 1}, 1, ErrKnots},
		{"NaN", []float64{0, 0, nan, 1, 1}, 1, ErrKnots},
		{"Inf", []float64{0, 0, 1, inf, inf}, 1, ErrKnots},
		{"all equal", []float64{1, 1, 1, 1}, 1, ErrKnots},
		{"start not clamped", []float64{0, 0.1, 0.5, 1, 1}, 1, ErrKnots},
		{"end not clamped", []float64{0, 0, 0.5, 0.9, 1}, 1, ErrKnots},
		{"start repeated too often", []float64{0, 0, 0, 0.5, 1, 1}, 1, ErrKnots},
		{"end repeated too often", []float64{0, 0, 0.5, 1, 1, 1}, 1, ErrKnots},
		{"interior repeated too often", []float64{0, 0, 0.5, 0.5, 0.5, 1, 1}, 1, ErrKnots},
	}
	for _, tc := range tests {
		if _, err := New(tc.t, tc.degree); !errors.Is(err, tc.want) {
			t.Errorf("%s: err = %v, want %v", tc.name, err, tc.want)
		}
	}
	// Boundary cases that are valid: one span, interior multiplicity degree+1.
	for _, ok := range []struct {
		t      []float64
		degree int
	}{
		{[]float64{0, 1}, 0},
		{[]float64{0, 0, 0, 1, 1, 1}, 2},
		{[]float64{0, 0, 0.5, 0.5, 1, 1}, 1},
	} {
		if _, err := New(ok.t, ok.degree); err != nil {
			t.Errorf("New(%v, %d): %v", ok.t, ok.degree, err)
		}
	}
}

func TestKnotsCopy(t *testing.T) {
	in := []float64{0, 0, 0.5, 1, 1}
	b := mustNew(t, in, 1)
	in[2] = 0.9
	got := b.Knots()
	got[3] = 7
	if k := b.Knots(); k[2] != 0.5 || k[3] != 1 {
		t.Errorf("Basis shares knot storage: %v", k)
	}
}

func TestPanics(t *testing.T) {
	b := mustNew(t, []float64{0, 0, 0, 1, 1, 1}, 2)
	cases := map[string]func(){
		"Eval short dst":  func() { b.Eval(make([]float64, 2), 0.5) },
		"Eval long dst":   func() { b.Eval(make([]float64, 4), 0.5) },
		"Deriv dst":       func() { b.Deriv(make([]float64, 1), 0.5, 1) },
		"Deriv order":     func() { b.Deriv(make([]float64, 3), 0.5, -1) },
		"Value coef":      func() { b.Value(make([]float64, 2), 0.5) },
		"Slope coef":      func() { b.Slope(make([]float64, 4), 0.5) },
		"DiffCoef order":  func() { DiffCoef(-1) },
		"Difference p":    func() { Difference(2, 2) },
		"Difference neg.": func() { Difference(3, -1) },
	}
	for name, f := range cases {
		func() {
			defer func() {
				r := recover()
				if s, ok := r.(string); !ok || !strings.HasPrefix(s, "spline: ") {
					t.Errorf("%s: recovered %v, want a \"spline: \" panic", name, r)
				}
			}()
			f()
		}()
	}
}

func TestNoAlloc(t *testing.T) {
	knots, _ := Clamped(0, 1, UniformKnots(0, 1, 20), 3)
	b := mustNew(t, knots, 3)
	dst := make([]float64, 4)
	coef := make([]float64, b.Len())
	x := 0.0
	for name, f := range map[string]func(){
		"Eval":  func() { b.Eval(dst, x) },
		"Deriv": func() { b.Deriv(dst, x, 2) },
		"Value": func() { b.Value(coef, x) },
		"Slope": func() { b.Slope(coef, x) },
	} {
		if n := testing.AllocsPerRun(100, func() { x = math.Mod(x+0.137, 1); f() }); n != 0 {
			t.Errorf("%s allocates %v times per call", name, n)
		}
	}
}

// TestConcurrentEval runs Eval from several goroutines on one Basis and
// compares with serial results; run with -race to check for shared state.
func TestConcurrentEval(t *testing.T) {
	knots, _ := Clamped(0, 1, UniformKnots(0, 1, 10), 3)
	b := mustNew(t, knots, 3)
	xs := grid(b, 200)
	want := make([][4]float64, len(xs))
	for i, x := range xs {
		b.Eval(want[i][:], x)
	}
	var wg sync.WaitGroup
	for g := range 8 {
		wg.Go(func() {
			dst := make([]float64, 4)
			for i := range xs {
				i := (i + g*17) % len(xs)
				b.Eval(dst, xs[i])
				if [4]float64(dst) != want[i] {
					t.Errorf("goroutine %d: Eval(%g) = %v, want %v", g, xs[i], dst, want[i])
				}
			}
		})
	}
	wg.Wait()
}

// TestHighDegree uses a degree beyond the fixed scratch of Value: equal
// coefficients give the constant (partition of unity, exact identity).
func TestHighDegree(t *testing.T) {
	const k = stackCoef + 2
	knots, _ := Clamped(0, 1, []float64{0.3, 0.6}, k)
	b := mustNew(t, knots, k)
	coef := slices.Repeat([]float64{2.5}, b.Len())
	for _, x := range grid(b, 20) {
		v, err := b.Value(coef, x)
		if err != nil || !near(v, 2.5, identityTol) {
			t.Errorf("Value(%g) = %.17g, %v; want 2.5", x, v, err)
		}
		// The slope sums terms of size up to about k/0.3, so cancellation
		// costs about two digits (common practice: allow 100 times more).
		if s, _ := b.Slope(coef, x); !near(s, 0, identityTol*1e2) {
			t.Errorf("Slope(%g) = %g, want 0", x, s)
		}
	}
}

var benchFirst int

func BenchmarkEval(b *testing.B) {
	for _, k := range []int{1, 3, 5} {
		knots, _ := Clamped(0, 1, UniformKnots(0, 1, 30), k)
		basis := mustNew(b, knots, k)
		dst := make([]float64, k+1)
		b.Run(fmt.Sprintf("degree%d_knots30", k), func(b *testing.B) {
			b.ReportAllocs()
			x := 0.0
			for b.Loop() {
				x += 0.618034 // golden-ratio stride visits all spans
				if x > 1 {
					x--
				}
				benchFirst, _ = basis.Eval(dst, x)
			}
		})
	}
}
