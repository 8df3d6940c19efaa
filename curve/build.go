package curve

import (
	"cmp"
	"errors"
	"fmt"
	"iter"
	"math"
	"runtime/debug"
	"slices"
	"strings"

	"growband/internal/ageunit"
)

// ErrEdge: the fitted curves tie or hook at some age, or bend at an end of
// the age range where the data do not (see EdgeProblem); Build returns it
// unless BuildSettings.AcceptEdges.
var ErrEdge = errors.New("curve: centile curves tie, hook or bend where the data do not")

// DefaultScreenZ is the |z| against the screening fit beyond which Build
// excludes a row: common practice in growth monitoring treats |z| > 5 as a
// probable measurement or entry error rather than a real extreme.
const DefaultScreenZ = 5

// NoScreen as BuildSettings.ScreenZ turns the implausibility screen off.
const NoScreen = -1

// BuildSettings tune Build. The zero value, and nil, mean the documented
// defaults.
type BuildSettings struct {
	// Fit are the settings of the reference's fit (see Settings). Its
	// AgeScale may have Kind ScaleAuto: the scale is then chosen from the
	// data (see ChooseAgeScale).
	Fit Settings
	// AutoLogShift, with Fit.AgeScale.Kind = ScaleLog, replaces the shift
	// by one month plus the youngest age's distance below zero (in Fit.AgeUnit).
	AutoLogShift bool
	// ScreenZ is the |z| against the robust screening fit (RobustZ) beyond
	// which a row is excluded before the reference is fitted; 0 means
	// DefaultScreenZ, NoScreen (any negative value) no screen.
	ScreenZ float64
	// AcceptEdges builds the reference even when the edge checks
	// (CheckEdges) report problems; they are then returned in
	// Built.Problems. Otherwise Build fails with ErrEdge.
	AcceptEdges bool
}

// Exclusion says why Build left a row of its data out.
type Exclusion struct {
	Row    int    // index of the row in the Data given to Build
	Reason string // ExcludedAgeRange or ExcludedImplausible
	Z      float64
	Detail string // for example "z = -7.31"
}

// The reasons of an Exclusion.
const (
	ExcludedAgeRange    = "age outside the stated age range"
	ExcludedImplausible = "implausible against the screening fit"
)

// Built is what Build made.
type Built struct {
	Reference *Reference
	// Excluded lists the rows left out, in row order.
	Excluded []Exclusion
	// Used lists the rows of the Data the reference was fitted on, in row
	// order.
	Used []int
	// Scales holds the candidate age scales with their criterion values
	// when the scale was chosen from the data; nil otherwise.
	Scales []ScaleChoice
	// Problems lists what the edge checks found (empty unless accepted).
	Problems []EdgeProblem
}

// Build runs the whole pipeline from measurements to a reference, the one
// `growband build` runs:
//
//  1. rows outside a stated age range (Settings.AgeRange) are excluded;
//  2. the implausibility screen (RobustZ) scores every row against a fit of
//     the central centiles that gross errors cannot pull (on the identity
//     age scale when the scale is automatic), and excludes rows with
//     |z| > ScreenZ;
//  3. with an automatic age scale, the scale is chosen from the data
//     (ChooseAgeScale);
//  4. the reference is fitted on the rows left (Fit);
//  5. the edge checks (CheckEdges) look for tied, hooked or bending curves;
//     a problem fails the build with ErrEdge unless AcceptEdges.
//
// Build holds one copy of the rows it uses, grouped by stratum and sorted
// by age once: the screen, the age-scale choice and the fit all read it,
// the screen's exclusions are removed from it in place, and each candidate
// scale only recomputes T(age). Above strataAtOnceRows rows the strata are
// fitted one after another, and the garbage collector's target is lowered
// to largeGCPercent while Build runs (debug.SetGCPercent, restored on
// return; a lower target set by the program is kept). The package
// documentation gives the memory per row.
//
// Build returns the errors of Fit, and ErrEdge (wrapped with the list of
// problems) as said. It does not panic on user input.
func Build(d *Data, s *BuildSettings) (*Built, error) {
	if s == nil {
		s = &BuildSettings{}
	}
	if err := d.checkColumns(); err != nil {
		return nil, err
	}
	if len(d.Age) > strataAtOnceRows {
		if old := debug.SetGCPercent(largeGCPercent); old < largeGCPercent {
			debug.SetGCPercent(old) // the program asked for less (or none)
		} else {
			defer debug.SetGCPercent(old)
		}
	}
	fs := s.Fit
	if s.AutoLogShift && fs.AgeScale.Kind == ScaleLog {
		fs.AgeScale.Shift = autoLogShift(d.Age, fs.AgeUnit)
	}
	b := &Built{}
	// keep lists the rows inside a stated age range when it excludes some;
	// nil means every row.
	var keep []int
	if r := fs.AgeRange; r[1] > r[0] {
		for i, a := range d.Age {
			if a < r[0] || a > r[1] {
				b.Excluded = append(b.Excluded, Exclusion{Row: i, Reason: ExcludedAgeRange, Z: math.NaN(),
					Detail: fmt.Sprintf("age %v outside [%v, %v]", a, r[0], r[1])})
				continue
			}
			keep = append(keep, i)
		}
		if len(keep) == len(d.Age) {
			keep = nil
		}
	}
	// One row store serves the screen, the choice of age scale and the fit:
	// the kept rows grouped by stratum and sorted by age (T(age) of a given
	// scale), compacted in place when the screen excludes rows; each
	// candidate scale only recomputes T(age), whose order is the ages'.
	storeSettings := fs
	if storeSettings.AgeScale.Kind == ScaleAuto {
		storeSettings.AgeScale = AgeScale{}
	}
	lim := s.ScreenZ
	if lim == 0 {
		lim = DefaultScreenZ
	}
	screen := lim >= 0
	inScreen := func(err error) error {
		if screen {
			return fmt.Errorf("implausibility screen: %w", err)
		}
		return err
	}
	c, err := storeSettings.resolve()
	if err != nil {
		return nil, inScreen(err)
	}
	// Only an age range that excludes rows costs a copy of the rest.
	data := d
	if keep != nil {
		data = d.rows(keep)
	}
	groups, err := groupRows(data, c)
	data = nil
	if err != nil {
		return nil, inScreen(err)
	}
	if keep != nil {
		for _, r := range groups {
			for k, i := range r.src {
				r.src[k] = keep[i]
			}
		}
	}

	if screen {
		z, err := robustZRows(groups, len(d.Age), c)
		if err != nil {
			return nil, inScreen(err)
		}
		out := func(i int) bool { return math.Abs(z[i]) > lim }
		for _, r := range groups {
			for _, i := range r.src {
				if out(i) {
					b.Excluded = append(b.Excluded, Exclusion{Row: i, Reason: ExcludedImplausible, Z: z[i],
						Detail: fmt.Sprintf("z = %.2f", z[i])})
				}
			}
		}
		if groups, err = compact(groups, out, c); err != nil {
			return nil, err
		}
	}
	sortExclusions(b.Excluded)
	keep = nil
	hash := inputHashRows(d, b.used(len(d.Age)))

	var ref *Reference
	var problems []EdgeProblem
	if fs.AgeScale.Kind == ScaleAuto {
		ref, b.Scales, problems, err = chooseScale(d, groups, hash, &fs)
	} else {
		ref, err = fitGroups(groups, hash, &fs, c, nil)
		if err == nil {
			problems, err = checkEdgesRows(ref, groups)
		}
	}
	if err != nil {
		return nil, err
	}
	b.Reference = ref
	// Listed last, so that the list is not held through the fit.
	b.Used = make([]int, 0, len(d.Age)-len(b.Excluded))
	for i := range b.used(len(d.Age)) {
		b.Used = append(b.Used, i)
	}
	if len(problems) > 0 {
		if !s.AcceptEdges {
			return nil, edgeError(problems)
		}
		b.Problems = problems
	}
	return b, nil
}

// strataAtOnceRows is the number of rows above which the strata are fitted
// one after another rather than together: each stratum's fit holds its
// B-spline design and two solver tables (one per half of the tau grid,
// which still run in parallel and keep two cores busy), so one stratum at a
// time lowers the peak memory at the same speed (measured on this 2-core
// machine, 3,000,000 rows in two strata: 0.50 GB resident against 0.62 GB
// with the strata together, at the same wall and CPU time).
const strataAtOnceRows = 2000000

// largeGCPercent is the garbage collector's target (debug.SetGCPercent)
// while Build works on more than strataAtOnceRows rows, unless the program
// set a lower one: between collections the heap may grow by a quarter of
// the memory in use rather than double it (Go's default, 100). The large
// arrays of a build hold no pointers, so collections are cheap. Measured on
// a shared 2-core machine: 3,000,000 rows peaked at 0.98 GB resident at 100
// and 0.62 GB at 25 in the same CPU time; 10,000,000 rows peak at 1.70 GB
// at 25 and 1.58 GB at 10, where collections took 17 s of CPU time.
const largeGCPercent = 25

// together is the number of groups eachStratum runs at once.
func together(groups []*rows) int {
	total := 0
	for _, r := range groups {
		total += len(r.y)
	}
	if total <= strataAtOnceRows {
		return len(groups)
	}
	return 1
}

// eachStratum runs f for every group: concurrently (parallel) unless the
// groups together exceed strataAtOnceRows rows, then in order, stopping at
// the first error.
func eachStratum(groups []*rows, f func(g int) error) error {
	if together(groups) > 1 {
		return parallel(len(groups), f)
	}
	for g := range groups {
		if err := f(g); err != nil {
			return err
		}
	}
	return nil
}

// compact removes the rows whose src drop reports from the groups, in
// place, and drops groups left empty. Subjects are renumbered and the ends
// of the range reset as prepare would set them for the rows left.
func compact(groups []*rows, drop func(src int) bool, c *config) ([]*rows, error) {
	out := groups[:0]
	for _, r := range groups {
		k := 0
		for j, i := range r.src {
			if drop(i) {
				continue
			}
			r.src[k], r.age[k], r.y[k], r.w[k] = i, r.age[j], r.y[j], r.w[j]
			if &r.t[0] != &r.age[0] {
				r.t[k] = r.t[j]
			}
			if r.subj != nil {
				r.subj[k] = r.subj[j]
			}
			k++
		}
		if k == 0 {
			continue
		}
		r.src, r.age, r.y, r.w = r.src[:k], r.age[:k], r.y[:k], r.w[:k]
		r.t = r.t[:k]
		if r.subj != nil {
			r.subj = r.subj[:k]
		}
		if err := r.settle(c); err != nil {
			return nil, err
		}
		out = append(out, r)
	}
	return out, nil
}

// rescale recomputes T(age) of every group for the age scale of c; the
// rows stay in age order, which is T's, unless rounding ties or swaps
// T(age) of distinct ages, when they are sorted again as prepare sorts them
// (by T, ties in input order).
func rescale(groups []*rows, c *config) error {
	identity := c.scale.Kind == "" || c.scale.Kind == ScaleIdentity
	for _, r := range groups {
		if identity {
			r.t = r.age
		} else {
			if &r.t[0] == &r.age[0] {
				r.t = make([]float64, len(r.age))
			}
			for k, a := range r.age {
				t, err := c.scale.Apply(a)
				if err != nil {
					return fmt.Errorf("%w: row %d: %w", ErrData, r.src[k]+1, err)
				}
				r.t[k] = t
			}
		}
		for k := 1; k < len(r.t); k++ {
			if r.t[k] < r.t[k-1] || (r.t[k] == r.t[k-1] && r.src[k] < r.src[k-1]) {
				r.resort()
				break
			}
		}
		if err := r.settle(c); err != nil {
			return err
		}
	}
	return nil
}

// resort sorts the rows by T(age), ties in input order.
func (r *rows) resort() {
	perm := make([]int, len(r.t))
	for k := range perm {
		perm[k] = k
	}
	slices.SortFunc(perm, func(i, j int) int {
		if c := cmp.Compare(r.t[i], r.t[j]); c != 0 {
			return c
		}
		return cmp.Compare(r.src[i], r.src[j])
	})
	shared := &r.t[0] == &r.age[0]
	r.src = permuted(r.src, perm)
	r.age, r.y, r.w = permuted(r.age, perm), permuted(r.y, perm), permuted(r.w, perm)
	if shared {
		r.t = r.age
	} else {
		r.t = permuted(r.t, perm)
	}
	if r.subj != nil {
		r.subj = permuted(r.subj, perm)
	}
}

func permuted[T any](a []T, perm []int) []T {
	out := make([]T, len(a))
	for k, j := range perm {
		out[k] = a[j]
	}
	return out
}

// settle numbers the subjects of r in order of first appearance and sets
// the ends of the range, as prepare does, after rows were removed or
// reordered; it reports a group whose ages are all equal.
func (r *rows) settle(c *config) error {
	if r.subj != nil {
		id := make([]int, r.nsubj)
		for k := range id {
			id[k] = -1
		}
		next := 0
		for k, old := range r.subj {
			if id[old] < 0 {
				id[old] = next
				next++
			}
			r.subj[k] = id[old]
		}
		r.nsubj = next
	}
	m := len(r.t) - 1
	r.lo, r.hi = [2]float64{r.age[0], r.t[0]}, [2]float64{r.age[m], r.t[m]}
	if c.ageRange != nil {
		r.lo, r.hi = [2]float64{c.ageRange[0], c.tRange[0]}, [2]float64{c.ageRange[1], c.tRange[1]}
	}
	if !(r.t[0] < r.t[m]) {
		return fmt.Errorf("%w: stratum %q: all %d ages are equal", ErrData, r.name, len(r.t))
	}
	return nil
}

// used yields the rows 0..n-1 not in b.Excluded (sorted by row), in order.
func (b *Built) used(n int) iter.Seq[int] {
	return func(yield func(int) bool) {
		k := 0
		for i := range n {
			if k < len(b.Excluded) && b.Excluded[k].Row == i {
				k++
				continue
			}
			if !yield(i) {
				return
			}
		}
	}
}

// edgeError lists problems in one error wrapping ErrEdge.
func edgeError(problems []EdgeProblem) error {
	var sb strings.Builder
	for _, p := range problems {
		sb.WriteString("\n  ")
		sb.WriteString(p.String())
	}
	return fmt.Errorf("%w:%s", ErrEdge, sb.String())
}

// autoLogShift is the offset c of log(age + c) chosen for ages: one month
// in the age unit (any name ageunit.Parse reads; "" or an unknown name is
// taken as months), plus the youngest age's distance below zero, so that
// the log spreads the first months without an extreme at birth.
func autoLogShift(ages []float64, ageUnit string) float64 {
	month := 1.0
	if u, err := ageunit.Parse(ageUnit); err == nil {
		month = ageunit.Months.Convert(1, u)
	}
	lo := 0.0
	for _, a := range ages {
		lo = min(lo, a)
	}
	return month - lo
}

// rows returns the rows idx of d as new Data.
func (d *Data) rows(idx []int) *Data {
	if len(idx) == len(d.Age) {
		return d
	}
	out := &Data{Age: make([]float64, len(idx)), Value: make([]float64, len(idx))}
	if d.Weight != nil {
		out.Weight = make([]float64, len(idx))
	}
	if d.Stratum != nil {
		out.Stratum = make([]string, len(idx))
	}
	if d.Subject != nil {
		out.Subject = make([]string, len(idx))
	}
	for k, i := range idx {
		out.Age[k], out.Value[k] = d.Age[i], d.Value[i]
		if d.Weight != nil {
			out.Weight[k] = d.Weight[i]
		}
		if d.Stratum != nil {
			out.Stratum[k] = d.Stratum[i]
		}
		if d.Subject != nil {
			out.Subject[k] = d.Subject[i]
		}
	}
	return out
}

func sortExclusions(e []Exclusion) {
	slices.SortFunc(e, func(a, b Exclusion) int { return cmp.Compare(a.Row, b.Row) })
}

// checkColumns reports no rows or columns of different lengths, as Fit
// does, before Build indexes them.
func (d *Data) checkColumns() error {
	if d == nil || len(d.Age) == 0 {
		return fmt.Errorf("%w: no rows", ErrData)
	}
	n := len(d.Age)
	for _, c := range []struct {
		name string
		l    int
		opt  bool
	}{{"values", len(d.Value), false}, {"weights", len(d.Weight), d.Weight == nil},
		{"stratum labels", len(d.Stratum), d.Stratum == nil}, {"subject ids", len(d.Subject), d.Subject == nil}} {
		if !c.opt && c.l != n {
			return fmt.Errorf("%w: %d ages but %d %s", ErrData, n, c.l, c.name)
		}
	}
	return nil
}
