package render

import (
	"fmt"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg/draw"
)

// BandMeans is the input of the chart of mean z by age band: for one or
// two cohorts, each band's mean z-score with its interval, about zero.
type BandMeans struct {
	Measure, AgeUnit, Stratum string
	Level                     float64 // coverage of the intervals, for example 0.95
	Series                    []BandSeries
	Caution                   string
}

// BandSeries is one cohort's bands: band k is [AgeLo[k], AgeHi[k]] with
// mean z Mean[k] and interval [Lo[k], Hi[k]] (NaN ends are not drawn).
type BandSeries struct {
	Label                      string
	AgeLo, AgeHi, Mean, Lo, Hi []float64
}

// bandNudge is the share of a band's width by which the points of two
// cohorts are moved apart, so their intervals do not hide each other.
const bandNudge = 0.08

// BandMeansChart returns the chart of b: each band's mean z as a marker at
// the band's middle age, a vertical line for its interval and a thin
// horizontal line over the band's ages, about the zero line of the
// reference. It returns an error wrapping ErrEmpty, ErrLength or ErrNaN
// (means must be finite).
func BandMeansChart(b *BandMeans, opt ...Option) (*Figure, error) {
	if b == nil || len(b.Series) == 0 {
		return nil, fmt.Errorf("mean z by age band: no series: %w", ErrEmpty)
	}
	for i, sr := range b.Series {
		name := "mean z by age band " + groupName(i, sr.Label)
		if len(sr.Mean) == 0 {
			return nil, fmt.Errorf("%s: no bands: %w", name, ErrEmpty)
		}
		for _, c := range [][]float64{sr.AgeLo, sr.AgeHi, sr.Lo, sr.Hi} {
			if len(c) != len(sr.Mean) {
				return nil, fmt.Errorf("%s: %w", name, ErrLength)
			}
		}
		if err := checkFinite("mean", sr.Mean); err != nil {
			return nil, fmt.Errorf("%s: %w", name, err)
		}
	}
	s := newSettings(opt)
	base := s.base()
	hue := s.hueDeg()
	p := newPlot(base)
	p.X.Label.Text = withUnit("Age", b.AgeUnit)
	p.X.Tick.Marker = ageTicks{unit: b.AgeUnit}
	p.Y.Label.Text = "Mean z-score"
	addGrid(p, s)
	xmin, xmax, ylim := math.Inf(1), math.Inf(-1), 0.5
	for _, sr := range b.Series {
		for k := range sr.Mean {
			xmin, xmax = math.Min(xmin, sr.AgeLo[k]), math.Max(xmax, sr.AgeHi[k])
			for _, v := range []float64{sr.Mean[k], sr.Lo[k], sr.Hi[k]} {
				if !math.IsNaN(v) && !math.IsInf(v, 0) {
					ylim = math.Max(ylim, 1.1*math.Abs(v))
				}
			}
		}
	}
	zero, err := plotter.NewLine(plotter.XYs{{X: xmin, Y: 0}, {X: xmax, Y: 0}})
	if err != nil {
		return nil, err
	}
	zero.LineStyle = draw.LineStyle{Color: shade(hue, lineLight), Width: centileWidth}
	p.Add(zero)
	p.Legend.Add("the reference: mean z = 0", zero)
	scale := base / DefaultFontSize
	for i, sr := range b.Series {
		col := accentColors[i%len(accentColors)]
		nudge := 0.0
		if len(b.Series) > 1 {
			nudge = bandNudge * (float64(i) - float64(len(b.Series)-1)/2)
		}
		var pts plotter.XYs
		for k := range sr.Mean {
			w := sr.AgeHi[k] - sr.AgeLo[k]
			x := (sr.AgeLo[k]+sr.AgeHi[k])/2 + nudge*w
			pts = append(pts, plotter.XY{X: x, Y: sr.Mean[k]})
			span, err := plotter.NewLine(plotter.XYs{{X: sr.AgeLo[k], Y: sr.Mean[k]}, {X: sr.AgeHi[k], Y: sr.Mean[k]}})
			if err != nil {
				return nil, err
			}
			span.LineStyle = draw.LineStyle{Color: withAlpha(col, 0x60), Width: 0.6}
			p.Add(span)
			if lo, hi := sr.Lo[k], sr.Hi[k]; !math.IsNaN(lo) && !math.IsNaN(hi) {
				bar, err := plotter.NewLine(plotter.XYs{{X: x, Y: lo}, {X: x, Y: hi}})
				if err != nil {
					return nil, err
				}
				bar.LineStyle = draw.LineStyle{Color: col, Width: childWidth}
				p.Add(bar)
			}
		}
		sc, err := plotter.NewScatter(pts)
		if err != nil {
			return nil, err
		}
		sc.GlyphStyle = draw.GlyphStyle{Color: col, Radius: 2.2 * scale, Shape: childShapes[i%len(childShapes)]}
		p.Add(sc)
		level := ""
		if b.Level > 0 {
			level = fmt.Sprintf(" with %g%% interval", 100*b.Level)
		}
		p.Legend.Add(groupName(i, sr.Label)+": mean z"+level, sc)
	}
	p.X.Min, p.X.Max = xmin, xmax
	p.Y.Min, p.Y.Max = -ylim, ylim
	p.Add(legendBacking{})
	title := s.title
	if title == "" {
		title = joinTitle("Mean "+measureName(b.Measure)+" z-score by age band", b.Stratum)
	}
	return &Figure{Title: title, Panels: [][]*plot.Plot{{p}}, Caution: b.Caution, fontSize: base}, nil
}
