package render

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Worm is the input of the worm plot: per age group, the detrended normal
// Q–Q points of one measure's z-scores, as curve.Check computes them (the
// one worm computation of growband; this package only draws them).
type Worm struct {
	Measure, Stratum string
	Groups           []WormGroup
	Caution          string
}

// WormGroup is one age group's worm: for each of its z-scores in increasing
// order, the expected normal score and the observed z minus it.
type WormGroup struct {
	Label     string // for example "0–6 months"
	Expected  []float64
	Deviation []float64
}

// Worm plot constants.
const (
	minWormN = 3    // fewer points show no shape
	wormZ95  = 1.96 // two-sided 95% normal quantile, as in van Buuren & Fredriks (2001)
	// wormEnvelopeSteps is the number of segments drawing each envelope curve.
	wormEnvelopeSteps = 120
	// wormMinX and wormMinY are the least half-widths of the panels' axes,
	// so a well-fitting group is not blown up to fill its panel.
	wormMinX = 2.5
	wormMinY = 0.6
	// wormMaxPoints is the most points drawn in one panel. Larger groups are
	// thinned to evenly spaced ranks (every k-th point, always the first and
	// last), which keeps the worm's shape and the file small at any n; the
	// rule is written on the panel. 400 points is more than a panel a few
	// centimetres wide can separate (our choice).
	wormMaxPoints = 400
	// wormMaxColumns is the most panel columns: panels are wide and short,
	// in age order down each column, so a worm reads across its width.
	wormMaxColumns = 2
)

// wormEnvelope returns the half-width at unit normal quantile q of the
// approximate pointwise 95% band of a worm plot of n points,
// 1.96·√(p(1−p)/n)/φ(q) with p = Φ(q) (van Buuren & Fredriks 2001).
func wormEnvelope(q float64, n int) float64 {
	p := distuv.UnitNormal.CDF(q)
	return wormZ95 * math.Sqrt(p*(1-p)/float64(n)) / distuv.UnitNormal.Prob(q)
}

// thinStep returns the rank step k that keeps at most wormMaxPoints of n
// points (1 when all fit).
func thinStep(n int) int {
	if n <= wormMaxPoints {
		return 1
	}
	return (n + wormMaxPoints - 2) / (wormMaxPoints - 1)
}

// WormChart returns the worm plot of w: per age group, the detrended Q–Q
// points of its z-scores on a shaded approximate 95% band, all panels on
// common axes, in age order down the columns. The panel title gives the
// group's n and how many points lie outside the band (counted on all
// points, also when the drawing is thinned). It returns an error wrapping
// ErrEmpty when there are no groups, ErrTooFew for a group of fewer than 3
// points, ErrLength for unequal lengths and ErrNaN for NaN or infinite
// values.
//
// References:
//   - van Buuren S, Fredriks M (2001). Worm plot: a simple diagnostic device
//     for modelling growth reference curves. Statistics in Medicine 20,
//     1259–1277.
func WormChart(w *Worm, opt ...Option) (*Figure, error) {
	if w == nil || len(w.Groups) == 0 {
		return nil, fmt.Errorf("worm plot: no groups: %w", ErrEmpty)
	}
	for i, g := range w.Groups {
		name := groupName(i, g.Label)
		if len(g.Expected) < minWormN {
			return nil, fmt.Errorf("worm plot %s: %d values, need %d: %w", name, len(g.Expected), minWormN, ErrTooFew)
		}
		if err := checkPairs("expected", g.Expected, "deviation", g.Deviation); err != nil {
			return nil, fmt.Errorf("worm plot %s: %w", name, err)
		}
	}
	s := newSettings(opt)
	base := s.base()
	hue := s.hueDeg()

	xlim, ylim := wormMinX, wormMinY
	for _, g := range w.Groups {
		for j := range g.Expected {
			xlim = math.Max(xlim, 1.05*math.Abs(g.Expected[j]))
			ylim = math.Max(ylim, 1.15*math.Abs(g.Deviation[j]))
		}
	}
	xlim = math.Ceil(xlim*2) / 2
	ylim = math.Ceil(ylim*5) / 5

	cols := s.columns
	if cols == 0 {
		cols = wormMaxColumns
		if len(w.Groups) <= 3 {
			cols = 1
		}
	}
	cols = min(cols, len(w.Groups))
	rows := (len(w.Groups) + cols - 1) / cols
	grid := make([][]*plot.Plot, rows)
	for r := range grid {
		grid[r] = make([]*plot.Plot, cols)
	}

	fill := Palette(hue, 2)[1]
	scale := base / DefaultFontSize
	inside := draw.GlyphStyle{Color: shade(hue, medianLight), Radius: 1.4 * scale, Shape: draw.CircleGlyph{}}
	outside := draw.GlyphStyle{Color: accentColors[0], Radius: 1.9 * scale, Shape: draw.BoxGlyph{}}
	for i, g := range w.Groups {
		p := newPlot(base * panelScale)
		p.X.Tick.Marker = niceTicks{target: 6}
		p.Y.Tick.Marker = niceTicks{target: 4}
		n := len(g.Expected)
		r, c := i%rows, i/rows // down each column, in age order
		out := 0
		for j := range g.Expected {
			if math.Abs(g.Deviation[j]) > wormEnvelope(g.Expected[j], n) {
				out++
			}
		}
		step := thinStep(n)
		p.Title.Text = fmt.Sprintf("%s: n = %d, %d outside the band", groupName(i, g.Label), n, out)
		if step > 1 {
			p.Title.Text += fmt.Sprintf("; every %s point drawn", ordinal(step))
		}

		var upper, lower plotter.XYs
		for k := 0; k <= wormEnvelopeSteps; k++ {
			x := -xlim + 2*xlim*float64(k)/wormEnvelopeSteps
			e := wormEnvelope(x, n)
			upper = append(upper, plotter.XY{X: x, Y: e})
			lower = append(lower, plotter.XY{X: x, Y: -e})
		}
		poly := ribbon(xsOf(lower), ysOf(lower), xsOf(upper), ysOf(upper))
		poly.Color = fill
		poly.LineStyle.Width = 0
		p.Add(poly)
		addGrid(p, s)
		zero, err := plotter.NewLine(plotter.XYs{{X: -xlim, Y: 0}, {X: xlim, Y: 0}})
		if err != nil {
			return nil, err
		}
		zero.LineStyle = draw.LineStyle{Color: inkColor, Width: 0.5}
		p.Add(zero)
		var q, d []float64
		for j := 0; j < n; j += step {
			q, d = append(q, g.Expected[j]), append(d, g.Deviation[j])
		}
		if (n-1)%step != 0 {
			q, d = append(q, g.Expected[n-1]), append(d, g.Deviation[n-1])
		}
		pts, err := plotter.NewScatter(xys(q, d))
		if err != nil {
			return nil, err
		}
		pts.GlyphStyleFunc = func(j int) draw.GlyphStyle {
			if math.Abs(d[j]) > wormEnvelope(q[j], n) {
				return outside
			}
			return inside
		}
		p.Add(pts)

		p.X.Min, p.X.Max = -xlim, xlim
		p.Y.Min, p.Y.Max = -ylim, ylim
		grid[r][c] = p
	}

	title := s.title
	if title == "" {
		title = joinTitle("Worm plot of "+measureName(w.Measure)+" z-scores", w.Stratum)
	}
	// The axes are labelled once for the grid: the panels are short.
	return &Figure{Title: title, Panels: grid, Caution: w.Caution, fontSize: base,
		XLabel: "Expected normal score", YLabel: "Observed minus expected z",
		height: max(DefaultHeight, vg.Length(rows)*wormRowHeight+4*vg.Centimeter)}, nil
}

// wormRowHeight is the least height of a row of worm panels at the default
// size: room for a panel title, a band and the tick labels.
const wormRowHeight = 3.6 * vg.Centimeter

// ordinal writes 2 as "2nd", 11 as "11th", 23 as "23rd".
func ordinal(k int) string {
	suffix := "th"
	if k%100 < 11 || k%100 > 13 {
		switch k % 10 {
		case 1:
			suffix = "st"
		case 2:
			suffix = "nd"
		case 3:
			suffix = "rd"
		}
	}
	return fmt.Sprintf("%d%s", k, suffix)
}

func groupName(i int, label string) string {
	if label == "" {
		return fmt.Sprintf("group %d", i+1)
	}
	return label
}

func xsOf(p plotter.XYs) []float64 {
	out := make([]float64, len(p))
	for i := range p {
		out[i] = p[i].X
	}
	return out
}

func ysOf(p plotter.XYs) []float64 {
	out := make([]float64, len(p))
	for i := range p {
		out[i] = p[i].Y
	}
	return out
}
