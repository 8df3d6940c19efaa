package main

import (
	"fmt"
	"slices"
	"strconv"
	"strings"

	"growband/curve/qrinfer"
)

// covMethods maps the plan's method words to qrinfer's methods.
var covMethods = map[string]string{
	"sandwich":  qrinfer.MethodSandwich,
	"powell":    qrinfer.MethodPowell,
	"bootstrap": qrinfer.MethodBootstrap,
}

// fitCovariates estimates the effects of the plan's [covariates] columns on
// each chart centile per stratum and writes covariates.csv and
// covariates-unused.csv into b.dir; it does nothing without the table. A
// stratum whose fit fails (for example a category absent from it) is
// skipped with a note.
func (b *built) fitCovariates(prog progress) error {
	c := b.plan.Covariates
	if c == nil {
		return nil
	}
	t := b.table
	col := func(name, key string) (int, error) {
		for _, exact := range []bool{true, false} {
			for i, h := range t.Header {
				if h = strings.TrimSpace(h); h == name || !exact && strings.EqualFold(h, name) {
					return i, nil
				}
			}
		}
		return 0, fmt.Errorf("%s: %s: no column %q in %s", b.plan.Name, key, name, t.Name)
	}
	type cov struct {
		name    string
		numeric bool
		at      int
	}
	var covs []cov
	for k, name := range append(slices.Clone(c.Numeric), c.Categorical...) {
		numeric := k < len(c.Numeric)
		key := "covariates.categorical"
		if numeric {
			key = "covariates.numeric"
		}
		at, err := col(name, key)
		if err != nil {
			return err
		}
		covs = append(covs, cov{name, numeric, at})
	}
	prog.printf("estimating the effects of %d covariates on the chart centiles (%s)", len(covs), c.Method)

	// Read the covariate cells of every used row; a row with a missing or
	// unreadable cell is left out of this fit and listed.
	var unused [][]string
	ok := make([]bool, len(t.Rows))
	num := make([][]float64, len(covs))
	lev := make([][]string, len(covs))
	for i := range t.Rows {
		r := &t.Rows[i]
		ok[i] = true
		for k, cv := range covs {
			cell := ""
			if cv.at < len(r.Fields) {
				cell = strings.TrimSpace(r.Fields[cv.at])
			}
			reason := ""
			var x float64
			switch {
			case cell == "" || slices.Contains(b.plan.Input.Missing, cell):
				reason = cv.name + ": missing"
			case cv.numeric:
				s := cell
				if t.DecimalComma {
					s = strings.Replace(s, ",", ".", 1)
				}
				var err error
				if x, err = strconv.ParseFloat(s, 64); err != nil || x-x != 0 {
					reason = fmt.Sprintf("%s: %q is not a number", cv.name, cell)
				}
			}
			if reason != "" {
				if ok[i] {
					unused = append(unused, []string{strconv.Itoa(r.Line), reason})
				}
				ok[i] = false
			}
			if cv.numeric {
				num[k] = append(num[k], x)
			} else {
				lev[k] = append(lev[k], cell)
			}
		}
	}

	var out [][]string
	f := func(x float64) string { return strconv.FormatFloat(x, 'g', 6, 64) }
	for _, st := range b.ref.Strata {
		var age, y []float64
		var subj []int
		ids := map[string]int{}
		cs := make([]qrinfer.Covariate, len(covs))
		for k, cv := range covs {
			cs[k].Name = cv.name
		}
		for i := range t.Rows {
			r := &t.Rows[i]
			if !ok[i] || r.Stratum != st.Name {
				continue
			}
			age, y = append(age, r.Age), append(y, r.Value)
			key := "row " + strconv.Itoa(i)
			if r.Subject != "" {
				key = r.Subject
			}
			if _, seen := ids[key]; !seen {
				ids[key] = len(ids)
			}
			subj = append(subj, ids[key])
			for k, cv := range covs {
				if cv.numeric {
					cs[k].Values = append(cs[k].Values, num[k][i])
				} else {
					cs[k].Levels = append(cs[k].Levels, lev[k][i])
				}
			}
		}
		knots := c.AgeKnots
		switch knots {
		case 0:
			knots = 3 // as the conditional model's default
		case -1:
			knots = 0
		}
		note := func(err error) {
			b.notes = append(b.notes, fmt.Sprintf("covariates, %s: not estimated: %v", nameOr(st.Name), err))
		}
		if len(age) == 0 {
			note(fmt.Errorf("no rows with every covariate"))
			continue
		}
		rows, names, err := qrinfer.AgeDesign(age, knots, cs)
		if err != nil {
			note(err)
			continue
		}
		p := &qrinfer.Problem{Y: y, X: rows, Names: names, Subject: subj}
		var lines [][]string
		for _, tau := range st.Chart {
			res, err := qrinfer.Fit(p, tau, &qrinfer.Settings{Method: covMethods[c.Method], Replicates: c.Replicates, Seed: uint64(b.plan.Fit.Seed)})
			if err != nil {
				note(err)
				lines = nil
				break
			}
			for _, co := range res.Coef {
				if strings.HasPrefix(co.Name, "age:") {
					continue // the age splines' coefficients mean nothing one by one
				}
				lines = append(lines, []string{st.Name, f(100 * tau), co.Name, f(co.Estimate), f(co.SE), f(co.Lo), f(co.Hi), f(co.P), strconv.Itoa(res.N), res.Method})
			}
		}
		out = append(out, lines...)
	}
	if err := b.writeCSV("covariates.csv", []string{"stratum", "centile", "term", "estimate", "se", "lo95", "hi95", "p", "n", "method"}, out); err != nil {
		return err
	}
	if len(unused) > 0 {
		b.notes = append(b.notes, fmt.Sprintf("covariates: %d rows without every covariate left out of their fit (covariates-unused.csv)", len(unused)))
	}
	return b.writeCSV("covariates-unused.csv", []string{"line", "reason"}, unused)
}
