package main

import (
	"fmt"
	"math"
	"path/filepath"
	"slices"
	"strconv"

	"growband/curve"
	"growband/internal/intake"
	"growband/render"
)

// fitConditional adds the plan's conditional model to ref and returns a note
// per stratum for the build summary; nil when the plan has no [conditional].
func fitConditional(plan *intake.Plan, ref *curve.Reference, data *curve.Data, prog progress) ([]string, error) {
	c := plan.Conditional
	if c == nil {
		return nil, nil
	}
	prog.printf("fitting the conditional model (growth since the previous visit)")
	s := &curve.ConditionalSettings{GapMin: c.GapMin, GapMax: c.GapMax, AgeKnots: c.AgeKnots, ZKnots: c.ZKnots, Centiles: c.Centiles}
	if err := curve.FitConditional(ref, data, s); err != nil {
		return nil, fmt.Errorf("%s: [conditional]: %w", plan.Name, err)
	}
	var notes []string
	for _, st := range ref.Strata {
		if m := st.Conditional; m != nil {
			notes = append(notes, fmt.Sprintf("conditional model, %s: %d visit pairs of %d children, gaps %.3g–%.3g %s",
				nameOr(st.Name), m.Pairs, m.Children, m.GapMin, m.GapMax, plan.Measure.AgeUnit))
		}
	}
	return notes, nil
}

// condTableCentiles are the conditional centiles tabulated in
// conditional.csv, in percent (those of them in the model's grid).
var condTableCentiles = []float64{5, 10, 25, 50, 75, 90, 95}

// condTableAges is the number of previous ages tabulated per stratum.
const condTableAges = 5

// writeConditionalTable writes conditional.csv: for previous visits at a few
// ages and at the reference's chart centiles, the conditional centiles of
// the measurement one gap later (the plan's conditional.table_gap, by
// default the middle of the modelled gaps). It does nothing without a
// conditional model.
func (b *built) writeConditionalTable() error {
	if b.plan.Conditional == nil {
		return nil
	}
	r := b.ref
	var rows [][]string
	f := func(x float64) string {
		if math.IsNaN(x) {
			return ""
		}
		return strconv.FormatFloat(x, 'g', 5, 64)
	}
	var cents []float64
	for _, st := range r.Strata {
		c := st.Conditional
		if c == nil {
			continue
		}
		gap := b.plan.Conditional.TableGap
		if gap == 0 {
			gap = (c.GapMin + c.GapMax) / 2
		}
		var taus []float64
		cents = cents[:0]
		for _, p := range condTableCentiles {
			if slices.ContainsFunc(c.Taus, func(t float64) bool { return math.Abs(t-p/100) < 1e-9 }) {
				taus, cents = append(taus, p/100), append(cents, p)
			}
		}
		for k := range condTableAges {
			age := st.AgeMin + (st.AgeMax-gap-st.AgeMin)*float64(k)/(condTableAges-1)
			for _, tau := range st.Chart {
				prev, err := r.Quantile(st.Name, age, tau)
				if err != nil {
					continue
				}
				next, err := r.NextCentiles(st.Name, age, prev, gap, taus)
				if err != nil {
					continue // outside the model's ages or previous z-scores
				}
				row := []string{st.Name, f(age), f(gap), f(100 * tau), f(prev), f(age + gap)}
				for _, v := range next {
					row = append(row, f(v))
				}
				rows = append(rows, row)
			}
		}
	}
	head := []string{"stratum", "prev_age", "gap", "prev_centile", "prev_value", "next_age"}
	for _, p := range cents {
		head = append(head, "next_c"+f(p))
	}
	if err := b.writeCSV("conditional.csv", head, rows); err != nil {
		return err
	}
	return b.writeConditionalCharts()
}

// condChartPoints is the number of earlier measurements per curve of the
// conditional chart, from the 3rd to the 97th centile of the reference.
const condChartPoints = 41

// conditionalFigure draws, for a visit at the middle of the stratum's ages
// (less the gap), the conditional centiles of the measurement one gap later
// (conditional.table_gap) against the earlier measurement.
func (b *built) conditionalFigure(st *curve.Stratum) (*render.Figure, error) {
	r, c := b.ref, st.Conditional
	gap := b.plan.Conditional.TableGap
	if gap == 0 {
		gap = (c.GapMin + c.GapMax) / 2
	}
	age := st.AgeMin + (st.AgeMax-gap-st.AgeMin)/2
	var taus []float64
	for _, p := range condTableCentiles {
		if slices.ContainsFunc(c.Taus, func(t float64) bool { return math.Abs(t-p/100) < 1e-9 }) {
			taus = append(taus, p/100)
		}
	}
	curves := make([]render.Curve, len(taus))
	for k, tau := range taus {
		curves[k].Centile = 100 * tau
	}
	for i := range condChartPoints {
		prevTau := 0.03 + 0.94*float64(i)/(condChartPoints-1)
		prev, err := r.Quantile(st.Name, age, prevTau)
		if err != nil {
			continue
		}
		next, err := r.NextCentiles(st.Name, age, prev, gap, taus)
		if err != nil || slices.ContainsFunc(next, math.IsNaN) {
			continue // outside the model's range: not drawn
		}
		for k, v := range next {
			curves[k].Ages = append(curves[k].Ages, prev)
			curves[k].Values = append(curves[k].Values, v)
		}
	}
	return render.ConditionalChart(&render.Conditional{Measure: r.Measure, Unit: r.Unit, AgeUnit: r.AgeUnit, Stratum: st.Name,
		PrevAge: age, Gap: gap, Curves: curves, Caution: curve.Caution})
}

// writeConditionalCharts writes conditional-STRATUM.* for every stratum with
// a conditional model, in the plan's chart formats.
func (b *built) writeConditionalCharts() error {
	formats := chartFormats(b.plan.Output.Charts)
	stems := fileStems(b.ref.Strata)
	for i := range b.ref.Strata {
		st := &b.ref.Strata[i]
		if st.Conditional == nil {
			continue
		}
		fig, err := b.conditionalFigure(st)
		if err != nil {
			b.notes = append(b.notes, fmt.Sprintf("no conditional chart for %s: %v", nameOr(st.Name), err))
			continue
		}
		for _, f := range formats {
			name := "conditional-" + stems[i] + "." + f
			if err := render.Save(filepath.Join(b.dir, name), fig, f, 0, 0); err != nil {
				return err
			}
			b.files = append(b.files, name)
		}
	}
	return nil
}
