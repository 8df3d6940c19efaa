package cohort

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"slices"
	"strconv"

	"growband/curve"
	"growband/curve/qrinfer"
	"growband/render"
)

// FalteringCentile is the conditional centile below which a later visit
// counts as growth faltering: the 5th, as issue 13 of this project asks
// (a common screening cut for conditional growth, common practice).
const FalteringCentile = 5

// Faltering is the share of later visits below the FalteringCentile-th
// conditional centile given the child's previous visit, for one stratum or
// overall.
type Faltering struct {
	Kind     string `json:"kind"` // "stratum" or "overall"
	Stratum  string `json:"stratum"`
	Visits   int    `json:"visits"`   // later visits with a conditional centile
	Children int    `json:"children"` // children they belong to
	Below    Share  `json:"below"`    // share below the cut, Wilson interval clustered by child
	Method   string `json:"method"`
}

// GrowthFaltering scores every visit of d against the previous visit of the
// same child with ref's conditional model (curve.ScoreChanges; d.Subject is
// required) and estimates, per stratum and overall, the share of later visits
// below the FalteringCentile-th conditional centile. Its Wilson interval uses
// the Kish effective n of the cluster-robust variance over children (see the
// package doc), so a child's several visits count as one cluster. Visits
// without a conditional score (first visits, gaps outside the model) are not
// counted. The error wraps ErrNoSubjects or curve.ErrNoConditional.
func GrowthFaltering(ref *curve.Reference, d *curve.Data, level float64) ([]Faltering, error) {
	if d.Subject == nil {
		return nil, fmt.Errorf("%w: growth faltering compares each visit with the same child's previous one", ErrNoSubjects)
	}
	if level == 0 {
		level = DefaultLevel
	}
	changes := ref.ScoreChanges(d)
	var strata []string
	byStratum := map[string][]int{}
	for i, c := range changes {
		if c.Err != nil {
			if errors.Is(c.Err, curve.ErrNoConditional) && !hasConditional(ref) {
				return nil, c.Err
			}
			continue
		}
		s := ""
		if d.Stratum != nil {
			s = d.Stratum[i]
		}
		if _, ok := byStratum[s]; !ok {
			strata = append(strata, s)
		}
		byStratum[s] = append(byStratum[s], i)
	}
	slices.Sort(strata)
	z := make([]float64, len(changes))
	for i, c := range changes {
		z[i] = c.Z
	}
	cut := normQ(FalteringCentile / 100.0)
	one := func(kind, stratum string, idx []int) Faltering {
		smp := sampleOf(idx, d, z)
		m, v := smp.ratio(smp.z)
		sd := smp.sd(m)
		meanDeff := v / (sd * sd / float64(len(idx))) // stands in where the share is 0 or 1
		f := Faltering{Kind: kind, Stratum: stratum, Visits: len(idx), Children: smp.g,
			Below:  smp.share(func(v float64) bool { return v < cut }, FalteringCentile/100.0, level, meanDeff),
			Method: fmt.Sprintf("share below the %gth conditional centile; %g%% Wilson interval at the Kish effective n of the cluster-robust variance over children", float64(FalteringCentile), 100*level)}
		return f
	}
	var out []Faltering
	var all []int
	for _, s := range strata {
		out = append(out, one("stratum", s, byStratum[s]))
		all = append(all, byStratum[s]...)
	}
	if len(strata) > 1 {
		slices.Sort(all)
		out = append(out, one("overall", "", all))
	}
	return out, nil
}

func hasConditional(ref *curve.Reference) bool {
	for _, st := range ref.Strata {
		if st.Conditional != nil {
			return true
		}
	}
	return false
}

// sampleOf builds the clustered sample of rows idx with values z.
func sampleOf(idx []int, d *curve.Data, z []float64) *sample {
	s := &sample{z: make([]float64, len(idx)), w: make([]float64, len(idx)), cl: make([]int, len(idx)),
		clustered: d.Subject != nil, weighted: d.Weight != nil}
	ids := map[string]int{}
	for k, i := range idx {
		s.z[k], s.w[k] = z[i], 1
		if d.Weight != nil {
			s.w[k] = d.Weight[i]
		}
		id, ok := ids[d.Subject[i]]
		if !ok || d.Subject[i] == "" {
			id = s.g
			ids[d.Subject[i]] = id
			s.g++
		}
		s.cl[k] = id
	}
	return s
}

// ShiftKnots is the number of interior knots of the age splines that adjust
// the distribution-wide comparison for age (at quantiles of the pooled
// ages): as the conditional model's default, enough for a smooth trend.
const ShiftKnots = 3

// Shift is the difference between two cohorts at one centile of one
// stratum, adjusted for age: the coefficient of the indicator of cohort A in
// a quantile regression of the measurement on B-splines in age and the
// indicator, fitted to both cohorts together.
type Shift struct {
	Stratum string  `json:"stratum"`
	Centile float64 `json:"centile"`
	NA      int     `json:"n_a"`
	NB      int     `json:"n_b"`
	Diff    float64 `json:"diff"` // A minus B, measurement units
	SE      float64 `json:"se"`
	Lo      float64 `json:"lo"`
	Hi      float64 `json:"hi"`
	P       float64 `json:"p"`
	Method  string  `json:"method"`
}

// CompareCentiles compares cohorts a and b at every chart centile of each
// stratum of ref: the A minus B difference of the age-adjusted conditional
// quantiles, with an interval and p-value by qrinfer (the bootstrap over
// children when both cohorts have subject ids, so repeated visits count as
// clusters; else the Hall–Sheather sandwich). Ages outside a stratum's range
// are left out. A stratum with fewer rows than ten per coefficient in either
// cohort is skipped (common practice).
func CompareCentiles(ref *curve.Reference, a, b *curve.Data, level float64, seed uint64) ([]Shift, error) {
	if level == 0 {
		level = DefaultLevel
	}
	method := qrinfer.MethodSandwich
	if a.Subject != nil && b.Subject != nil {
		method = qrinfer.MethodBootstrap
	}
	var out []Shift
	for _, st := range ref.Strata {
		var age, y, ind []float64
		var subj []int
		ids := map[string]int{}
		na, nb := 0, 0
		add := func(d *curve.Data, isA float64, prefix string) {
			for i := range d.Age {
				if d.Stratum != nil && d.Stratum[i] != st.Name || !(d.Age[i] >= st.AgeMin && d.Age[i] <= st.AgeMax) {
					continue
				}
				age, y, ind = append(age, d.Age[i]), append(y, d.Value[i]), append(ind, isA)
				key := prefix + strconv.Itoa(i)
				if d.Subject != nil && d.Subject[i] != "" {
					key = prefix + d.Subject[i]
				}
				id, ok := ids[key]
				if !ok {
					id = len(ids)
					ids[key] = id
				}
				subj = append(subj, id)
				if isA == 1 {
					na++
				} else {
					nb++
				}
			}
		}
		add(a, 1, "a:")
		add(b, 0, "b:")
		need := 10 * (ShiftKnots + 4 + 1)
		if na < need || nb < need {
			continue
		}
		rows, names, err := qrinfer.AgeDesign(age, ShiftKnots, []qrinfer.Covariate{{Name: "cohort", Values: ind}})
		if err != nil {
			return nil, fmt.Errorf("stratum %q: %w", st.Name, err)
		}
		p := &qrinfer.Problem{Y: y, X: rows, Names: names, Subject: subj}
		for _, tau := range st.Chart {
			r, err := qrinfer.Fit(p, tau, &qrinfer.Settings{Method: method, Level: level, Seed: seed})
			if err != nil {
				return nil, fmt.Errorf("stratum %q, centile %g: %w", st.Name, 100*tau, err)
			}
			c := r.Coef[len(r.Coef)-1]
			out = append(out, Shift{Stratum: st.Name, Centile: 100 * tau, NA: na, NB: nb, Diff: c.Estimate, SE: c.SE,
				Lo: c.Lo, Hi: c.Hi, P: c.P, Method: fmt.Sprintf("%g%% intervals: %s", 100*level, r.Method)})
		}
	}
	return out, nil
}

// writeShifts writes the distribution-wide comparison as CSV.
func writeShifts(w io.Writer, s []Shift) error {
	cw := csv.NewWriter(w)
	cw.Write([]string{"stratum", "centile", "n_a", "n_b", "diff", "se", "lo", "hi", "p", "method"})
	f := func(x float64) string { return strconv.FormatFloat(x, 'g', 5, 64) }
	for _, r := range s {
		cw.Write([]string{r.Stratum, f(r.Centile), strconv.Itoa(r.NA), strconv.Itoa(r.NB), f(r.Diff), f(r.SE), f(r.Lo), f(r.Hi), f(r.P), r.Method})
	}
	cw.Flush()
	return cw.Error()
}

// writeFaltering writes the growth-faltering shares as CSV.
func writeFaltering(w io.Writer, fs []Faltering) error {
	cw := csv.NewWriter(w)
	cw.Write([]string{"kind", "stratum", "visits", "children", "below_5th", "lo", "hi", "expected", "method"})
	f := func(x float64) string { return strconv.FormatFloat(x, 'g', 4, 64) }
	for _, r := range fs {
		cw.Write([]string{r.Kind, r.Stratum, strconv.Itoa(r.Visits), strconv.Itoa(r.Children), f(r.Below.Value), f(r.Below.Lo), f(r.Below.Hi), f(r.Below.Expected), r.Method})
	}
	cw.Flush()
	return cw.Error()
}

// ErrNoSubjects: growth faltering needs subject ids to pair visits.
var ErrNoSubjects = errors.New("cohort: no subject ids")

// addGrowth adds what applies to doc: the growth-faltering shares of the
// first cohort when it has subject ids and ref a conditional model, and the
// centile differences of two cohorts.
func addGrowth(ref *curve.Reference, data []*curve.Data, doc *Document, level float64) error {
	var err error
	if len(data) > 0 && data[0].Subject != nil && hasConditional(ref) {
		if doc.Faltering, err = GrowthFaltering(ref, data[0], level); err != nil {
			return err
		}
	}
	if len(data) == 2 {
		if doc.Centiles, err = CompareCentiles(ref, data[0], data[1], level, 1); err != nil {
			return fmt.Errorf("centile differences: %w", err)
		}
	}
	return nil
}

// writeGrowthText appends the growth tables to a CSV summary, each after a
// blank line and a "# ..." title line.
func writeGrowthText(w io.Writer, doc *Document) error {
	if len(doc.Faltering) > 0 {
		fmt.Fprintf(w, "\n# growth faltering: later visits below the %gth conditional centile\n", float64(FalteringCentile))
		if err := writeFaltering(w, doc.Faltering); err != nil {
			return err
		}
	}
	if len(doc.Centiles) > 0 {
		fmt.Fprintln(w, "\n# cohorts compared centile by centile (first minus --vs), adjusted for age")
		return writeShifts(w, doc.Centiles)
	}
	return nil
}

// growthFiles returns the growth tables to write (growth.csv,
// centile-diff.csv) and the charts of the centile differences per stratum
// (centile-diff-STRATUM).
func growthFiles(ref *curve.Reference, doc *Document) (tables map[string]func(io.Writer) error, figs []namedFigure, err error) {
	tables = map[string]func(io.Writer) error{}
	if len(doc.Faltering) > 0 {
		tables["growth.csv"] = func(w io.Writer) error { return writeFaltering(w, doc.Faltering) }
	}
	if len(doc.Centiles) == 0 {
		return tables, nil, nil
	}
	tables["centile-diff.csv"] = func(w io.Writer) error { return writeShifts(w, doc.Centiles) }
	for _, st := range ref.Strata {
		s := &render.Shift{Measure: ref.Measure, Unit: ref.Unit, Stratum: st.Name,
			A: doc.Cohorts[0].Cohort, B: doc.Cohorts[1].Cohort, Caution: curve.Caution}
		for _, c := range doc.Centiles {
			if c.Stratum == st.Name {
				s.Method = c.Method
				s.Centiles, s.Diff = append(s.Centiles, c.Centile), append(s.Diff, c.Diff)
				s.Lo, s.Hi = append(s.Lo, c.Lo), append(s.Hi, c.Hi)
			}
		}
		if len(s.Centiles) == 0 {
			continue
		}
		fig, err := render.ShiftChart(s)
		if err != nil {
			return nil, nil, err
		}
		figs = append(figs, namedFigure{file: "centile-diff-" + stem(st.Name), fig: fig})
	}
	return tables, figs, nil
}
