package render

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/stat/distuv"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Worm is the input of the worm plot: z-scores of one measure split into age
// groups, one panel per group.
type Worm struct {
	Measure, Stratum string
	Groups           []WormGroup
	Caution          string
}

// WormGroup is one age group's z-scores, in any order.
type WormGroup struct {
	Label string // for example "0–6 months"
	Z     []float64
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
)

// wormPoints returns the detrended normal Q–Q points of z: the unit normal
// quantiles q of the Blom plotting positions and the deviations
// d = z₍ᵢ₎ − q of the sorted z. It does not change z.
func wormPoints(z []float64) (q, d []float64) {
	n := len(z)
	s := append([]float64(nil), z...)
	sort.Float64s(s)
	q = make([]float64, n)
	d = make([]float64, n)
	for i := range s {
		p := (float64(i+1) - 3.0/8) / (float64(n) + 1.0/4)
		q[i] = distuv.UnitNormal.Quantile(p)
		d[i] = s[i] - q[i]
	}
	return q, d
}

// wormEnvelope returns the half-width at unit normal quantile q of the
// approximate pointwise 95% band of a worm plot of n points,
// 1.96·√(p(1−p)/n)/φ(q) with p = Φ(q) (van Buuren & Fredriks 2001).
func wormEnvelope(q float64, n int) float64 {
	p := distuv.UnitNormal.CDF(q)
	return wormZ95 * math.Sqrt(p*(1-p)/float64(n)) / distuv.UnitNormal.Prob(q)
}

// WormChart returns the worm plot of w: per age group, the detrended Q–Q
// points of its z-scores within the approximate 95% envelope, all panels on
// common axes. It returns an error wrapping ErrEmpty when there are no
// groups, ErrTooFew for a group of fewer than 3 values and ErrNaN for NaN
// or infinite z.
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
		if len(g.Z) < minWormN {
			return nil, fmt.Errorf("worm plot %s: %d values, need %d: %w", name, len(g.Z), minWormN, ErrTooFew)
		}
		if err := checkFinite("z", g.Z); err != nil {
			return nil, fmt.Errorf("worm plot %s: %w", name, err)
		}
	}
	s := newSettings(opt)
	base := s.base()
	hue := s.hueDeg()

	type panel struct{ q, d []float64 }
	panels := make([]panel, len(w.Groups))
	xlim, ylim := wormMinX, wormMinY
	for i, g := range w.Groups {
		q, d := wormPoints(g.Z)
		panels[i] = panel{q, d}
		for j := range q {
			xlim = math.Max(xlim, 1.05*math.Abs(q[j]))
			ylim = math.Max(ylim, 1.15*math.Abs(d[j]))
		}
	}
	xlim = math.Ceil(xlim*2) / 2
	ylim = math.Ceil(ylim*5) / 5

	cols := s.columns
	if cols == 0 {
		cols = int(math.Ceil(math.Sqrt(float64(len(w.Groups)))))
	}
	cols = min(cols, len(w.Groups))
	rows := (len(w.Groups) + cols - 1) / cols
	grid := make([][]*plot.Plot, rows)
	for r := range grid {
		grid[r] = make([]*plot.Plot, cols)
	}

	fill := Palette(hue, 1)[0]
	edge := draw.LineStyle{Color: shade(hue, 0.45), Width: 0.8, Dashes: []vg.Length{3, 2}}
	scale := base / DefaultFontSize
	inside := draw.GlyphStyle{Color: shade(hue, medianLight), Radius: 1.6 * scale, Shape: draw.CircleGlyph{}}
	outside := draw.GlyphStyle{Color: accentColors[0], Radius: 2.0 * scale, Shape: draw.CircleGlyph{}}
	for i, g := range w.Groups {
		p := newPlot(base * panelScale)
		p.X.Tick.Marker = niceTicks{target: 5}
		p.Y.Tick.Marker = niceTicks{target: 5}
		n := len(g.Z)
		r, c := i/cols, i%cols
		out := 0
		for j := range panels[i].q {
			if math.Abs(panels[i].d[j]) > wormEnvelope(panels[i].q[j], n) {
				out++
			}
		}
		p.Title.Text = fmt.Sprintf("%s  (n = %d, %d outside)", groupName(i, g.Label), n, out)

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
		for _, e := range []plotter.XYs{upper, lower} {
			ln, err := plotter.NewLine(e)
			if err != nil {
				return nil, err
			}
			ln.LineStyle = edge
			p.Add(ln)
		}
		zero, err := plotter.NewLine(plotter.XYs{{X: -xlim, Y: 0}, {X: xlim, Y: 0}})
		if err != nil {
			return nil, err
		}
		zero.LineStyle = draw.LineStyle{Color: inkColor, Width: 0.5}
		p.Add(zero)
		pts, err := plotter.NewScatter(xys(panels[i].q, panels[i].d))
		if err != nil {
			return nil, err
		}
		q, d := panels[i].q, panels[i].d
		pts.GlyphStyleFunc = func(j int) draw.GlyphStyle {
			if math.Abs(d[j]) > wormEnvelope(q[j], n) {
				return outside
			}
			return inside
		}
		p.Add(pts)

		p.X.Min, p.X.Max = -xlim, xlim
		p.Y.Min, p.Y.Max = -ylim, ylim
		if r == rows-1 { // bottom row only, so all rows are spaced alike
			p.X.Label.Text = "Unit normal quantile"
		}
		if c == 0 {
			p.Y.Label.Text = "Deviation"
		}
		grid[r][c] = p
	}

	title := s.title
	if title == "" {
		title = joinTitle("Worm plot of "+measureName(w.Measure)+" z-scores", w.Stratum)
	}
	return &Figure{Title: title, Panels: grid, Caution: w.Caution, fontSize: base}, nil
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
