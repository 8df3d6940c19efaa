package render

import (
	"fmt"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg/draw"
)

// Shift is the input of the distribution-wide comparison chart: for each
// centile of the chart set, the difference between two cohorts at that
// centile (adjusted for age, in measurement units) with its interval.
type Shift struct {
	Measure, Unit, Stratum string
	A, B                   string    // cohort names; the chart shows A minus B
	Method                 string    // how the intervals were found, the band's legend entry
	Centiles               []float64 // increasing, in (0, 100)
	Diff, Lo, Hi           []float64 // one per centile
	Caution                string
}

// ShiftChart returns the line chart of s.Diff across the centiles with its
// interval as a shaded band about a zero line. It returns an error wrapping
// ErrEmpty, ErrLength, ErrNaN, ErrCentile or ErrOrder for bad input.
func ShiftChart(s *Shift, opt ...Option) (*Figure, error) {
	if s == nil || len(s.Centiles) == 0 {
		return nil, fmt.Errorf("shift chart: no centiles: %w", ErrEmpty)
	}
	for _, ys := range []struct {
		name string
		v    []float64
	}{{"difference", s.Diff}, {"lower limit", s.Lo}, {"upper limit", s.Hi}} {
		if err := checkPairs("centiles", s.Centiles, ys.name, ys.v); err != nil {
			return nil, fmt.Errorf("shift chart: %w", err)
		}
	}
	if err := checkIncreasing("centiles", s.Centiles); err != nil {
		return nil, fmt.Errorf("shift chart: %w", err)
	}
	for _, c := range s.Centiles {
		if !(c > 0 && c < 100) {
			return nil, fmt.Errorf("shift chart: centile %g: %w", c, ErrCentile)
		}
	}
	st := newSettings(opt)
	base := st.base()
	hue := st.hueDeg()

	p := newPlot(base)
	p.X.Label.Text = "Centile"
	p.Y.Label.Text = withUnit("Difference in "+measureName(s.Measure), s.Unit)
	band := ribbon(s.Centiles, s.Lo, s.Centiles, s.Hi)
	band.Color = Palette(hue, 2)[1]
	band.LineStyle.Width = 0
	p.Add(band)
	addGrid(p, st)
	zero, err := plotter.NewLine(plotter.XYs{{X: 0, Y: 0}, {X: 100, Y: 0}})
	if err != nil {
		return nil, err
	}
	zero.LineStyle = draw.LineStyle{Color: inkColor, Width: 0.6}
	p.Add(zero)
	ln, pts, err := plotter.NewLinePoints(xys(s.Centiles, s.Diff))
	if err != nil {
		return nil, err
	}
	ln.LineStyle = draw.LineStyle{Color: shade(hue, medianLight), Width: medianWidth}
	pts.GlyphStyle.Color = shade(hue, medianLight)
	p.Add(ln, pts)
	p.Legend.Add(s.A+" minus "+s.B, ln)
	p.Legend.Add(s.Method, band)
	p.X.Min, p.X.Max = 0, 100
	p.Add(legendBacking{})

	title := st.title
	if title == "" {
		title = joinTitle(capitalize(measureName(s.Measure))+": cohorts compared centile by centile, adjusted for age", s.Stratum)
	}
	return &Figure{Title: title, Panels: [][]*plot.Plot{{p}}, Caution: s.Caution, fontSize: base}, nil
}
