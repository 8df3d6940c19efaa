package qrinfer

import (
	"fmt"
	"math"
	"slices"
	"strconv"

	"growband/spline"
)

// Covariate is one column of data entering a design linearly: numeric
// (Values) or categorical (Levels, one label per row).
type Covariate struct {
	Name   string
	Values []float64
	Levels []string
}

// AgeDesign returns dense design rows of a cubic B-spline basis in age with
// knots interior knots at quantiles of the ages (its functions sum to one,
// so the basis carries the intercept), followed by one column per numeric
// covariate and, for a categorical covariate, one indicator per level but the
// first in sorted order (the baseline). Column names are "age:1", ...,
// "age:p", the numeric covariate's name, and "name=level" for indicators.
// Non-finite ages or values, an empty level, or columns of another length
// than age return an error naming the covariate and row (counted from 1).
func AgeDesign(age []float64, knots int, cov []Covariate) (rows [][]float64, names []string, err error) {
	const degree = 3 // cubic, as the ordinary curves
	n := len(age)
	for i, a := range age {
		if math.IsNaN(a) || math.IsInf(a, 0) {
			return nil, nil, fmt.Errorf("qrinfer: row %d: age %v", i+1, a)
		}
	}
	if n < 2 {
		return nil, nil, fmt.Errorf("qrinfer: %d rows", n)
	}
	in, err := spline.QuantileKnots(age, knots)
	if err != nil {
		return nil, nil, fmt.Errorf("qrinfer: ages: %w", err)
	}
	kv, err := spline.Clamped(slices.Min(age), slices.Max(age), in, degree)
	if err != nil {
		return nil, nil, fmt.Errorf("qrinfer: ages: %w", err)
	}
	basis, err := spline.New(kv, degree)
	if err != nil {
		return nil, nil, fmt.Errorf("qrinfer: ages: %w", err)
	}
	pa := basis.Len()
	for j := range pa {
		names = append(names, "age:"+strconv.Itoa(j+1))
	}
	type col struct {
		num   []float64
		cat   []string
		level string
	}
	var cols []col
	for _, c := range cov {
		switch {
		case c.Values != nil && c.Levels == nil:
			if len(c.Values) != n {
				return nil, nil, fmt.Errorf("qrinfer: covariate %q has %d values for %d rows", c.Name, len(c.Values), n)
			}
			for i, v := range c.Values {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					return nil, nil, fmt.Errorf("qrinfer: covariate %q, row %d: %v", c.Name, i+1, v)
				}
			}
			cols = append(cols, col{num: c.Values})
			names = append(names, c.Name)
		case c.Levels != nil && c.Values == nil:
			if len(c.Levels) != n {
				return nil, nil, fmt.Errorf("qrinfer: covariate %q has %d labels for %d rows", c.Name, len(c.Levels), n)
			}
			if i := slices.Index(c.Levels, ""); i >= 0 {
				return nil, nil, fmt.Errorf("qrinfer: covariate %q, row %d: empty label", c.Name, i+1)
			}
			lv := slices.Clone(c.Levels)
			slices.Sort(lv)
			lv = slices.Compact(lv)
			if len(lv) < 2 {
				return nil, nil, fmt.Errorf("qrinfer: covariate %q has a single level %q", c.Name, lv[0])
			}
			for _, l := range lv[1:] {
				cols = append(cols, col{cat: c.Levels, level: l})
				names = append(names, c.Name+"="+l)
			}
		default:
			return nil, nil, fmt.Errorf("qrinfer: covariate %q: give either values or levels", c.Name)
		}
	}
	w := make([]float64, degree+1)
	rows = make([][]float64, n)
	for i, a := range age {
		r := make([]float64, len(names))
		f, err := basis.Eval(w, a)
		if err != nil {
			return nil, nil, fmt.Errorf("qrinfer: row %d: %w", i+1, err)
		}
		copy(r[f:], w)
		for k, c := range cols {
			switch {
			case c.num != nil:
				r[pa+k] = c.num[i]
			case c.cat[i] == c.level:
				r[pa+k] = 1
			}
		}
		rows[i] = r
	}
	return rows, names, nil
}
