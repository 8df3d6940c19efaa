package cohort

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"

	"growband/curve"
	"growband/internal/scorefile"
)

// DefaultLevel is the coverage of every interval when Options.Level is 0
// (common practice).
const DefaultLevel = 0.95

// The cuts of the shares, in z units (common practice in growth monitoring:
// below -2 and -3 SD, above +2 SD).
const (
	cutLow, cutVeryLow, cutHigh = -2.0, -3.0, 2.0
)

// Kinds of summary groups.
const (
	KindBand    = "band"    // one stratum, one age band
	KindStratum = "stratum" // one stratum, all ages
	KindAll     = "all"     // every stratum and age
)

// Options tune Compare and CompareTwo. The zero value, and nil, mean no age
// bands, 95% intervals and unnamed cohorts.
type Options struct {
	// Bands are age band edges, strictly increasing: band i is
	// [Bands[i], Bands[i+1]), the last one closed. nil means no bands (per
	// stratum and overall only). Rows outside the bands still count in the
	// per-stratum and overall groups.
	Bands []float64
	// Level is the coverage of the intervals, in (0,1); 0 means
	// DefaultLevel.
	Level float64
	// Name and VsName label the cohort and, for CompareTwo, the other one.
	Name, VsName string
	// Limit: rows with |z| above it are listed as implausible and left out
	// of the estimates, as build does with its first-pass fit. 0 means
	// curve.ImplausibleZ (5, common practice); a negative Limit keeps all.
	Limit float64
}

// Result is the comparison of one cohort with a reference.
type Result struct {
	Cohort  string  `json:"cohort"`
	Measure string  `json:"measure"`
	Unit    string  `json:"unit"`
	AgeUnit string  `json:"age_unit"`
	Level   float64 `json:"level"`
	// Clustered: subject ids were given, so intervals are cluster-robust
	// over subjects; Weighted: survey weights weight the estimates.
	Clustered bool `json:"clustered"`
	Weighted  bool `json:"weighted"`
	// Method says in words how the intervals were computed.
	Method string `json:"method"`
	Rows   int    `json:"rows"`   // rows given (Run: the rows of the file, read or not)
	Scored int    `json:"scored"` // rows scored and summarised
	// Unscored lists every row that could not be used, with the reason.
	Unscored []Unscored `json:"unscored"`
	// NotScored counts the rows not used by reason (Unscored.Kind).
	NotScored []ReasonCount `json:"not_scored"`
	// OutsideBands counts scored rows outside every age band.
	OutsideBands int `json:"outside_bands"`
	// Z holds each row's z-score (NaN for unscored rows), in row order.
	Z      []float64 `json:"-"`
	Groups []Summary `json:"groups"`
}

// Unscored is a row that could not be scored or used.
type Unscored struct {
	Row    int    `json:"row"`    // index into the data columns
	Kind   string `json:"kind"`   // the reason in a few words, for counting
	Reason string `json:"reason"` // the reason in full, with the values
}

// ReasonCount is the number of rows not used for one reason.
type ReasonCount struct {
	Reason string `json:"reason"`
	N      int    `json:"n"`
}

// Reasons of rows Compare leaves out, besides those of scoring
// (scorefile.Reason).
const (
	KindWeight      = "weight not a positive number"
	KindImplausible = "implausible: |z| above the limit"
)

// Summary describes the z-scores of one group of rows.
type Summary struct {
	Kind     string   `json:"kind"`    // KindBand, KindStratum or KindAll
	Stratum  string   `json:"stratum"` // "" for KindAll
	AgeLo    float64  `json:"age_lo"`  // band edges; the observed range otherwise
	AgeHi    float64  `json:"age_hi"`
	N        int      `json:"n"`        // rows
	Subjects int      `json:"subjects"` // distinct subjects (= N without ids)
	SumW     float64  `json:"sum_weight"`
	Mean     Estimate `json:"mean_z"`
	SD       float64  `json:"sd_z"`
	Below2   Share    `json:"below_minus2"` // share with z < -2
	Below3   Share    `json:"below_minus3"` // share with z < -3
	Above2   Share    `json:"above_plus2"`  // share with z > +2
}

// Compare scores every row of d against ref and summarises the z-scores
// per stratum and age band (opt.Bands), per stratum, and overall: n, the
// mean z with its interval, the SD of z, and the shares below -2 and -3 and
// above +2 with Wilson intervals, beside the shares under the reference
// (Phi(-2), Phi(-3) and 1-Phi(2) of the standard normal).
//
// Rows that cannot be scored (unknown stratum, age outside the reference,
// value not finite or not positive for an LMS table, weight not positive)
// are listed in Result.Unscored with the reason, never dropped silently.
// When d.Subject is given the intervals are cluster-robust over subjects
// (rows with an empty id count as subjects of their own); when d.Weight is
// given the estimates are weighted. The package comment states the
// estimators.
//
// Errors wrap ErrOptions for bad options, ErrData for columns of different
// lengths or when no row can be scored.
//
// References:
//   - Wilson E B (1927). Journal of the American Statistical Association 22,
//     209–212.
//   - Kish L (1965). Survey Sampling. Wiley, New York.
//   - Liang K-Y, Zeger S L (1986). Biometrika 73, 13–22.
func Compare(ref *curve.Reference, d *curve.Data, opt *Options) (*Result, error) {
	o, err := resolve(opt)
	if err != nil {
		return nil, err
	}
	n := len(d.Age)
	if len(d.Value) != n || (d.Stratum != nil && len(d.Stratum) != n) ||
		(d.Weight != nil && len(d.Weight) != n) || (d.Subject != nil && len(d.Subject) != n) {
		return nil, fmt.Errorf("%w: %d ages, %d values, %d strata, %d weights, %d subjects", ErrData, n, len(d.Value), len(d.Stratum), len(d.Weight), len(d.Subject))
	}
	res := &Result{
		Cohort: o.Name, Measure: ref.Measure, Unit: ref.Unit, AgeUnit: ref.AgeUnit,
		Level: o.Level, Clustered: d.Subject != nil, Weighted: d.Weight != nil,
		Rows: n, Z: make([]float64, n),
	}
	res.Method = method(res.Clustered, res.Weighted, o.Level)
	for i := range res.Z {
		res.Z[i] = math.NaN()
	}
	reasons := map[int]Unscored{}
	if d.Weight != nil {
		for i, w := range d.Weight {
			if !(w > 0 && !math.IsInf(w, 0)) {
				reasons[i] = Unscored{i, KindWeight, fmt.Sprintf("weight %g is not a positive number", w)}
			}
		}
	}
	scores, err := ref.ScoreAll(nil, d)
	var rowErrs curve.RowErrors
	switch {
	case err == nil:
	case errors.As(err, &rowErrs):
		for _, re := range rowErrs {
			if _, ok := reasons[re.Row]; !ok {
				reasons[re.Row] = Unscored{re.Row, scorefile.Reason(ref, re.Err), re.Err.Error()}
			}
		}
	default:
		return nil, fmt.Errorf("%w: %w", ErrData, err)
	}
	byStratum := map[string][]int{}
	var all []int
	for i := range n {
		if u, ok := reasons[i]; ok {
			res.Unscored = append(res.Unscored, u)
			continue
		}
		if z := scores[i].Z; o.Limit > 0 && math.Abs(z) > o.Limit {
			res.Unscored = append(res.Unscored, Unscored{i, KindImplausible, fmt.Sprintf("implausible: |z| = %.3g > %g", math.Abs(z), o.Limit)})
			continue
		}
		res.Z[i] = scores[i].Z
		name := stratumOf(ref, d, i)
		byStratum[name] = append(byStratum[name], i)
		all = append(all, i)
	}
	res.Scored = len(all)
	res.NotScored = countKinds(res.Unscored)
	if len(all) == 0 {
		return nil, fmt.Errorf("%w: none of the %d rows can be scored", ErrData, n)
	}
	for _, st := range ref.Strata {
		rows := byStratum[st.Name]
		if len(rows) == 0 {
			continue
		}
		slices.SortStableFunc(rows, func(a, b int) int { return cmpFloat(d.Age[a], d.Age[b]) })
		if o.Bands != nil {
			for b := 0; b+1 < len(o.Bands); b++ {
				lo := sort.Search(len(rows), func(i int) bool { return d.Age[rows[i]] >= o.Bands[b] })
				hi := sort.Search(len(rows), func(i int) bool { return d.Age[rows[i]] >= o.Bands[b+1] })
				if b+2 == len(o.Bands) {
					hi = sort.Search(len(rows), func(i int) bool { return d.Age[rows[i]] > o.Bands[b+1] })
				}
				if hi > lo {
					res.Groups = append(res.Groups, summarize(KindBand, st.Name, o.Bands[b], o.Bands[b+1], rows[lo:hi], d, res.Z, o.Level))
				}
			}
		}
		res.Groups = append(res.Groups, summarize(KindStratum, st.Name, d.Age[rows[0]], d.Age[rows[len(rows)-1]], rows, d, res.Z, o.Level))
	}
	if o.Bands != nil {
		for _, i := range all {
			if !(d.Age[i] >= o.Bands[0] && d.Age[i] <= o.Bands[len(o.Bands)-1]) {
				res.OutsideBands++
			}
		}
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, i := range all {
		lo, hi = min(lo, d.Age[i]), max(hi, d.Age[i])
	}
	res.Groups = append(res.Groups, summarize(KindAll, "", lo, hi, all, d, res.Z, o.Level))
	return res, nil
}

// countKinds counts rows by Kind, in order of first appearance.
func countKinds(u []Unscored) []ReasonCount {
	var out []ReasonCount
	at := map[string]int{}
	for _, x := range u {
		k, ok := at[x.Kind]
		if !ok {
			k = len(out)
			at[x.Kind] = k
			out = append(out, ReasonCount{Reason: x.Kind})
		}
		out[k].N++
	}
	return out
}

func stratumOf(ref *curve.Reference, d *curve.Data, i int) string {
	name := ""
	if d.Stratum != nil {
		name = d.Stratum[i]
	}
	if st, err := ref.Stratum(name); err == nil {
		return st.Name // "" selects a single stratum of any name
	}
	return name
}

func cmpFloat(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// resolve checks opt and fills in the defaults.
func resolve(opt *Options) (Options, error) {
	var o Options
	if opt != nil {
		o = *opt
	}
	if o.Level == 0 {
		o.Level = DefaultLevel
	}
	if o.Limit == 0 {
		o.Limit = curve.ImplausibleZ
	}
	if !(o.Level > 0 && o.Level < 1) {
		return o, fmt.Errorf("%w: level %g not in (0,1)", ErrOptions, o.Level)
	}
	if o.Bands != nil {
		if len(o.Bands) < 2 {
			return o, fmt.Errorf("%w: %d band edges, need at least 2", ErrOptions, len(o.Bands))
		}
		for i, b := range o.Bands {
			if math.IsNaN(b) || math.IsInf(b, 0) || (i > 0 && !(b > o.Bands[i-1])) {
				return o, fmt.Errorf("%w: band edges must be finite and strictly increasing (edge %d is %g)", ErrOptions, i, b)
			}
		}
	}
	return o, nil
}

// method describes the intervals in words, for the output.
func method(clustered, weighted bool, level float64) string {
	pct := fmt.Sprintf("%g%%", 100*level)
	var m string
	if clustered {
		m = pct + " intervals are cluster-robust over subjects (sandwich variance with G/(G-1) correction): mean z by t on G-1 df, shares by Wilson at the Kish effective n = n/deff"
	} else {
		m = pct + " intervals treat rows as independent (no subject ids): mean z by t on n-1 df, shares by Wilson"
		if weighted {
			m = pct + " intervals treat rows as independent (no subject ids), with the sandwich variance of the weighted estimates: mean z by t on n-1 df, shares by Wilson at the Kish effective n = n/deff"
		}
	}
	if weighted {
		m += "; estimates weighted by the survey weights"
	}
	return m
}

// summarize describes the rows idx of d with z-scores z.
func summarize(kind, stratum string, lo, hi float64, idx []int, d *curve.Data, z []float64, level float64) Summary {
	s := sample{
		z: make([]float64, len(idx)), w: make([]float64, len(idx)), cl: make([]int, len(idx)),
		clustered: d.Subject != nil, weighted: d.Weight != nil,
	}
	ids := map[string]int{}
	for k, i := range idx {
		s.z[k] = z[i]
		s.w[k] = 1
		if d.Weight != nil {
			s.w[k] = d.Weight[i]
		}
		if d.Subject != nil && d.Subject[i] != "" {
			id, ok := ids[d.Subject[i]]
			if !ok {
				id = s.g
				ids[d.Subject[i]] = id
				s.g++
			}
			s.cl[k] = id
		} else {
			s.cl[k] = s.g
			s.g++
		}
	}
	out := Summary{Kind: kind, Stratum: stratum, AgeLo: lo, AgeHi: hi, N: len(idx), Subjects: s.g}
	for _, w := range s.w {
		out.SumW += w
	}
	var v float64
	out.Mean, v = s.mean(level)
	out.SD = s.sd(out.Mean.Value)
	meanDeff := v / (out.SD * out.SD / float64(len(idx)))
	out.Below2 = s.share(func(z float64) bool { return z < cutLow }, normP(cutLow), level, meanDeff)
	out.Below3 = s.share(func(z float64) bool { return z < cutVeryLow }, normP(cutVeryLow), level, meanDeff)
	out.Above2 = s.share(func(z float64) bool { return z > cutHigh }, 1-normP(cutHigh), level, meanDeff)
	return out
}
