package cohort

import (
	"fmt"
	"math"

	"growband/curve"
	"growband/internal/refchart"
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
// stratum with curve.Fit and draws them as an overlay of dashed lines over
// the reference's shaded centile bands and the cohort's points.
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
	c, _, err := refchart.Centiles(ref, st, &refchart.Options{AgeLo: lo, AgeHi: hi, Points: ownGridPoints})
	if err != nil {
		return nil, err
	}
	mine, err := refchart.Curves(fit, fs, c.Curves[0].Ages, nil)
	if err != nil {
		return nil, err
	}
	c.Data = &render.Points{Ages: own.Age, Values: own.Value}
	c.Overlay = &render.Overlay{Label: "cohort's own 3rd, 50th, 97th (fitted)", Curves: mine}
	return render.CentileChart(c, render.WithTitle(fmt.Sprintf("The cohort's own 3rd, 50th and 97th centiles over the reference — %s, %s", cohort, st.Name)))
}
