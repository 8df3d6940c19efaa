package cohort

import (
	"math"

	"gonum.org/v1/gonum/stat/distuv"

	"growband/curve"
)

// TwoResult is the comparison of two cohorts scored against one reference.
type TwoResult struct {
	A, B   *Result
	Method string `json:"method"`
	// Diffs are A minus B for every group present in both cohorts.
	Diffs []Diff `json:"diffs"`
}

// Diff is the difference, cohort A minus cohort B, of one group's summary.
type Diff struct {
	Kind    string   `json:"kind"`
	Stratum string   `json:"stratum"`
	AgeLo   float64  `json:"age_lo"`
	AgeHi   float64  `json:"age_hi"`
	NA      int      `json:"n_a"`
	NB      int      `json:"n_b"`
	Mean    Estimate `json:"mean_z"`
	Below2  Estimate `json:"below_minus2"`
	Below3  Estimate `json:"below_minus3"`
	Above2  Estimate `json:"above_plus2"`
}

// CompareTwo compares cohorts a and b with ref (each as Compare does, with
// the same options) and, for every group present in both, estimates the
// differences A - B of the mean z and of the three shares. The cohorts are
// taken to be independent samples.
//
// The mean difference has the interval d ± t sqrt(V_A + V_B), t on the
// Welch–Satterthwaite degrees of freedom from each cohort's G-1. A share
// difference has Newcombe's hybrid score interval from the two (effective-n)
// Wilson intervals [l_A, u_A] and [l_B, u_B]:
//
//	d - sqrt((p_A - l_A)^2 + (u_B - p_B)^2),  d + sqrt((u_A - p_A)^2 + (p_B - l_B)^2).
//
// Errors are those of Compare for either cohort.
//
// References:
//   - Newcombe R G (1998). Interval estimation for the difference between
//     independent proportions: comparison of eleven methods. Statistics in
//     Medicine 17, 873–890.
//   - Welch B L (1947). The generalization of "Student's" problem when
//     several different population variances are involved. Biometrika 34,
//     28–35.
func CompareTwo(ref *curve.Reference, a, b *curve.Data, opt *Options) (*TwoResult, error) {
	ra, err := Compare(ref, a, opt)
	if err != nil {
		return nil, err
	}
	var ob Options
	if opt != nil {
		ob = *opt
	}
	ob.Name = ob.VsName
	rb, err := Compare(ref, b, &ob)
	if err != nil {
		return nil, err
	}
	out := &TwoResult{A: ra, B: rb,
		Method: "differences A - B of independent cohorts: mean z by Welch t, shares by Newcombe's hybrid score interval from each cohort's Wilson interval"}
	type key struct {
		kind, stratum string
		lo, hi        float64
	}
	keyOf := func(s *Summary) key {
		if s.Kind == KindBand {
			return key{s.Kind, s.Stratum, s.AgeLo, s.AgeHi}
		}
		return key{s.Kind, s.Stratum, 0, 0}
	}
	inB := map[key]*Summary{}
	for i := range rb.Groups {
		inB[keyOf(&rb.Groups[i])] = &rb.Groups[i]
	}
	for i := range ra.Groups {
		ga := &ra.Groups[i]
		gb, ok := inB[keyOf(ga)]
		if !ok {
			continue
		}
		out.Diffs = append(out.Diffs, Diff{
			Kind: ga.Kind, Stratum: ga.Stratum,
			AgeLo: min(ga.AgeLo, gb.AgeLo), AgeHi: max(ga.AgeHi, gb.AgeHi),
			NA: ga.N, NB: gb.N,
			Mean:   meanDiff(ga, gb, ra.Level),
			Below2: shareDiff(ga.Below2, gb.Below2),
			Below3: shareDiff(ga.Below3, gb.Below3),
			Above2: shareDiff(ga.Above2, gb.Above2),
		})
	}
	return out, nil
}

func meanDiff(a, b *Summary, level float64) Estimate {
	va, vb := a.Mean.SE*a.Mean.SE, b.Mean.SE*b.Mean.SE
	d := Estimate{Value: a.Mean.Value - b.Mean.Value, SE: math.Sqrt(va + vb), Lo: math.NaN(), Hi: math.NaN()}
	dfa, dfb := float64(a.Subjects-1), float64(b.Subjects-1)
	df := (va + vb) * (va + vb) / (va*va/dfa + vb*vb/dfb)
	if df > 0 && !math.IsNaN(d.SE) {
		t := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Quantile((1 + level) / 2)
		d.Lo, d.Hi = d.Value-t*d.SE, d.Value+t*d.SE
	}
	return d
}

func shareDiff(a, b Share) Estimate {
	d := a.Value - b.Value
	return Estimate{
		Value: d,
		SE:    math.Sqrt(a.SE*a.SE + b.SE*b.SE),
		Lo:    d - math.Hypot(a.Value-a.Lo, b.Hi-b.Value),
		Hi:    d + math.Hypot(a.Hi-a.Value, b.Value-b.Lo),
	}
}
