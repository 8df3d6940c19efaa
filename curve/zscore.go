package curve

import (
	"fmt"
	"math"
	"sort"
	"strings"
	"sync"

	"growband/spline"
)

// ImplausibleZ is the |z| beyond which a score is flagged FlagImplausible:
// common practice in growth monitoring treats |z| > 5 as a probable
// measurement or entry error rather than a real extreme.
const ImplausibleZ = 5

// ScoreFlags is a set of remarks on one score.
type ScoreFlags uint8

// The remarks Score can make.
const (
	// FlagBeyondTail: the measurement lies outside every fitted centile
	// curve of the tau grid, so its z-score rests on the tail model alone
	// (see Tail) rather than on a curve fitted near it.
	FlagBeyondTail ScoreFlags = 1 << iota
	// FlagImplausible: |z| > ImplausibleZ.
	FlagImplausible
	// FlagSparse: the measurement lies beyond a centile that the
	// sample-size guard flagged at this age (Stratum.Flags): few
	// observations supported the curve there.
	FlagSparse
	// FlagUnscored: ScoreAll could not score the row (see its error).
	FlagUnscored
)

var flagNames = []struct {
	f    ScoreFlags
	name string
}{
	{FlagBeyondTail, "beyond-tail"},
	{FlagImplausible, "implausible"},
	{FlagSparse, "sparse"},
	{FlagUnscored, "unscored"},
}

// Has reports whether every flag in g is set in f.
func (f ScoreFlags) Has(g ScoreFlags) bool { return f&g == g }

// String returns the flag names joined by ";", or "" for no flags.
func (f ScoreFlags) String() string {
	var parts []string
	for _, fn := range flagNames {
		if f&fn.f != 0 {
			parts = append(parts, fn.name)
		}
	}
	return strings.Join(parts, ";")
}

// MarshalText writes String, so flags read as words in JSON.
func (f ScoreFlags) MarshalText() ([]byte, error) { return []byte(f.String()), nil }

// Score is the place of one measurement in a reference.
type Score struct {
	Centile float64    // percent, 100*Phi(Z)
	Z       float64    // z-score (SDS)
	Flags   ScoreFlags // remarks; zero when there are none
}

// Score places a measurement of the given value at the given age in the
// stratum's distribution and returns its z-score and centile.
//
// At the age the fitted quantiles q_k of the grid taus tau_k are
// non-decreasing in k (by construction; rounding inversions are turned into
// ties). Within the body of the distribution (the grid taus from Tail.Lo to
// Tail.Hi, those the data support directly), with z_k = Phi^-1(tau_k):
//
//   - q_k < value < q_k+1: z is linear in the value between (q_k, z_k) and
//     (q_k+1, z_k+1). This is monotone and exact at the grid: a value equal
//     to q_k scores z_k.
//   - value equal to several tied q_j..q_m: z = (z_j + z_m)/2, the middle
//     of the levels it matches.
//
// Beyond the body the stratum's tail model decides: a Box–Cox normal fitted
// to all the body's centiles, joined continuously at the body's edge (see
// Tail for the rule, its reasons and references). FlagBeyondTail marks a
// value beyond every fitted curve of the grid.
//
// A stratum of an LMS table (Stratum.LMS) is scored by the LMS formula
// instead, as documented on LoadLMSTable.
//
// The centile is 100*Phi(z). FlagImplausible marks |z| > ImplausibleZ and
// FlagSparse a value beyond a centile flagged by the sample-size guard.
// Errors wrap ErrUnknownStratum, ErrAgeRange (never extrapolated in age),
// ErrValue (NaN or infinite value, or one outside the tail model's support:
// zero or below for a positive measurement) or ErrDegenerate (all body
// quantiles equal at the age, or no tail model fits).
func (r *Reference) Score(stratum string, age, value float64) (Score, error) {
	st, b, err := r.lookup(stratum)
	if err != nil {
		return Score{}, err
	}
	ws := scoreSpaces.Get().(*scoreSpace)
	defer scoreSpaces.Put(ws)
	return ws.score(r, st, b, age, value)
}

// scoreSpaces recycles the scratch of single scores, which clinics and
// batch uploads make one row at a time.
var scoreSpaces = sync.Pool{New: func() any { return new(scoreSpace) }}

// scoreSpace is the scratch of one scoring: basis values and the fitted
// quantiles at the age.
type scoreSpace struct {
	w, q []float64
}

func (ws *scoreSpace) score(r *Reference, st *Stratum, b *spline.Basis, age, value float64) (Score, error) {
	if !isFin(value) {
		return Score{}, fmt.Errorf("%w: %g", ErrValue, value)
	}
	if st.LMS != nil {
		return ws.scoreLMS(r, st, age, value)
	}
	t, err := r.transform(st, b, age)
	if err != nil {
		return Score{}, err
	}
	ws.w = sized(ws.w, r.Degree+1)
	ws.q = sized(ws.q, len(st.Taus))
	lo, hi, err := r.levelsAt(ws.q, st, b, age, t, ws.w, false)
	if err != nil {
		return Score{}, err
	}
	var z float64
	var flags ScoreFlags
	switch q := ws.q; {
	case !(q[hi]-q[lo] > monoSlack*max(math.Abs(q[lo]), math.Abs(q[hi]))):
		// The body's curves coincide here (up to the solver's rounding):
		// there is no spread to place a value in.
		return Score{}, fmt.Errorf("stratum %q, age %g: %w: the centiles from %g to %g all equal %g",
			st.Name, age, ErrDegenerate, st.Taus[lo], st.Taus[hi], q[lo])
	case value < q[lo] || value > q[hi]:
		k := lo
		if value > q[hi] {
			k = hi
		}
		tl, err := r.tailOf(st, b)
		if err == nil {
			z, err = tl.tailZ(age, q[k], st.Taus[k], value)
		}
		if err != nil {
			return Score{}, fmt.Errorf("stratum %q, age %g: %w", st.Name, age, err)
		}
		if value < q[0] || value > q[len(q)-1] {
			flags = FlagBeyondTail
		}
	default:
		z, err = place(st.Taus[lo:hi+1], q[lo:hi+1], value)
		if err != nil {
			return Score{}, fmt.Errorf("stratum %q, age %g: %w", st.Name, age, err)
		}
	}
	p := normP(z)
	if math.Abs(z) > ImplausibleZ {
		flags |= FlagImplausible
	}
	for _, f := range st.Flags {
		if f.Action != "flagged" || !(age >= f.AgeLo && age < f.AgeHi) {
			continue
		}
		if (f.Tau < 0.5 && p < f.Tau) || (f.Tau > 0.5 && p > f.Tau) {
			flags |= FlagSparse
		}
	}
	return Score{Centile: 100 * p, Z: z, Flags: flags}, nil
}

// place returns the z-score of v, which lies within the non-decreasing
// fitted quantiles q of the levels taus (the body), by the rules documented
// on Score.
func place(taus, q []float64, v float64) (float64, error) {
	n := len(q)
	if !(q[0] < q[n-1]) {
		return 0, fmt.Errorf("%w: all equal %g", ErrDegenerate, q[0])
	}
	lo := sort.SearchFloat64s(q, v)                                       // first q >= v
	hi := lo + sort.Search(n-lo, func(i int) bool { return q[lo+i] > v }) // first q > v
	switch {
	case hi > lo: // v equals q_lo..q_hi-1
		if hi-lo == 1 {
			return normZ(taus[lo]), nil
		}
		return (normZ(taus[lo]) + normZ(taus[hi-1])) / 2, nil
	case lo == 0 || lo == n:
		panic(fmt.Sprintf("curve: place: %g outside the body [%g, %g]", v, q[0], q[n-1]))
	default: // q[lo-1] < v < q[lo]
		z0, z1 := normZ(taus[lo-1]), normZ(taus[lo])
		u := (v - q[lo-1]) / (q[lo] - q[lo-1])
		// u is monotone in v, so z is; the clamp keeps rounding from
		// lifting z above z1, the score of the value q[lo] itself.
		return min(z0+u*(z1-z0), z1), nil
	}
}

// RowError is one row that ScoreAll could not score.
type RowError struct {
	Row int // index into the data columns
	Err error
}

func (e RowError) Error() string { return fmt.Sprintf("row %d: %v", e.Row, e.Err) }
func (e RowError) Unwrap() error { return e.Err }

// RowErrors lists the rows ScoreAll could not score, in row order.
type RowErrors []RowError

// maxListedRows is how many failed rows RowErrors.Error spells out.
const maxListedRows = 5

func (e RowErrors) Error() string {
	var b strings.Builder
	fmt.Fprintf(&b, "curve: %d rows not scored", len(e))
	for i, re := range e {
		if i == maxListedRows {
			fmt.Fprintf(&b, "; ... (%d more)", len(e)-i)
			break
		}
		fmt.Fprintf(&b, "; %v", re)
	}
	return b.String()
}

// Unwrap lets errors.Is and errors.As see every row's error.
func (e RowErrors) Unwrap() []error {
	errs := make([]error, len(e))
	for i := range e {
		errs[i] = e[i]
	}
	return errs
}

// ScoreAll scores every row of d (Age, Value and Stratum; a nil Stratum
// column means the name "" for every row; Weight and Subject are ignored)
// into dst, resized to the number of rows, and returns it. Each score is the
// one Score gives for the row. A row that cannot be scored gets NaN Z and
// Centile and FlagUnscored, and the returned error, of type RowErrors, lists
// it with the reason; the other rows are still scored. Columns of different
// lengths return an error wrapping ErrData and no scores.
func (r *Reference) ScoreAll(dst []Score, d *Data) ([]Score, error) {
	n := len(d.Age)
	if len(d.Value) != n || (d.Stratum != nil && len(d.Stratum) != n) {
		return dst[:0], fmt.Errorf("%w: %d ages, %d values, %d strata", ErrData, n, len(d.Value), len(d.Stratum))
	}
	dst = sized(dst, n)
	type prepared struct {
		st  *Stratum
		b   *spline.Basis
		err error
	}
	cache := make(map[string]prepared)
	var ws scoreSpace
	var bad RowErrors
	for i := range n {
		name := ""
		if d.Stratum != nil {
			name = d.Stratum[i]
		}
		p, ok := cache[name]
		if !ok {
			p.st, p.b, p.err = r.lookup(name)
			cache[name] = p
		}
		err := p.err
		if err == nil {
			dst[i], err = ws.score(r, p.st, p.b, d.Age[i], d.Value[i])
		}
		if err != nil {
			dst[i] = Score{Centile: math.NaN(), Z: math.NaN(), Flags: FlagUnscored}
			bad = append(bad, RowError{Row: i, Err: err})
		}
	}
	if bad != nil {
		return dst, bad
	}
	return dst, nil
}
