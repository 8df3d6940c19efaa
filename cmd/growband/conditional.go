package main

import (
	"fmt"

	"growband/curve"
	"growband/internal/intake"
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
