package qrinfer

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"

	"growband/curve/solver"
)

// Methods of standard errors; their values are the names written in outputs.
const (
	MethodSandwich  = "sandwich, Hall-Sheather bandwidth"
	MethodPowell    = "Powell kernel"
	MethodBootstrap = "bootstrap over subjects"
)

// Defaults for the zero fields of Settings.
const (
	DefaultLevel      = 0.95 // common practice
	DefaultReplicates = 200  // bootstrap replicates: SE within about 5% (1/sqrt(2B), Efron & Tibshirani 1993)
	// bandwidthAlpha is the alpha of the Hall–Sheather bandwidth, matching
	// 95% intervals (Koenker 2005, section 3.4).
	bandwidthAlpha = 0.05
	// sparsityEps is subtracted from the difference of fitted quantiles
	// before dividing (Hendricks & Koenker 1992): a row whose quantiles at
	// tau ± h are equal to within this gets density 0 instead of infinity.
	// About eps^(2/3) of float64 (common practice).
	sparsityEps = 3.7e-11
	// maxFailedShare is the share of bootstrap replicates allowed to fail
	// (a resample whose design is singular) before Fit gives up (common
	// practice).
	maxFailedShare = 0.1
)

// Errors of Fit; wrapped with context.
var (
	ErrSettings = errors.New("qrinfer: invalid settings")
	ErrSingular = errors.New("qrinfer: the design's density-weighted cross-product is singular")
	ErrFailed   = errors.New("qrinfer: too many bootstrap replicates failed")
)

// Problem is one linear quantile regression with dense design rows.
type Problem struct {
	Y     []float64
	X     [][]float64 // one row per response, all of the same length
	Names []string    // one per column
	// Subject is the subject (cluster) of each row, numbered from 0, for
	// MethodBootstrap; nil means every row is its own subject.
	Subject []int
}

// Settings tune Fit. The zero value, and nil, mean the documented defaults.
type Settings struct {
	Method     string  // MethodSandwich (default), MethodPowell or MethodBootstrap
	Level      float64 // interval level; 0 means DefaultLevel
	Replicates int     // bootstrap replicates; 0 means DefaultReplicates
	Seed       uint64  // bootstrap seed; every seed gives reproducible results
}

// Coef is one coefficient with its inference.
type Coef struct {
	Name     string  `json:"name"`
	Estimate float64 `json:"estimate"`
	SE       float64 `json:"se"`
	Lo       float64 `json:"lo"` // interval at Result.Level
	Hi       float64 `json:"hi"`
	P        float64 `json:"p"` // two-sided, coefficient = 0
}

// Result is the fit at one tau.
type Result struct {
	Tau        float64 `json:"tau"`
	Method     string  `json:"method"`
	Level      float64 `json:"level"`
	N          int     `json:"n"`
	Bandwidth  float64 `json:"bandwidth,omitempty"`  // h on the tau scale (sandwich), c on the residual scale (Powell)
	Replicates int     `json:"replicates,omitempty"` // bootstrap replicates used
	Objective  float64 `json:"objective"`            // sum of check losses at the estimate
	Coef       []Coef  `json:"coef"`
}

// HallSheather returns the Hall–Sheather (1988) bandwidth on the tau scale
// for n observations and intervals of level 1-alpha:
//
//	h = n^(-1/3) z^(2/3) (1.5 phi(Phi^-1(tau))^2 / (2 Phi^-1(tau)^2 + 1))^(1/3),
//
// z = Phi^-1(1 - alpha/2) (Koenker 2005, section 3.4.2).
func HallSheather(n int, tau, alpha float64) float64 {
	x := distuv.UnitNormal.Quantile(tau)
	f := distuv.UnitNormal.Prob(x)
	z := distuv.UnitNormal.Quantile(1 - alpha/2)
	return math.Pow(float64(n), -1.0/3) * math.Pow(z, 2.0/3) * math.Cbrt(1.5*f*f/(2*x*x+1))
}

// Fit estimates the coefficients at tau and their standard errors by the
// method of s. Bad data (non-finite values, fewer rows than columns, a
// singular design) returns an error; rows of different lengths, names or
// subjects that do not match the columns or rows panic.
func Fit(p *Problem, tau float64, s *Settings) (*Result, error) {
	if s == nil {
		s = &Settings{}
	}
	method := s.Method
	if method == "" {
		method = MethodSandwich
	}
	level := s.Level
	if level == 0 {
		level = DefaultLevel
	}
	if !(level > 0 && level < 1) {
		return nil, fmt.Errorf("%w: level %g", ErrSettings, level)
	}
	if !(tau > 0 && tau < 1) {
		return nil, fmt.Errorf("%w: tau %g", ErrSettings, tau)
	}
	x := design(p)
	est, err := solve(p.Y, x, tau)
	if err != nil {
		return nil, fmt.Errorf("tau %g: %w", tau, err)
	}
	n, q := len(p.Y), x.Cols
	res := &Result{Tau: tau, Method: method, Level: level, N: n, Objective: est.Objective}
	var se []float64
	switch method {
	case MethodSandwich:
		se, res.Bandwidth, err = sandwich(p, x, tau)
	case MethodPowell:
		se, res.Bandwidth, err = powell(p, x, tau, est.Coef)
	case MethodBootstrap:
		b := s.Replicates
		if b == 0 {
			b = DefaultReplicates
		}
		if b < 2 {
			return nil, fmt.Errorf("%w: %d bootstrap replicates", ErrSettings, b)
		}
		se, err = bootstrap(p, tau, b, s.Seed)
		res.Replicates = b
	default:
		return nil, fmt.Errorf("%w: method %q, want %q, %q or %q", ErrSettings, method, MethodSandwich, MethodPowell, MethodBootstrap)
	}
	if err != nil {
		return nil, fmt.Errorf("tau %g, %s: %w", tau, method, err)
	}
	zc := distuv.UnitNormal.Quantile((1 + level) / 2)
	res.Coef = make([]Coef, q)
	for j := range q {
		b, e := est.Coef[j], se[j]
		c := Coef{Estimate: b, SE: e, Lo: b - zc*e, Hi: b + zc*e, P: 2 * distuv.UnitNormal.CDF(-math.Abs(b/e))}
		if e == 0 {
			c.P = math.NaN()
		}
		if p.Names != nil {
			c.Name = p.Names[j]
		}
		res.Coef[j] = c
	}
	return res, nil
}

// design checks p's shape and returns its design.
func design(p *Problem) *solver.Design {
	if len(p.X) != len(p.Y) {
		panic(fmt.Sprintf("qrinfer: %d design rows for %d responses", len(p.X), len(p.Y)))
	}
	if len(p.X) == 0 {
		panic("qrinfer: no rows")
	}
	if p.Names != nil && len(p.Names) != len(p.X[0]) {
		panic(fmt.Sprintf("qrinfer: %d names for %d columns", len(p.Names), len(p.X[0])))
	}
	if p.Subject != nil && len(p.Subject) != len(p.Y) {
		panic(fmt.Sprintf("qrinfer: %d subjects for %d rows", len(p.Subject), len(p.Y)))
	}
	return solver.NewDense(p.X)
}

func solve(y []float64, x *solver.Design, tau float64) (*solver.Solution, error) {
	return solver.Solve(&solver.Problem{Y: y, X: x, Tau: tau}, nil)
}

// crossprod returns sum_i w_i x_i x_i' (w nil means all 1).
func crossprod(x *solver.Design, w []float64) *mat.SymDense {
	q := x.Cols
	m := mat.NewSymDense(q, nil)
	for i := range x.Rows() {
		wi := 1.0
		if w != nil {
			wi = w[i]
			if wi == 0 {
				continue
			}
		}
		_, r := x.Row(i)
		m.SymRankOne(m, wi, mat.NewVecDense(q, r))
	}
	return m
}

// sandwichSE returns the square roots of the diagonal of
// tau (1-tau) H^-1 J H^-1, factoring H once.
func sandwichSE(h, j *mat.SymDense, tau float64) ([]float64, error) {
	var lu mat.LU
	lu.Factorize(h)
	if lu.Det() == 0 || math.IsNaN(lu.Det()) {
		return nil, ErrSingular
	}
	var a, c mat.Dense
	if err := lu.SolveTo(&a, false, j); err != nil { // H^-1 J
		return nil, fmt.Errorf("%w: %w", ErrSingular, err)
	}
	if err := lu.SolveTo(&c, false, a.T()); err != nil { // H^-1 (H^-1 J)' = H^-1 J H^-1
		return nil, fmt.Errorf("%w: %w", ErrSingular, err)
	}
	q, _ := h.Dims()
	se := make([]float64, q)
	for k := range q {
		v := tau * (1 - tau) * c.At(k, k)
		if !(v >= 0) {
			return nil, ErrSingular
		}
		se[k] = math.Sqrt(v)
	}
	return se, nil
}

// bandwidth returns the Hall–Sheather bandwidth for n rows at tau, shrunk
// so that tau ± h stays inside (0, 1).
func bandwidth(n int, tau float64) float64 {
	return min(HallSheather(n, tau, bandwidthAlpha), tau/2, (1-tau)/2)
}

func sandwich(p *Problem, x *solver.Design, tau float64) ([]float64, float64, error) {
	n := len(p.Y)
	h := bandwidth(n, tau)
	hi, err := solve(p.Y, x, tau+h)
	if err != nil {
		return nil, 0, err
	}
	lo, err := solve(p.Y, x, tau-h)
	if err != nil {
		return nil, 0, err
	}
	f := make([]float64, n)
	for i := range f {
		f[i] = max(0, 2*h/(x.Dot(i, hi.Coef)-x.Dot(i, lo.Coef)-sparsityEps))
	}
	se, err := sandwichSE(crossprod(x, f), crossprod(x, nil), tau)
	return se, h, err
}

func powell(p *Problem, x *solver.Design, tau float64, b []float64) ([]float64, float64, error) {
	n := len(p.Y)
	h := bandwidth(n, tau)
	u := make([]float64, n)
	for i := range u {
		u[i] = p.Y[i] - x.Dot(i, b)
	}
	// Scale of the residuals: the smaller of the SD and IQR/1.349, robust
	// against outliers (common practice; 1.349 is the IQR of N(0,1)).
	_, sd := stat.MeanStdDev(u, nil)
	s := append([]float64(nil), u...)
	slices.Sort(s)
	iqr := stat.Quantile(0.75, stat.LinInterp, s, nil) - stat.Quantile(0.25, stat.LinInterp, s, nil)
	kappa := min(sd, iqr/1.349)
	c := kappa * (distuv.UnitNormal.Quantile(tau+h) - distuv.UnitNormal.Quantile(tau-h))
	if !(c > 0) {
		return nil, 0, fmt.Errorf("%w: residuals have no spread", ErrSingular)
	}
	w := make([]float64, n)
	for i, v := range u {
		if math.Abs(v) <= c {
			w[i] = 1 / (2 * c)
		}
	}
	se, err := sandwichSE(crossprod(x, w), crossprod(x, nil), tau)
	return se, c, err
}

func bootstrap(p *Problem, tau float64, reps int, seed uint64) ([]float64, error) {
	// Rows of each subject.
	var groups [][]int
	if p.Subject == nil {
		groups = make([][]int, len(p.Y))
		for i := range groups {
			groups[i] = []int{i}
		}
	} else {
		m := 0
		for _, s := range p.Subject {
			if s < 0 {
				panic("qrinfer: negative subject number")
			}
			m = max(m, s+1)
		}
		groups = make([][]int, m)
		for i, s := range p.Subject {
			groups[s] = append(groups[s], i)
		}
		k := 0
		for _, g := range groups {
			if len(g) > 0 {
				groups[k] = g
				k++
			}
		}
		groups = groups[:k]
	}
	rng := rand.New(rand.NewPCG(seed, 0x71))
	q := len(p.X[0])
	draws := make([][]float64, q)
	failed := 0
	var y []float64
	var rows [][]float64
	for range reps {
		y, rows = y[:0], rows[:0]
		for range groups {
			for _, i := range groups[rng.IntN(len(groups))] {
				y = append(y, p.Y[i])
				rows = append(rows, p.X[i])
			}
		}
		sol, err := solve(y, solver.NewDense(rows), tau)
		if err != nil {
			failed++
			if float64(failed) > maxFailedShare*float64(reps) {
				return nil, fmt.Errorf("%w: %d of %d (last: %w)", ErrFailed, failed, reps, err)
			}
			continue
		}
		for j, v := range sol.Coef {
			draws[j] = append(draws[j], v)
		}
	}
	se := make([]float64, q)
	for j := range se {
		_, se[j] = stat.MeanStdDev(draws[j], nil)
	}
	return se, nil
}
