package render

import (
	"fmt"
	"strconv"
)

// Conditional is the input of the conditional chart: for children measured
// at PrevAge, the conditional centiles of their measurement Gap later
// against the earlier measurement. Each curve's Ages hold the earlier
// measurements (increasing) and its Values the conditional centile of the
// later one.
type Conditional struct {
	Measure, Unit, AgeUnit, Stratum string
	PrevAge, Gap                    float64
	Curves                          []Curve
	Caution                         string
}

// ConditionalChart returns the chart of c: the conditional centile curves,
// shaded in pairs about the median as CentileChart draws centiles, over the
// earlier measurement. Errors are those of CentileChart.
func ConditionalChart(c *Conditional, opt ...Option) (*Figure, error) {
	f, err := CentileChart(&Centiles{Measure: c.Measure, Unit: c.Unit, AgeUnit: c.AgeUnit, Curves: c.Curves, Caution: c.Caution}, opt...)
	if err != nil {
		return nil, fmt.Errorf("conditional chart: %w", err)
	}
	num := func(x float64) string { return strconv.FormatFloat(x, 'g', 4, 64) }
	name := capitalize(measureName(c.Measure))
	p := f.Panels[0][0]
	p.X.Label.Text = withUnit(name+" at "+num(c.PrevAge)+" "+c.AgeUnit, c.Unit)
	p.Y.Label.Text = withUnit(name+" "+num(c.Gap)+" "+c.AgeUnit+" later", c.Unit)
	if newSettings(opt).title == "" {
		f.Title = joinTitle(fmt.Sprintf("%s %s %s after a visit at %s %s: conditional centiles", name, num(c.Gap), c.AgeUnit, num(c.PrevAge), c.AgeUnit), c.Stratum)
	}
	return f, nil
}
