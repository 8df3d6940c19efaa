package curve

import (
	"cmp"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"iter"
	"math"
	"runtime"
	"slices"
	"sync"
	"time"
)

// Errors returned by Fit and AgeScale.Apply, besides ErrData for unusable
// rows. They are wrapped with context (the row, stratum or setting
// concerned); test with errors.Is.
var (
	ErrSettings  = errors.New("curve: invalid fit settings")
	ErrAgeScale  = errors.New("curve: invalid age scale")
	ErrAgeDomain = errors.New("curve: age outside the domain of the age scale")
	ErrBootstrap = errors.New("curve: too many bootstrap replicates failed")
)

// Choices for the string fields of Settings. The empty string means the
// first (default) choice of each group.
const (
	PenaltyAuto  = "auto"  // lambda chosen by the criterion
	PenaltyNone  = "none"  // no penalty
	PenaltyFixed = "fixed" // Settings.Lambda

	CriterionSIC   = "sic"   // Schwarz-type information criterion
	CriterionCV    = "cv"    // K-fold cross-validated check loss
	CriterionFixed = "fixed" // recorded when nothing was chosen

)

// Non-crossing modes (Settings.NonCross). A curve is
// Q_tau(t) = sum_j B_j(t) b_tau,j with B-spline functions B_j >= 0 that sum
// to one at every t, so coefficients ordered across tau (b_tau <= b_tau'
// componentwise) give curves ordered at every age:
//
//	Q_tau'(t) - Q_tau(t) = sum_j B_j(t) (b_tau',j - b_tau,j) >= 0.
//
// The condition is sufficient, not necessary, and survives rounding.
// NonCrossConstrain fits the median, then each tau outward constrained by
// its inner neighbour (b_tau >= b_prev above the median, <= below): the
// stepwise scheme of Wu & Liu (2009) with this sufficient condition as the
// constraint set, always feasible, binding only where unconstrained fits
// would be out of order. NonCrossRearrange fits every tau unconstrained and
// sorts each coefficient index across tau, the monotone rearrangement of
// Chernozhukov, Fernández-Val & Galichon (2010) applied to each coefficient
// function (it equals their value rearrangement at the two end ages).
//
// References:
//   - Wu Y, Liu Y (2009). Stepwise multiple quantile regression estimation
//     using non-crossing constraints. Statistics and Its Interface 2,
//     299–310 (from memory).
//   - Chernozhukov V, Fernández-Val I, Galichon A (2010). Quantile and
//     probability curves without crossing. Econometrica 78, 1093–1125.
const (
	NonCrossConstrain = "constrain" // stepwise constraints outward from the median
	NonCrossRearrange = "rearrange" // unconstrained fits, coefficients sorted across tau
)

// CriterionText names a smoothness criterion code in words, as reports and
// the reference file show it: "Schwarz criterion", "cross-validation" or
// "fixed in the settings". Unknown codes are returned unchanged.
func CriterionText(code string) string {
	switch code {
	case CriterionSIC:
		return "Schwarz criterion"
	case CriterionCV:
		return "cross-validation"
	case CriterionFixed:
		return "fixed in the settings"
	}
	return code
}

// NoKnots as Settings.Knots asks for no interior knots: each curve is a
// single polynomial of the given degree in T(age).
const NoKnots = -1

// Defaults used for the zero fields of Settings.
const (
	DefaultDegree       = 3  // cubic B-splines
	DefaultPenaltyOrder = 2  // L1 on second differences: total variation of the slope
	DefaultFolds        = 5  // cross-validation folds (common practice: 5 or 10)
	DefaultGuardMin     = 5  // expected count beyond a centile per window (common practice: 5–10)
	DefaultGuardWindows = 10 // guard windows, equal width in T(age)
	DefaultBandPoints   = 41 // ages of the bootstrap band grid
	MinReplicates       = 20 // fewest bootstrap replicates that give a 95% interval
)

// defaultCentiles is the default chart set, in percent.
var defaultCentiles = []float64{3, 10, 25, 50, 75, 90, 97}

// Settings tune Fit. The zero value, and nil, mean the documented defaults.
type Settings struct {
	// Centiles is the chart set in percent, each strictly between 0 and 100;
	// nil means 3, 10, 25, 50, 75, 90, 97.
	Centiles []float64
	// Degree of the B-splines; 0 means DefaultDegree (cubic).
	Degree int
	// AgeScale is the age transformation of the basis; the zero value is
	// the identity.
	AgeScale AgeScale

	// Knots is the number of interior knots, placed at quantiles of the
	// transformed ages of each stratum: 0 chooses it by Criterion from a
	// small candidate set, NoKnots asks for none.
	Knots int
	// KnotAges, when not empty, are the interior knots in age units (used
	// for every stratum, so they must lie inside each stratum's age range);
	// Knots must then be 0.
	KnotAges []float64
	// Penalty selects the L1 difference penalty on the coefficients:
	// PenaltyAuto, PenaltyNone or PenaltyFixed. The empty string means
	// PenaltyFixed when Lambda > 0 and PenaltyNone otherwise: the default
	// is an unpenalised regression spline whose knot count the criterion
	// chooses, and fixed knots alone give a plain unpenalised fit.
	// PenaltyAuto scores lambda over the median and the chart centiles
	// even with MedianOnly: the penalty acts hardest on the outer
	// centiles, whose check loss weighs the data by about min(tau, 1-tau),
	// and in the simulation of recovery_test.go (n = 2000, 10 knots) a
	// lambda scored at the median alone more than doubled their largest z
	// error (0.54 against 0.25; 0.21 unpenalised with chosen knots).
	Penalty string
	// Lambda is the penalty weight for PenaltyFixed, in the units of the
	// summed sample weights (the solver's objective). Smoothness.Lambda of
	// a fit can be passed back here to reproduce it on the same data.
	Lambda float64
	// PenaltyOrder is the difference order d of the penalty sum_j |Δ^d b_j|;
	// 0 means DefaultPenaltyOrder = 2. With order 2 the penalty is the total
	// variation of the coefficient sequence's slope, so a large lambda pulls
	// each curve towards a straight line in T(age) (its null space) and a
	// moderate one gives a coefficient polyline with few kinks, smoothed by
	// the B-splines: the discrete analogue of the total-variation penalty of
	// Koenker, Ng & Portnoy (1994). Order 1 would pull curves towards
	// constants (flattening growth), order 3 towards quadratics.
	PenaltyOrder int

	// Criterion chooses what is automatic: CriterionSIC (default) or
	// CriterionCV.
	Criterion string
	// Folds for CriterionCV; 0 means DefaultFolds. Folds are formed of
	// whole subjects when Data.Subject is given.
	Folds int
	// MedianOnly scores the criterion at the median alone instead of
	// summing it over the median and the chart centiles. It is faster but
	// tends to under-fit the outer centiles, whose shape the median does
	// not see: in the simulation of recovery_test.go at n = 20,000 it chose
	// one interior knot instead of two and raised the root-mean-square z
	// error of the chart centiles from 0.041 to 0.055.
	MedianOnly bool

	// NonCross is NonCrossConstrain (default) or NonCrossRearrange.
	NonCross string

	// GuardMin is the fewest expected observations beyond a centile in an
	// age window (n_window * min(tau, 1-tau)); 0 means DefaultGuardMin.
	// Chart centiles below it are flagged, extreme grid taus dropped.
	GuardMin float64
	// GuardWindows is the number of age windows of the guard, of equal
	// width in T(age); 0 means DefaultGuardWindows.
	GuardWindows int

	// Bootstrap is the number of bootstrap replicates for the chart bands;
	// 0 means none, otherwise at least MinReplicates.
	Bootstrap int
	// BandPoints is the number of equally spaced ages of the bands; 0 means
	// DefaultBandPoints.
	BandPoints int
	// Seed seeds the bootstrap and the cross-validation folds; every seed,
	// 0 included, gives reproducible results.
	Seed uint64

	// Workers bounds the solver calls run at once; 0 means
	// runtime.GOMAXPROCS(0). Results do not depend on it.
	Workers int
	// Progress receives progress lines "growband: ..." for long work; nil
	// means silence.
	Progress io.Writer

	// AgeRange, when AgeRange[1] > AgeRange[0], is the reference's stated
	// age range in age units: the boundary knots are clamped there rather
	// than at the youngest and oldest rows, so the curves hold to both ends
	// and a child at either end is scored. Rows outside it are an error of
	// Fit (Build excludes them with a reason). The zero value means the
	// range of each stratum's rows.
	AgeRange [2]float64

	// Measure, Unit and AgeUnit are copied into the Reference.
	Measure, Unit, AgeUnit string
	// Created is the Reference's creation time; the zero value means now.
	Created time.Time
}

// config is Settings resolved: defaults filled in and choices checked.
type config struct {
	chart      []float64 // chart taus, increasing
	degree     int
	scale      AgeScale
	knots      int       // NoKnots, 0 (auto) or a count
	knotT      []float64 // explicit interior knots on the T scale, or nil
	knotAges   []float64
	ageRange   *[2]float64 // stated age range, or nil
	tRange     [2]float64  // T of the stated range
	penalty    string      // PenaltyAuto, PenaltyNone or PenaltyFixed
	lambda     float64
	order      int
	criterion  string
	folds      int
	medianOnly bool
	nonCross   string
	guardMin   float64
	windows    int
	boot       int
	bandPoints int
	seed       uint64
	workers    int
	batch      int // candidates a smoothness search evaluates at once; 0: workers
	prog       *progress
	chosen     map[string]*choice // smoothness chosen beforehand, by stratum
	selectRows int                // SelectRows; tests lower it
}

// maxDegree bounds Settings.Degree; higher degrees buy nothing for growth
// curves and make the design rows wide.
const maxDegree = 7

func (s *Settings) resolve() (*config, error) {
	if s == nil {
		s = &Settings{}
	}
	bad := func(format string, args ...any) (*config, error) {
		return nil, fmt.Errorf("%w: "+format, append([]any{ErrSettings}, args...)...)
	}
	c := &config{seed: s.Seed, medianOnly: s.MedianOnly, prog: &progress{w: s.Progress}, selectRows: SelectRows}

	cent := s.Centiles
	if cent == nil {
		cent = defaultCentiles
	}
	if len(cent) == 0 {
		return bad("no chart centiles")
	}
	cent = slices.Clone(cent)
	slices.Sort(cent)
	for i, p := range cent {
		if !(p > 0 && p < 100) {
			return bad("centile %v not strictly between 0 and 100", p)
		}
		if i > 0 && p == cent[i-1] {
			return bad("centile %v given twice", p)
		}
		c.chart = append(c.chart, p/100)
	}

	switch {
	case s.Degree == 0:
		c.degree = DefaultDegree
	case s.Degree < 0 || s.Degree > maxDegree:
		return bad("degree %d not in 1..%d", s.Degree, maxDegree)
	default:
		c.degree = s.Degree
	}

	if s.AgeScale.Kind == ScaleAuto {
		return nil, fmt.Errorf("%w: the automatic age scale is chosen by Build, not Fit", ErrAgeScale)
	}
	if err := s.AgeScale.validate(); err != nil {
		return nil, err
	}
	c.scale = s.AgeScale.normal()

	if r := s.AgeRange; r != [2]float64{} {
		if !(r[1] > r[0]) || math.IsInf(r[0], 0) || math.IsInf(r[1], 0) {
			return bad("age range [%v, %v] needs finite ends with min < max", r[0], r[1])
		}
		for k, a := range r {
			t, err := c.scale.Apply(a)
			if err != nil {
				return nil, fmt.Errorf("%w: age range end %v: %w", ErrSettings, a, err)
			}
			c.tRange[k] = t
		}
		c.ageRange = &r
	}

	if s.Knots < NoKnots {
		return bad("knot count %d", s.Knots)
	}
	c.knots = s.Knots
	if len(s.KnotAges) > 0 {
		if s.Knots != 0 {
			return bad("give either a knot count or knot ages, not both")
		}
		c.knotAges = slices.Clone(s.KnotAges)
		for i, a := range c.knotAges {
			t, err := c.scale.Apply(a)
			if err != nil {
				return nil, fmt.Errorf("%w: knot age %v: %w", ErrSettings, a, err)
			}
			if i > 0 && !(a > c.knotAges[i-1]) {
				return bad("knot ages must be strictly increasing (%v after %v)", a, c.knotAges[i-1])
			}
			c.knotT = append(c.knotT, t)
		}
	}

	if math.IsNaN(s.Lambda) || math.IsInf(s.Lambda, 0) || s.Lambda < 0 {
		return bad("lambda %v must be finite and non-negative", s.Lambda)
	}
	c.lambda = s.Lambda
	switch s.Penalty {
	case "":
		c.penalty = PenaltyNone
		if s.Lambda > 0 {
			c.penalty = PenaltyFixed
		}
	case PenaltyAuto, PenaltyNone:
		if s.Lambda > 0 {
			return bad("penalty %q takes no lambda", s.Penalty)
		}
		c.penalty = s.Penalty
	case PenaltyFixed:
		c.penalty = PenaltyFixed
		if s.Lambda == 0 {
			c.penalty = PenaltyNone
		}
	default:
		return bad("unknown penalty %q (want %q, %q or %q)", s.Penalty, PenaltyAuto, PenaltyNone, PenaltyFixed)
	}

	switch {
	case s.PenaltyOrder == 0:
		c.order = DefaultPenaltyOrder
	case s.PenaltyOrder < 0 || s.PenaltyOrder > c.degree+1:
		return bad("penalty order %d not in 1..%d", s.PenaltyOrder, c.degree+1)
	default:
		c.order = s.PenaltyOrder
	}

	switch s.Criterion {
	case "", CriterionSIC:
		c.criterion = CriterionSIC
	case CriterionCV:
		c.criterion = CriterionCV
	default:
		return bad("unknown criterion %q (want %q or %q)", s.Criterion, CriterionSIC, CriterionCV)
	}
	switch {
	case s.Folds == 0:
		c.folds = DefaultFolds
	case s.Folds < 2:
		return bad("%d folds; cross-validation needs at least 2", s.Folds)
	default:
		c.folds = s.Folds
	}

	switch s.NonCross {
	case "", NonCrossConstrain:
		c.nonCross = NonCrossConstrain
	case NonCrossRearrange:
		c.nonCross = NonCrossRearrange
	default:
		return bad("unknown non-crossing mode %q (want %q or %q)", s.NonCross, NonCrossConstrain, NonCrossRearrange)
	}

	switch {
	case s.GuardMin == 0:
		c.guardMin = DefaultGuardMin
	case !(s.GuardMin > 0) || math.IsInf(s.GuardMin, 0):
		return bad("guard minimum %v must be positive", s.GuardMin)
	default:
		c.guardMin = s.GuardMin
	}
	switch {
	case s.GuardWindows == 0:
		c.windows = DefaultGuardWindows
	case s.GuardWindows < 0:
		return bad("%d guard windows", s.GuardWindows)
	default:
		c.windows = s.GuardWindows
	}

	switch {
	case s.Bootstrap == 0:
	case s.Bootstrap < MinReplicates:
		return bad("%d bootstrap replicates; give 0 or at least %d", s.Bootstrap, MinReplicates)
	default:
		c.boot = s.Bootstrap
	}
	switch {
	case s.BandPoints == 0:
		c.bandPoints = DefaultBandPoints
	case s.BandPoints < 2:
		return bad("%d band points; need at least 2", s.BandPoints)
	default:
		c.bandPoints = s.BandPoints
	}

	switch {
	case s.Workers == 0:
		c.workers = runtime.GOMAXPROCS(0)
	case s.Workers < 0:
		return bad("%d workers", s.Workers)
	default:
		c.workers = s.Workers
	}
	return c, nil
}

// Fit builds a growth reference from d. Each stratum is fitted separately
// (in parallel, see Settings.Workers):
//
//  1. Rows are sorted by transformed age t = T(age) so the B-spline design
//     is banded; sampling weights become solver weights.
//  2. The interior knots (at quantiles of t, spline.QuantileKnots, clamped
//     at the stratum's range of t) and the penalty weight are fixed by the
//     settings or chosen by the criterion (see smooth.go).
//  3. The sample-size guard flags chart centiles with too few expected
//     observations beyond them in some age window and drops extreme grid
//     taus the sample cannot support (guard.go).
//  4. The tau grid — the chart taus, 0.01, 0.02, ..., 0.99, and those of
//     0.001, 0.005, 0.995, 0.999 the guard keeps — is fitted without
//     crossing (noncross.go).
//  5. With Settings.Bootstrap, pointwise 95% bands are added for the chart
//     centiles (bootstrap.go).
//
// Strata appear sorted by name. InputHash is the hex SHA-256 of the rows in
// input order, each written as age, value and weight (1 when Data.Weight is
// nil) as big-endian IEEE-754 float64 bits, then the stratum and the subject
// label each as a big-endian uint32 byte length followed by its UTF-8 bytes
// (empty when absent). Every row is used: rows Fit cannot use are errors.
//
// Fit returns an error wrapping ErrData for bad data (mismatched column
// lengths, NaN or infinite ages or values, non-positive or non-finite
// weights, ages outside the age scale's domain — each naming the row,
// numbered from 1 — or a stratum too small or with a single age), one
// wrapping ErrSettings or ErrAgeScale for bad settings, and solver errors
// wrapped with the stratum and tau concerned. It does not panic on user
// input.
func Fit(d *Data, s *Settings) (*Reference, error) {
	c, err := s.resolve()
	if err != nil {
		return nil, err
	}
	return fitResolved(d, s, c, nil)
}

// fitResolved is Fit with resolved settings; chosen, when not nil, holds
// the smoothness already chosen for each stratum by name.
func fitResolved(d *Data, s *Settings, c *config, chosen map[string]*choice) (*Reference, error) {
	groups, hash, err := prepare(d, c)
	if err != nil {
		return nil, err
	}
	return fitGroups(groups, hash, s, c, chosen)
}

// fitGroups is fitResolved on rows already grouped and sorted (prepare)
// whose input hash is hash.
func fitGroups(groups []*rows, hash string, s *Settings, c *config, chosen map[string]*choice) (*Reference, error) {
	c.chosen = chosen
	strata, err := fitStrata(groups, c)
	if err != nil {
		return nil, err
	}
	ref := &Reference{
		Format:    "growband-reference",
		Version:   FormatVersion,
		AgeScale:  c.scale,
		Degree:    c.degree,
		Created:   time.Now().UTC().Truncate(time.Second),
		InputHash: hash,
		Caution:   Caution,
		Strata:    strata,
	}
	if s != nil {
		ref.Measure, ref.Unit, ref.AgeUnit = s.Measure, s.Unit, s.AgeUnit
		if !s.Created.IsZero() {
			ref.Created = s.Created.UTC().Truncate(time.Second)
		}
	}
	// Validated with its bases cached, as Load returns one: every look-up
	// would otherwise check the whole stratum again.
	if err := ref.ready(); err != nil {
		return nil, err
	}
	return ref, nil
}

// rows is one stratum's data sorted by transformed age.
type rows struct {
	name  string
	src   []int      // row index in the input Data of each row
	lo    [2]float64 // age and T(age) where the knots are clamped below
	hi    [2]float64 // and above: the stated range or the rows' range
	age   []float64  // ages, increasing
	t     []float64  // T(age), increasing; age itself for the identity scale
	y     []float64
	w     []float64
	subj  []int // subject index per row in 0..nsubj-1, or nil
	nsubj int
}

// weight returns the summed weights and Kish's effective sample size
// (sum w)^2 / sum w^2, which is n for equal weights.
func (r *rows) weight() (total, neff float64) {
	sq := 0.0
	for _, w := range r.w {
		total += w
		sq += w * w
	}
	return total, total * total / sq
}

// prepare validates d, groups it by stratum (sorted by name) and sorts each
// group by transformed age. It also returns the input hash.
func prepare(d *Data, c *config) ([]*rows, string, error) {
	groups, err := groupRows(d, c)
	if err != nil {
		return nil, "", err
	}
	return groups, inputHash(d), nil
}

// groupRows is prepare without the hash.
func groupRows(d *Data, c *config) ([]*rows, error) {
	if d == nil || len(d.Age) == 0 {
		return nil, fmt.Errorf("%w: no rows", ErrData)
	}
	n := len(d.Age)
	col := func(name string, l int) error {
		if l != n {
			return fmt.Errorf("%w: %d ages but %d %s", ErrData, n, l, name)
		}
		return nil
	}
	if err := col("values", len(d.Value)); err != nil {
		return nil, err
	}
	if d.Weight != nil {
		if err := col("weights", len(d.Weight)); err != nil {
			return nil, err
		}
	}
	if d.Stratum != nil {
		if err := col("stratum labels", len(d.Stratum)); err != nil {
			return nil, err
		}
	}
	if d.Subject != nil {
		if err := col("subject ids", len(d.Subject)); err != nil {
			return nil, err
		}
	}

	// Rows are grouped in two passes, a count and a fill, so that each
	// group's index list is allocated once at its size: at registry scale
	// the doubling of appended lists would cost more memory than the rows.
	t := make([]float64, n)
	gid := make([]int32, n)
	ids := map[string]int32{}
	var names []string
	var counts []int
	for i := range n {
		a, v := d.Age[i], d.Value[i]
		if math.IsNaN(a) || math.IsInf(a, 0) {
			return nil, fmt.Errorf("%w: row %d: age is %v", ErrData, i+1, a)
		}
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("%w: row %d: value is %v", ErrData, i+1, v)
		}
		if d.Weight != nil {
			if w := d.Weight[i]; !(w > 0) || math.IsInf(w, 0) {
				return nil, fmt.Errorf("%w: row %d: weight %v must be positive and finite", ErrData, i+1, w)
			}
		}
		ti, err := c.scale.Apply(a)
		if err != nil {
			return nil, fmt.Errorf("%w: row %d: %w", ErrData, i+1, err)
		}
		if c.ageRange != nil && (a < c.ageRange[0] || a > c.ageRange[1]) {
			return nil, fmt.Errorf("%w: row %d: age %v outside the stated age range [%v, %v]", ErrData, i+1, a, c.ageRange[0], c.ageRange[1])
		}
		t[i] = ti
		name := ""
		if d.Stratum != nil {
			name = d.Stratum[i]
		}
		g, ok := ids[name]
		if !ok {
			g = int32(len(names))
			ids[name] = g
			names = append(names, name)
			counts = append(counts, 0)
		}
		gid[i] = g
		counts[g]++
	}
	byGroup := make([][]int, len(names))
	for g, k := range counts {
		byGroup[g] = make([]int, 0, k)
	}
	for i, g := range gid {
		byGroup[g] = append(byGroup[g], i)
	}
	gid = nil

	order := make([]int, len(names))
	for g := range order {
		order[g] = g
	}
	slices.SortFunc(order, func(a, b int) int { return cmp.Compare(names[a], names[b]) })
	// With the identity age scale T(age) = age, and one slice serves both.
	identity := c.scale.Kind == "" || c.scale.Kind == ScaleIdentity
	groups := make([]*rows, len(names))
	for pos, g := range order {
		name, idx := names[g], byGroup[g]
		byGroup[g] = nil
		// Order by age, ties in input order, so the fit does not depend on
		// map iteration or sort internals (the order of a stable sort, at
		// a fraction of its cost on millions of rows).
		slices.SortFunc(idx, func(i, j int) int {
			if c := cmp.Compare(t[i], t[j]); c != 0 {
				return c
			}
			return cmp.Compare(i, j)
		})
		r := &rows{
			name: name,
			src:  idx,
			age:  make([]float64, len(idx)),
			y:    make([]float64, len(idx)),
			w:    make([]float64, len(idx)),
		}
		r.t = r.age
		if !identity {
			r.t = make([]float64, len(idx))
		}
		var subj map[string]int
		if d.Subject != nil {
			r.subj = make([]int, len(idx))
			subj = map[string]int{}
		}
		for k, i := range idx {
			r.age[k], r.y[k], r.w[k] = d.Age[i], d.Value[i], 1
			r.t[k] = t[i]
			if d.Weight != nil {
				r.w[k] = d.Weight[i]
			}
			if subj != nil {
				id, ok := subj[d.Subject[i]]
				if !ok {
					id = len(subj)
					subj[d.Subject[i]] = id
				}
				r.subj[k] = id
			}
		}
		r.nsubj = len(subj)
		m := len(idx) - 1
		r.lo, r.hi = [2]float64{r.age[0], r.t[0]}, [2]float64{r.age[m], r.t[m]}
		if c.ageRange != nil {
			r.lo, r.hi = [2]float64{c.ageRange[0], c.tRange[0]}, [2]float64{c.ageRange[1], c.tRange[1]}
		}
		if !(r.t[0] < r.t[len(idx)-1]) {
			return nil, fmt.Errorf("%w: stratum %q: all %d ages are equal", ErrData, name, len(idx))
		}
		groups[pos] = r
	}
	return groups, nil
}

// inputHash implements the canonical form documented at Fit.
func inputHash(d *Data) string {
	return inputHashRows(d, func(yield func(int) bool) {
		for i := range d.Age {
			if !yield(i) {
				return
			}
		}
	})
}

// inputHashRows is inputHash of the rows of d that rows yields, in
// ascending order.
func inputHashRows(d *Data, rows iter.Seq[int]) string {
	h := sha256.New()
	var buf []byte
	for i := range rows {
		buf = buf[:0]
		w := 1.0
		if d.Weight != nil {
			w = d.Weight[i]
		}
		buf = binary.BigEndian.AppendUint64(buf, math.Float64bits(d.Age[i]))
		buf = binary.BigEndian.AppendUint64(buf, math.Float64bits(d.Value[i]))
		buf = binary.BigEndian.AppendUint64(buf, math.Float64bits(w))
		for _, col := range [][]string{d.Stratum, d.Subject} {
			label := ""
			if col != nil {
				label = col[i]
			}
			buf = binary.BigEndian.AppendUint32(buf, uint32(len(label)))
			buf = append(buf, label...)
		}
		h.Write(buf)
	}
	return hex.EncodeToString(h.Sum(nil))
}

// progress writes "growband: ..." lines from many goroutines.
type progress struct {
	mu sync.Mutex
	w  io.Writer
}

func (p *progress) printf(format string, args ...any) {
	if p == nil || p.w == nil {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	fmt.Fprintf(p.w, "growband: "+format+"\n", args...)
}

// progressEvery is the least time between two progress lines of one
// stratum's grid (common practice for a terminal: a line every few
// seconds).
const progressEvery = 5 * time.Second

// gridProgress reports the curves of one stratum's grid as they are fitted,
// with an estimate of the time left from the pace so far.
type gridProgress struct {
	p      *progress
	name   string
	total  int
	mu     sync.Mutex
	done   int
	median bool // counted once, though both halves of a grid solve it
	start  time.Time
	last   time.Time
}

// eta returns the progress of a grid of total solves in stratum name.
func (p *progress) eta(name string, total int) *gridProgress {
	now := time.Now()
	return &gridProgress{p: p, name: name, total: total, start: now, last: now}
}

// tick counts one solve, reporting at most every progressEvery.
func (g *gridProgress) tick(tau float64) {
	if g.p == nil || g.p.w == nil {
		return
	}
	g.mu.Lock()
	defer g.mu.Unlock()
	if tau == 0.5 {
		if g.median {
			return
		}
		g.median = true
	}
	g.done++
	now := time.Now()
	if now.Sub(g.last) < progressEvery || g.done >= g.total {
		return
	}
	g.last = now
	left := time.Duration(float64(now.Sub(g.start)) / float64(g.done) * float64(g.total-g.done))
	g.p.printf("stratum %q: %d of %d centile curves fitted, about %s left", g.name, g.done, g.total, left.Round(time.Second))
}
