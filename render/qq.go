package render

import (
	"fmt"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg/draw"
)

// QQ is the input of the normal Q–Q chart: one or two cohorts' sorted
// z-scores against their expected normal scores (as curve computes them
// for the worm plot), about the line of identity.
type QQ struct {
	Measure, Stratum string
	Series           []QQSeries
	Caution          string
}

// QQSeries is one cohort's points, in increasing order.
type QQSeries struct {
	Label    string
	Expected []float64 // expected normal score of each sorted z
	Observed []float64 // the sorted z-scores
}

// qqMinHalf is the least half-width of the Q–Q chart's axes, in z units.
const qqMinHalf = 3

// QQChart returns the normal Q–Q chart of q: for each series its sorted
// z-scores against their expected normal scores, with the line y = x on
// which z-scores from N(0,1) lie. Series of more than 400 points are
// thinned to evenly spaced ranks, as in the worm plot, and the legend says
// so. It returns an error wrapping ErrEmpty, ErrTooFew (fewer than 3
// points), ErrLength or ErrNaN.
func QQChart(q *QQ, opt ...Option) (*Figure, error) {
	if q == nil || len(q.Series) == 0 {
		return nil, fmt.Errorf("Q–Q chart: no series: %w", ErrEmpty)
	}
	lim := float64(qqMinHalf)
	for i, sr := range q.Series {
		name := groupName(i, sr.Label)
		if len(sr.Expected) < minWormN {
			return nil, fmt.Errorf("Q–Q chart %s: %d values, need %d: %w", name, len(sr.Expected), minWormN, ErrTooFew)
		}
		if err := checkPairs("expected", sr.Expected, "observed", sr.Observed); err != nil {
			return nil, fmt.Errorf("Q–Q chart %s: %w", name, err)
		}
		for j := range sr.Expected {
			lim = math.Max(lim, 1.05*math.Max(math.Abs(sr.Expected[j]), math.Abs(sr.Observed[j])))
		}
	}
	lim = math.Ceil(lim*2) / 2
	s := newSettings(opt)
	base := s.base()
	hue := s.hueDeg()
	p := newPlot(base)
	p.X.Label.Text = "Expected normal score"
	p.Y.Label.Text = "Observed z-score"
	addGrid(p, s)
	id, err := plotter.NewLine(plotter.XYs{{X: -lim, Y: -lim}, {X: lim, Y: lim}})
	if err != nil {
		return nil, err
	}
	id.LineStyle = draw.LineStyle{Color: shade(hue, lineLight), Width: centileWidth}
	p.Add(id)
	p.Legend.Add("N(0,1): observed = expected", id)
	scale := base / DefaultFontSize
	for i, sr := range q.Series {
		n := len(sr.Expected)
		step := thinStep(n)
		var xy plotter.XYs
		for j := 0; j < n; j += step {
			xy = append(xy, plotter.XY{X: sr.Expected[j], Y: sr.Observed[j]})
		}
		if (n-1)%step != 0 {
			xy = append(xy, plotter.XY{X: sr.Expected[n-1], Y: sr.Observed[n-1]})
		}
		sc, err := plotter.NewScatter(xy)
		if err != nil {
			return nil, err
		}
		sc.GlyphStyle = draw.GlyphStyle{Color: accentColors[i%len(accentColors)], Radius: 1.6 * scale, Shape: childShapes[i%len(childShapes)]}
		p.Add(sc)
		label := fmt.Sprintf("%s (n = %d)", groupName(i, sr.Label), n)
		if step > 1 {
			label = fmt.Sprintf("%s (n = %d, every %s point drawn)", groupName(i, sr.Label), n, ordinal(step))
		}
		p.Legend.Add(label, sc)
	}
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = -lim, lim, -lim, lim
	p.Add(legendBacking{})
	title := s.title
	if title == "" {
		title = joinTitle("Normal Q–Q plot of "+measureName(q.Measure)+" z-scores", q.Stratum)
	}
	return &Figure{Title: title, Panels: [][]*plot.Plot{{p}}, Caution: q.Caution, fontSize: base}, nil
}
