package curve

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sort"

	"gonum.org/v1/gonum/stat"

	"growband/curve/solver"
	"growband/spline"
)

// Conditional references: growth since the last visit.
//
// For a child measured at ages s < t, FitConditional models the conditional
// quantiles of the later measurement given its age, the earlier measurement
// and the gap t - s (Wei & He 2006). Both measurements are first expressed as
// z-scores z_s, z_t against the ordinary curves of the same reference. Within
// an age the z-score is a strictly increasing function of the measurement, and
// quantiles are equivariant under increasing maps, so the conditional
// quantiles of y_t and of z_t determine each other:
//
//	Q_tau(y_t | t, y_s, t-s) = Q_ref(t, Phi(Q_tau(z_t | t, z_s, t-s))).
//
// The model of the z-scale quantiles is
//
//	Q_tau(z_t | t, z_s, g) = sum_j A_j(T(t)) a_tau,j + sum_{k>=1} C_k(z_s) c_tau,k
//	                         + u(g) sum_k C_k(z_s) e_tau,k
//
// with cubic B-splines A_j in the transformed age of the later visit, cubic
// B-splines C_k in the earlier z-score (C_0 is left out because both bases
// sum to one, which would repeat the intercept), and the gap entering
// linearly through u(g) = (g - GapMin)/(GapMax - GapMin) in [0, 1], with a
// slope that varies with z_s: the earlier measurement's weight changes with
// the time since it, as in Wei & He's autoregressive term (a + b(t-s)) y_s.
//
// Every basis value and u are non-negative on the modelled range, so
// coefficients ordered componentwise across tau give conditional centiles
// that never cross there; they are fitted outward from the median with the
// same ordering constraints as the ordinary curves (see noncross.go), each
// tau an exact solver call.
//
// The conditional z of a later visit is Phi^-1 of its level interpolated in
// the tau grid, by the rules of Score (place); its conditional centile is
// 100 Phi(z).
//
// References:
//   - Wei Y, He X (2006). Conditional growth charts. Annals of Statistics
//     34, 2069–2097.
//   - Koenker R (2005). Quantile Regression. Cambridge University Press
//     (equivariance to monotone transformations, section 2.2.3).

// Conditional is the fitted conditional model of one stratum (see
// FitConditional). Coefficient vectors hold the age part, then the earlier-z
// part without its first function, then the gap-by-z part.
type Conditional struct {
	GapMin   float64 `json:"gap_min"`  // modelled gaps, age units
	GapMax   float64 `json:"gap_max"`  //
	Pairs    int     `json:"pairs"`    // visit pairs used
	Children int     `json:"children"` // children contributing pairs
	Degree   int     `json:"degree"`
	// AgeKnots is the clamped knot vector on the transformed age of the
	// later visit, ZKnots on the earlier visit's z-score.
	AgeKnots []float64   `json:"age_knots"`
	ZKnots   []float64   `json:"z_knots"`
	Taus     []float64   `json:"taus"`
	Coef     [][]float64 `json:"coef"`
}

// ConditionalSettings tune FitConditional. The zero value, and nil, mean the
// documented defaults.
type ConditionalSettings struct {
	// GapMin and GapMax bound the modelled gaps between a visit and the
	// previous visit of the same child, in age units. Both zero means
	// the DefaultGapLevel and 1-DefaultGapLevel quantiles of the gaps
	// between consecutive visits in the data of each stratum.
	GapMin, GapMax float64
	// AgeKnots and ZKnots are the numbers of interior knots, at quantiles
	// of the later visits' transformed ages and of the earlier z-scores;
	// 0 means DefaultCondKnots, NoKnots none.
	AgeKnots, ZKnots int
	// Centiles is the tau grid in percent (it must contain 50); nil means
	// DefaultCondCentiles.
	Centiles []float64
	// Workers bounds the solver calls run at once; 0 means GOMAXPROCS.
	Workers int
}

// Defaults of ConditionalSettings.
const (
	// DefaultCondKnots: three interior knots (at the quartiles) in age and
	// in the earlier z-score, enough for a smooth surface; common practice
	// for regression splines of a few thousand pairs.
	DefaultCondKnots = 3
	// DefaultGapLevel: the default modelled gaps are the central 95% of the
	// observed gaps (common practice), so that rare very short or very long
	// gaps do not stretch the linear gap term.
	DefaultGapLevel = 0.025
	// minPairsPerCoef: fewest visit pairs per coefficient (common practice
	// for regression splines: about ten observations per parameter).
	minPairsPerCoef = 10
)

// DefaultCondCentiles is the default tau grid of the conditional model, in
// percent: dense in the tails where growth faltering is judged (the 5th
// centile among them), coarser in the middle.
var DefaultCondCentiles = []float64{1, 2, 3, 5, 10, 15, 20, 25, 30, 35, 40, 45, 50,
	55, 60, 65, 70, 75, 80, 85, 90, 95, 97, 98, 99}

// Errors of the conditional model; wrapped with context.
var (
	// ErrNoConditional: the stratum carries no conditional model.
	ErrNoConditional = errors.New("curve: no conditional model")
	// ErrGapRange: the time since the previous visit is outside the
	// modelled gaps.
	ErrGapRange = errors.New("curve: gap since the previous visit outside the modelled range")
	// ErrPrevRange: the previous visit's z-score lies outside the range the
	// conditional model was fitted on.
	ErrPrevRange = errors.New("curve: previous z-score outside the modelled range")
)

// condPair is one later visit with its previous visit, both scored.
type condPair struct {
	t, zs, gap, zt, w float64
	child             int
}

// FitConditional fits a conditional model for every fitted stratum of r from
// the longitudinal rows d (d.Subject is required; rows are paired with the
// previous visit of the same subject in the same stratum) and stores it in
// Stratum.Conditional. Pairs whose gap lies outside the modelled range, or
// whose visits cannot be scored or score beyond ±ImplausibleZ, are not used.
// It returns an error wrapping ErrData for unusable data (no subjects, too
// few pairs in a stratum) or ErrSettings, and leaves r unchanged on error.
func FitConditional(r *Reference, d *Data, s *ConditionalSettings) error {
	if s == nil {
		s = &ConditionalSettings{}
	}
	if d == nil || d.Subject == nil {
		return fmt.Errorf("%w: conditional model: no subject ids", ErrData)
	}
	n := len(d.Age)
	if len(d.Value) != n || len(d.Subject) != n || (d.Stratum != nil && len(d.Stratum) != n) || (d.Weight != nil && len(d.Weight) != n) {
		return fmt.Errorf("%w: conditional model: columns of different lengths", ErrData)
	}
	taus, err := condTaus(s.Centiles)
	if err != nil {
		return err
	}
	if s.GapMin < 0 || s.GapMax < 0 || (s.GapMin != 0 || s.GapMax != 0) && !(s.GapMin < s.GapMax) || !isFin(s.GapMin) || !isFin(s.GapMax) {
		return fmt.Errorf("%w: conditional gap range [%g, %g]", ErrSettings, s.GapMin, s.GapMax)
	}
	ak, zk := knotCount(s.AgeKnots), knotCount(s.ZKnots)
	if ak < 0 || zk < 0 {
		return fmt.Errorf("%w: conditional knots %d, %d", ErrSettings, s.AgeKnots, s.ZKnots)
	}
	workers := s.Workers
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	pl := newPool(workers)
	models := make([]*Conditional, len(r.Strata))
	for i := range r.Strata {
		st := &r.Strata[i]
		if st.LMS != nil {
			continue
		}
		idx := visitsOf(d, st.Name)
		gaps := consecutiveGaps(d, idx)
		lo, hi := s.GapMin, s.GapMax
		if lo == 0 && hi == 0 {
			if len(gaps) < 2 {
				return fmt.Errorf("%w: stratum %q: fewer than two repeat visits", ErrData, st.Name)
			}
			slices.Sort(gaps)
			lo = stat.Quantile(DefaultGapLevel, stat.LinInterp, gaps, nil)
			hi = stat.Quantile(1-DefaultGapLevel, stat.LinInterp, gaps, nil)
			if !(lo < hi) {
				return fmt.Errorf("%w: stratum %q: all gaps between visits equal %g", ErrData, st.Name, lo)
			}
		}
		pairs, err := r.pairsOf(st, d, idx, lo, hi)
		if err != nil {
			return err
		}
		c, err := fitConditional(pl, r, pairs, lo, hi, ak, zk, taus)
		if err != nil {
			return fmt.Errorf("stratum %q: conditional model: %w", st.Name, err)
		}
		models[i] = c
	}
	for i, c := range models {
		r.Strata[i].Conditional = c
	}
	return nil
}

func knotCount(k int) int {
	switch k {
	case 0:
		return DefaultCondKnots
	case NoKnots:
		return 0
	}
	return k
}

// condTaus returns the sorted tau grid of the conditional model.
func condTaus(cent []float64) ([]float64, error) {
	if cent == nil {
		cent = DefaultCondCentiles
	}
	taus := make([]float64, len(cent))
	for i, p := range cent {
		if !(p > 0 && p < 100) {
			return nil, fmt.Errorf("%w: conditional centile %v not strictly between 0 and 100", ErrSettings, p)
		}
		taus[i] = p / 100
	}
	slices.Sort(taus)
	taus = slices.Compact(taus)
	if !slices.Contains(taus, 0.5) {
		return nil, fmt.Errorf("%w: conditional centiles must include 50", ErrSettings)
	}
	if len(taus) < 2 {
		return nil, fmt.Errorf("%w: conditional centiles: want at least two", ErrSettings)
	}
	return taus, nil
}

// visitsOf returns the rows of the stratum sorted by subject, then age.
func visitsOf(d *Data, stratum string) []int {
	var idx []int
	for i := range d.Age {
		if d.Stratum == nil || d.Stratum[i] == stratum {
			idx = append(idx, i)
		}
	}
	slices.SortStableFunc(idx, func(i, j int) int {
		return cmp.Or(cmp.Compare(d.Subject[i], d.Subject[j]), cmp.Compare(d.Age[i], d.Age[j]))
	})
	return idx
}

// consecutiveGaps returns the positive gaps between consecutive visits of
// each subject in idx (sorted by visitsOf).
func consecutiveGaps(d *Data, idx []int) []float64 {
	var g []float64
	for k := 1; k < len(idx); k++ {
		i, j := idx[k-1], idx[k]
		if d.Subject[i] == d.Subject[j] && d.Subject[j] != "" {
			if gap := d.Age[j] - d.Age[i]; gap > 0 {
				g = append(g, gap)
			}
		}
	}
	return g
}

// pairsOf scores the visits idx of the stratum (sorted by visitsOf) and
// pairs each with its previous visit (see previousVisit), skipping visits
// that score beyond ±ImplausibleZ or cannot be scored.
func (r *Reference) pairsOf(st *Stratum, d *Data, idx []int, lo, hi float64) ([]condPair, error) {
	b, err := spline.New(st.Knots, r.Degree)
	if err != nil {
		return nil, fmt.Errorf("%w: stratum %q: %w", ErrInvalid, st.Name, err)
	}
	var ws scoreSpace
	z := make([]float64, len(idx))
	ok := make([]bool, len(idx))
	for k, i := range idx {
		sc, err := ws.score(r, st, b, d.Age[i], d.Value[i])
		z[k], ok[k] = sc.Z, err == nil && math.Abs(sc.Z) <= ImplausibleZ
	}
	var pairs []condPair
	child, last := -1, ""
	for k, j := range idx {
		if !ok[k] {
			continue
		}
		m, _ := previousVisit(d, idx, ok, k, lo, hi)
		if m < 0 {
			continue
		}
		if len(pairs) == 0 || d.Subject[j] != last {
			child++
			last = d.Subject[j]
		}
		w := 1.0
		if d.Weight != nil {
			w = d.Weight[j]
		}
		pairs = append(pairs, condPair{t: d.Age[j], zs: z[m], gap: d.Age[j] - d.Age[idx[m]], zt: z[k], w: w, child: child})
	}
	return pairs, nil
}

// previousVisit returns the position m < k in idx (rows sorted by subject,
// then age) of the previous visit of row idx[k]: the most recent earlier
// visit of the same subject with ok[m] whose gap to it lies in [lo, hi].
// When there is none it returns -1 and, if the subject has earlier usable
// visits at all, the gap to the latest of them (else NaN).
func previousVisit(d *Data, idx []int, ok []bool, k int, lo, hi float64) (int, float64) {
	j := idx[k]
	latest := math.NaN()
	if d.Subject[j] == "" {
		return -1, latest
	}
	for m := k - 1; m >= 0 && d.Subject[idx[m]] == d.Subject[j]; m-- {
		gap := d.Age[j] - d.Age[idx[m]]
		if !ok[m] || !(gap > 0) {
			continue
		}
		if math.IsNaN(latest) {
			latest = gap
		}
		if gap > hi {
			break
		}
		if gap >= lo {
			return m, gap
		}
	}
	return -1, latest
}

// ErrNoPrevious: a visit with no earlier visit of the same child to
// compare with.
var ErrNoPrevious = errors.New("curve: no earlier visit of the same child")

// ChangeScore is the conditional score of one visit (see ScoreChanges).
type ChangeScore struct {
	Score
	Prev int   // row of the previous visit used; -1 when not scored
	Err  error // why the visit has no conditional score; nil when scored
}

// ScoreChanges gives every row of d (which needs Subject) its conditional
// z-score and centile against the previous visit of the same subject in
// the same stratum: the most recent earlier visit that can be scored and
// whose gap lies in the stratum's modelled range (ScoreChange). A row
// without one has Err wrapping ErrNoPrevious (no earlier visit), ErrGapRange
// (earlier visits, none at a modelled gap), ErrNoConditional, or the error
// of its own or the previous visit's scoring. Rows are independent: one
// row's error does not stop the others. Mismatched column lengths panic.
func (r *Reference) ScoreChanges(d *Data) []ChangeScore {
	n := len(d.Age)
	if len(d.Value) != n || len(d.Subject) != n || d.Stratum != nil && len(d.Stratum) != n {
		panic("curve: ScoreChanges: columns of different lengths")
	}
	out := make([]ChangeScore, n)
	for i := range out {
		out[i].Prev = -1
	}
	byStratum := map[string][]int{}
	for i := range n {
		s := ""
		if d.Stratum != nil {
			s = d.Stratum[i]
		}
		byStratum[s] = append(byStratum[s], i)
	}
	for name, rows := range byStratum {
		st, b, err := r.lookup(name)
		if err == nil && st.Conditional == nil {
			err = fmt.Errorf("%w: stratum %q", ErrNoConditional, st.Name)
		}
		if err != nil {
			for _, i := range rows {
				out[i].Err = err
			}
			continue
		}
		c := st.Conditional
		sub := &Data{Age: d.Age, Subject: d.Subject}
		idx := slices.Clone(rows)
		slices.SortStableFunc(idx, func(i, j int) int {
			return cmp.Or(cmp.Compare(d.Subject[i], d.Subject[j]), cmp.Compare(d.Age[i], d.Age[j]))
		})
		var ws scoreSpace
		z := make([]float64, len(idx))
		ok := make([]bool, len(idx))
		errs := make([]error, len(idx))
		for k, i := range idx {
			sc, err := ws.score(r, st, b, d.Age[i], d.Value[i])
			z[k], ok[k], errs[k] = sc.Z, err == nil, err
		}
		var q []float64
		for k, i := range idx {
			if !ok[k] {
				out[i].Err = errs[k]
				continue
			}
			m, latest := previousVisit(sub, idx, ok, k, c.GapMin, c.GapMax)
			if m < 0 {
				if math.IsNaN(latest) {
					out[i].Err = ErrNoPrevious
				} else {
					out[i].Err = fmt.Errorf("%w: gap %.4g not in [%.4g, %.4g]", ErrGapRange, latest, c.GapMin, c.GapMax)
				}
				continue
			}
			gap := d.Age[i] - d.Age[idx[m]]
			if q, err = c.Quantiles(q, r.AgeScale, d.Age[i], gap, z[m]); err != nil {
				out[i].Err = err
				continue
			}
			cz, flags, err := condPlace(c.Taus, q, z[k])
			if err != nil {
				out[i].Err = err
				continue
			}
			if math.Abs(cz) > ImplausibleZ {
				flags |= FlagImplausible
			}
			out[i] = ChangeScore{Score: Score{Centile: 100 * normP(cz), Z: cz, Flags: flags}, Prev: idx[m]}
		}
	}
	return out
}

// condBasis holds the two bases of a conditional model.
type condBasis struct {
	age, z *spline.Basis
	wa, wz []float64 // scratch, degree+1 each
}

func newCondBasis(c *Conditional) (*condBasis, error) {
	a, err := spline.New(c.AgeKnots, c.Degree)
	if err != nil {
		return nil, err
	}
	z, err := spline.New(c.ZKnots, c.Degree)
	if err != nil {
		return nil, err
	}
	return &condBasis{age: a, z: z, wa: make([]float64, c.Degree+1), wz: make([]float64, c.Degree+1)}, nil
}

// cols returns the number of coefficients.
func (cb *condBasis) cols() int { return cb.age.Len() + 2*cb.z.Len() - 1 }

// row writes the dense design row at transformed age t, earlier z-score zs
// and scaled gap u into dst (len cols()).
func (cb *condBasis) row(dst []float64, t, zs, u float64) error {
	clear(dst)
	fa, err := cb.age.Eval(cb.wa, t)
	if err != nil {
		return err
	}
	fz, err := cb.z.Eval(cb.wz, zs)
	if err != nil {
		return err
	}
	pa, pz := cb.age.Len(), cb.z.Len()
	for j, v := range cb.wa {
		dst[fa+j] = v
	}
	for j, v := range cb.wz {
		if k := fz + j; k > 0 {
			dst[pa+k-1] += v
		}
		dst[pa+pz-1+fz+j] += u * v
	}
	return nil
}

// fitConditional fits the model to pairs whose gaps lie in [lo, hi].
func fitConditional(pl *pool, r *Reference, pairs []condPair, lo, hi float64, ak, zk int, taus []float64) (*Conditional, error) {
	degree := DefaultDegree
	c := &Conditional{GapMin: lo, GapMax: hi, Pairs: len(pairs), Degree: degree, Taus: taus}
	if len(pairs) > 0 {
		c.Children = pairs[len(pairs)-1].child + 1
	}
	// Rough check before the knots: the fit needs at least this many.
	p := (ak + degree + 1) + 2*(zk+degree+1) - 1
	if len(pairs) < minPairsPerCoef*p {
		return nil, fmt.Errorf("%w: %d visit pairs with gaps in [%g, %g], want at least %d", ErrData, len(pairs), lo, hi, minPairsPerCoef*p)
	}
	ts := make([]float64, len(pairs))
	zs := make([]float64, len(pairs))
	for i, pr := range pairs {
		t, err := r.AgeScale.Apply(pr.t)
		if err != nil {
			return nil, fmt.Errorf("%w: %w", ErrData, err)
		}
		ts[i], zs[i] = t, pr.zs
	}
	knots := func(x []float64, count int) ([]float64, error) {
		lo, hi := slices.Min(x), slices.Max(x)
		in, err := spline.QuantileKnots(x, count)
		if err != nil {
			return nil, err
		}
		return spline.Clamped(lo, hi, in, degree)
	}
	var err error
	if c.AgeKnots, err = knots(ts, ak); err != nil {
		return nil, fmt.Errorf("%w: ages of later visits: %w", ErrData, err)
	}
	if c.ZKnots, err = knots(zs, zk); err != nil {
		return nil, fmt.Errorf("%w: earlier z-scores: %w", ErrData, err)
	}
	cb, err := newCondBasis(c)
	if err != nil {
		return nil, fmt.Errorf("%w: %w", ErrData, err)
	}
	p = cb.cols()
	x := &solver.Design{Cols: p, Width: p, First: make([]int, len(pairs)), Val: make([]float64, len(pairs)*p)}
	y := make([]float64, len(pairs))
	w := make([]float64, len(pairs))
	for i, pr := range pairs {
		if err := cb.row(x.Val[i*p:(i+1)*p], ts[i], zs[i], (pr.gap-lo)/(hi-lo)); err != nil {
			return nil, fmt.Errorf("%w: %w", ErrData, err)
		}
		y[i], w[i] = pr.zt, pr.w
	}
	c.Coef, err = fitGridOn(pl, x, nil, y, w, 0, taus, NonCrossConstrain, nil)
	if err != nil {
		return nil, err
	}
	return c, nil
}

// condPlace returns the conditional z-score of the later visit's z-score v
// among the non-decreasing conditional quantiles q of the levels taus:
// interpolated linearly in z between neighbouring levels (place), and beyond
// the outermost levels on the line through the two outermost distinct
// quantiles of that side, with FlagBeyondTail. The conditional distribution
// of a z-score is close to normal, so keeping the spread of the outermost
// band in z units is the normal tail's own rule.
func condPlace(taus, q []float64, v float64) (float64, ScoreFlags, error) {
	n := len(q)
	if !(q[0] < q[n-1]) {
		return 0, 0, fmt.Errorf("%w: conditional centiles all equal %g", ErrDegenerate, q[0])
	}
	switch {
	case v < q[0]:
		k := sort.Search(n, func(i int) bool { return q[i] > q[0] })
		z0, zk := normZ(taus[0]), normZ(taus[k])
		return z0 + (v-q[0])*((zk-z0)/(q[k]-q[0])), FlagBeyondTail, nil
	case v > q[n-1]:
		k := sort.SearchFloat64s(q, q[n-1]) - 1 // last q < q[n-1]
		zk, z1 := normZ(taus[k]), normZ(taus[n-1])
		return z1 + (v-q[n-1])*((z1-zk)/(q[n-1]-q[k])), FlagBeyondTail, nil
	}
	z, err := place(taus, q, v)
	return z, 0, err
}

// check validates a stored conditional model (for Reference.Validate).
func (c *Conditional) check(name string) error {
	bad := func(format string, a ...any) error {
		return fmt.Errorf("%w: stratum %q: conditional model: %s", ErrInvalid, name, fmt.Sprintf(format, a...))
	}
	if !isFin(c.GapMin) || !isFin(c.GapMax) || !(c.GapMin >= 0 && c.GapMin < c.GapMax) {
		return bad("gap range [%g, %g]", c.GapMin, c.GapMax)
	}
	if c.Degree < 0 || c.Degree > scoreMaxDegree {
		return bad("degree %d", c.Degree)
	}
	cb, err := newCondBasis(c)
	if err != nil {
		return bad("%v", err)
	}
	if len(c.Taus) < 2 || len(c.Coef) != len(c.Taus) {
		return bad("%d taus, %d coefficient vectors", len(c.Taus), len(c.Coef))
	}
	for k, tau := range c.Taus {
		if !(tau > 0 && tau < 1) || k > 0 && !(tau > c.Taus[k-1]) {
			return bad("taus not strictly increasing in (0,1)")
		}
		if len(c.Coef[k]) != cb.cols() {
			return bad("coefficient vector %d has %d entries, want %d", k, len(c.Coef[k]), cb.cols())
		}
		for j, v := range c.Coef[k] {
			if !isFin(v) {
				return bad("coefficient %d of tau %g is %g", j, tau, v)
			}
			if k > 0 && v < c.Coef[k-1][j]-orderTol*(1+math.Abs(v)) {
				return bad("coefficient %d not ordered across tau at tau %g", j, tau)
			}
		}
	}
	return nil
}

// ScoreChange returns the conditional z-score and centile of a measurement
// value at age given the same child's previous measurement prevValue at
// prevAge, from the stratum's conditional model (see FitConditional). Both
// visits are first scored against the ordinary curves (errors as Score).
// Errors also wrap ErrNoConditional, ErrGapRange (age - prevAge outside the
// modelled gaps), ErrPrevRange (the previous z outside the fitted range) or
// ErrAgeRange (age outside the later visits' fitted ages). Flags are those of
// Score for the conditional placement (FlagBeyondTail beyond the outermost
// conditional centiles, FlagImplausible).
func (r *Reference) ScoreChange(stratum string, prevAge, prevValue, age, value float64) (Score, error) {
	st, b, err := r.lookup(stratum)
	if err != nil {
		return Score{}, err
	}
	c := st.Conditional
	if c == nil {
		return Score{}, fmt.Errorf("%w: stratum %q", ErrNoConditional, st.Name)
	}
	gap := age - prevAge
	if !(gap >= c.GapMin && gap <= c.GapMax) {
		return Score{}, fmt.Errorf("%w: gap %.4g not in [%.4g, %.4g]", ErrGapRange, gap, c.GapMin, c.GapMax)
	}
	var ws scoreSpace
	prev, err := ws.score(r, st, b, prevAge, prevValue)
	if err != nil {
		return Score{}, fmt.Errorf("previous visit: %w", err)
	}
	now, err := ws.score(r, st, b, age, value)
	if err != nil {
		return Score{}, err
	}
	q, err := c.Quantiles(nil, r.AgeScale, age, gap, prev.Z)
	if err != nil {
		return Score{}, fmt.Errorf("stratum %q: %w", st.Name, err)
	}
	z, flags, err := condPlace(c.Taus, q, now.Z)
	if err != nil {
		return Score{}, fmt.Errorf("stratum %q: %w", st.Name, err)
	}
	if math.Abs(z) > ImplausibleZ {
		flags |= FlagImplausible
	}
	return Score{Centile: 100 * normP(z), Z: z, Flags: flags}, nil
}

// Quantiles returns the conditional quantiles, in z units of the ordinary
// reference, of the later visit at age, gap and earlier z-score zs, one per
// Taus (non-decreasing).
func (c *Conditional) Quantiles(dst []float64, scale AgeScale, age, gap, zs float64) ([]float64, error) {
	cb, err := newCondBasis(c)
	if err != nil {
		return nil, fmt.Errorf("%w: %w", ErrInvalid, err)
	}
	if !(gap >= c.GapMin && gap <= c.GapMax) {
		return nil, fmt.Errorf("%w: gap %.4g not in [%.4g, %.4g]", ErrGapRange, gap, c.GapMin, c.GapMax)
	}
	t, err := scale.Apply(age)
	if err != nil {
		return nil, fmt.Errorf("%w: %w", ErrAgeRange, err)
	}
	if lo, hi := cb.age.Range(); !(t >= lo && t <= hi) {
		return nil, fmt.Errorf("%w: age %g outside the later visits' ages of the conditional model", ErrAgeRange, age)
	}
	if lo, hi := cb.z.Range(); !(zs >= lo && zs <= hi) {
		return nil, fmt.Errorf("%w: previous z %.3f not in [%.3f, %.3f]", ErrPrevRange, zs, lo, hi)
	}
	row := make([]float64, cb.cols())
	if err := cb.row(row, t, zs, (gap-c.GapMin)/(c.GapMax-c.GapMin)); err != nil {
		return nil, fmt.Errorf("%w: %w", ErrInvalid, err)
	}
	dst = sized(dst, len(c.Taus))
	for k, b := range c.Coef {
		s := 0.0
		for j, v := range row {
			s += v * b[j]
		}
		dst[k] = s
		if k > 0 && dst[k] < dst[k-1] { // rounding inversions become ties
			dst[k] = dst[k-1]
		}
	}
	return dst, nil
}

// NextCentiles returns, for a child of the stratum measured prevValue at
// prevAge, the conditional centiles in measurement units of its measurement
// after gap, one per tau of taus (each must be in the conditional model's
// grid): Q_ref(prevAge+gap, Phi(Q_tau(z_t | ...))), by the equivariance
// stated on FitConditional. A centile whose level Phi(.) falls outside the
// ordinary reference's tau grid is NaN (references are not extrapolated).
// Errors are those of ScoreChange, and ErrTauRange for a tau not in the grid.
func (r *Reference) NextCentiles(stratum string, prevAge, prevValue, gap float64, taus []float64) ([]float64, error) {
	st, _, err := r.lookup(stratum)
	if err != nil {
		return nil, err
	}
	c := st.Conditional
	if c == nil {
		return nil, fmt.Errorf("%w: stratum %q", ErrNoConditional, st.Name)
	}
	prev, err := r.Score(stratum, prevAge, prevValue)
	if err != nil {
		return nil, fmt.Errorf("previous visit: %w", err)
	}
	age := prevAge + gap
	q, err := c.Quantiles(nil, r.AgeScale, age, gap, prev.Z)
	if err != nil {
		return nil, err
	}
	out := make([]float64, len(taus))
	for i, tau := range taus {
		k := gridIndex(c.Taus, tau)
		if k < 0 {
			return nil, fmt.Errorf("%w: %g is not a conditional centile of the model", ErrTauRange, 100*tau)
		}
		v, err := r.Quantile(stratum, age, normP(q[k]))
		switch {
		case errors.Is(err, ErrTauRange):
			v = math.NaN()
		case err != nil:
			return nil, err
		}
		out[i] = v
	}
	return out, nil
}
