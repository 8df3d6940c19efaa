package cohort

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"growband/curve"
	"growband/render"
)

// ownCentiles are the cohort's own centiles drawn over the reference, in
// percent: its median and the usual outer chart centiles (common practice).
var ownCentiles = []float64{3, 50, 97}

// ownMinRows is the fewest scored rows of a stratum for which the cohort's
// own centiles are fitted: with fewer, the 3rd and 97th centiles rest on a
// handful of points (about 100 rows give 3 beyond each; our choice).
const ownMinRows = 100

// ownGridPoints is the number of ages the curves are drawn at.
const ownGridPoints = 61

// ownCentileChart fits the cohort's 3rd, 50th and 97th centiles of one
// stratum with curve.Fit and draws them as dark dashed lines over the
// reference's shaded centile bands and the cohort's points.
func ownCentileChart(ref *curve.Reference, d *curve.Data, res *Result, stratum, cohort string) (*render.Figure, error) {
	st, err := ref.Stratum(stratum)
	if err != nil {
		return nil, err
	}
	own := &curve.Data{}
	for i, z := range res.Z {
		if math.IsNaN(z) || stratumOf(ref, d, i) != st.Name {
			continue
		}
		own.Age = append(own.Age, d.Age[i])
		own.Value = append(own.Value, d.Value[i])
		if d.Weight != nil {
			own.Weight = append(own.Weight, d.Weight[i])
		}
		if d.Subject != nil {
			own.Subject = append(own.Subject, d.Subject[i])
		}
	}
	if len(own.Age) < ownMinRows {
		return nil, fmt.Errorf("%d scored rows, at least %d are needed to fit the cohort's own centiles", len(own.Age), ownMinRows)
	}
	fit, err := curve.Fit(own, &curve.Settings{Centiles: ownCentiles, Measure: ref.Measure, Unit: ref.Unit, AgeUnit: ref.AgeUnit})
	if err != nil {
		return nil, fmt.Errorf("fitting the cohort's centiles: %w", err)
	}
	fs := &fit.Strata[0]
	lo, hi := max(fs.AgeMin, st.AgeMin), min(fs.AgeMax, st.AgeMax)
	if !(lo < hi) {
		return nil, fmt.Errorf("the cohort's ages do not overlap the reference's")
	}
	ages := make([]float64, ownGridPoints)
	for k := range ages {
		ages[k] = lo + (hi-lo)*float64(k)/float64(ownGridPoints-1)
	}
	ages[ownGridPoints-1] = hi
	rt, err := ref.Table(st.Name, ages, nil)
	if err != nil {
		return nil, err
	}
	ot, err := fit.Table(fs.Name, ages, nil)
	if err != nil {
		return nil, err
	}
	c := &render.Centiles{Measure: ref.Measure, Unit: ref.Unit, AgeUnit: ref.AgeUnit, Stratum: st.Name,
		Data: &render.Points{Ages: own.Age, Values: own.Value}, Caution: curve.Caution}
	for j, tau := range rt.Taus {
		cv := render.Curve{Centile: 100 * tau, Ages: ages, Values: make([]float64, len(ages))}
		for i := range ages {
			cv.Values[i] = rt.Values[i][j]
		}
		c.Curves = append(c.Curves, cv)
	}
	fig, err := render.CentileChart(c, render.WithTitle(fmt.Sprintf("%s: the cohort's own 3rd, 50th and 97th centiles over the reference", cohort)))
	if err != nil {
		return nil, err
	}
	p := fig.Panels[0][0]
	for j := range ot.Taus {
		xy := make(plotter.XYs, len(ages))
		for i := range ages {
			xy[i].X, xy[i].Y = ages[i], ot.Values[i][j]
		}
		ln, err := plotter.NewLine(xy)
		if err != nil {
			return nil, err
		}
		ln.LineStyle = draw.LineStyle{Color: color.Gray{Y: 0x20}, Width: vg.Length(1.2), Dashes: []vg.Length{vg.Points(4), vg.Points(2.5)}}
		p.Add(ln)
		if j == 0 {
			p.Legend.Add("cohort's own 3rd, 50th, 97th (fitted)", ln)
		}
	}
	return fig, nil
}
