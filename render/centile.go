package render

import (
	"fmt"
	"image/color"
	"math"
	"sort"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Centiles is the input of the centile chart. Measure, Unit and AgeUnit name
// the axes ("weight", "kg", "months"); Stratum names the group ("girls").
type Centiles struct {
	Measure, Unit, AgeUnit, Stratum string

	// Curves are the centile curves, in any order. Curves whose centiles
	// pair up about the median (3 with 97, 10 with 90, ...) are shaded
	// between, one hue, lighter outward.
	Curves []Curve

	// Data, when not nil, is the measurement cloud, drawn light and small.
	Data *Points

	// Children are highlighted trajectories drawn over the curves.
	Children []Child
	// Overlay, when not nil, is a second set of curves (another reference,
	// or a cohort's own fitted centiles) drawn as dark dashed lines over the
	// bands, on the same measurement scale.
	Overlay *Overlay

	// Caution is printed in small type at the bottom of the chart.
	Caution string
}

// Curve is one centile curve on increasing ages.
type Curve struct {
	Centile float64 // in (0, 100), for example 3, 50 or 97
	Ages    []float64
	Values  []float64
	Band    *Band // optional bootstrap interval
	// Label replaces the centile number at the curve's end, for example
	// "+2 SD".
	Label string
	// Dashed draws the curve as a dashed line outside the shaded bands, as
	// for the curves at whole SD.
	Dashed bool
}

// Overlay is a second set of curves on a centile chart, named in the
// legend by Label.
type Overlay struct {
	Label  string
	Curves []Curve
}

// Band is a pointwise interval about a curve, for example a bootstrap 95%
// interval. Ages may be nil to mean the curve's own ages.
type Band struct {
	Ages   []float64
	Lo, Hi []float64
}

// Points is a cloud of measurements.
type Points struct {
	Ages, Values []float64
}

// Child is one child's measurements, drawn as a connected trajectory with
// its own marker. Z, when not empty, holds each point's z-score, written
// beside the point.
type Child struct {
	Label  string
	Ages   []float64
	Values []float64
	Z      []float64
}

// medianCentile is the centile drawn emphasised.
const medianCentile = 50

// maxCloudPoints is the most measurements drawn as the light cloud. Larger
// clouds are thinned to every k-th row, and the legend says so; beyond a
// few thousand points a cloud at chart size is a solid smear, and the SVG
// of a registry's rows would run to hundreds of megabytes (our choice).
const maxCloudPoints = 5000

// sdDashes and overlayDashes are the dash patterns of the whole-SD curves
// and of overlaid curves.
var (
	sdDashes      = []vg.Length{2, 2}
	overlayDashes = []vg.Length{5, 2.5}
)

// pairTol is how far from 100 the sum of two centiles may be and still pair
// them as a band (centiles are given as decimals such as 2.5 and 97.5).
const pairTol = 1e-9

// bootstrapAlpha is the opacity of the bootstrap ribbons: enough to see
// the interval, little enough to read the bands beneath.
const bootstrapAlpha = 0x24

// bootstrapEdge is the dotted line at each end of a bootstrap interval.
func bootstrapEdge(hue float64) draw.LineStyle {
	return draw.LineStyle{Color: shade(hue, lineLight), Width: 0.5, Dashes: []vg.Length{1, 1.5}}
}

// Line widths.
const (
	centileWidth = vg.Length(0.7)
	medianWidth  = vg.Length(1.8)
	childWidth   = vg.Length(1.1)
	glyphRadius  = vg.Length(2.6) // at the default font size; scales with it
)

// CentileChart returns the centile chart of c. It returns an error wrapping
// ErrEmpty when c has no curves, ErrLength for mismatched lengths, ErrNaN for
// NaN or infinite values, ErrCentile or ErrDuplicate for a bad centile, and
// ErrOrder when a curve's ages do not increase.
func CentileChart(c *Centiles, opt ...Option) (*Figure, error) {
	if err := c.check(); err != nil {
		return nil, err
	}
	s := newSettings(opt)
	base := s.base()
	hue := s.hueDeg()

	curves := append([]Curve(nil), c.Curves...)
	sort.Slice(curves, func(i, j int) bool { return curves[i].Centile < curves[j].Centile })

	p := newPlot(base)
	p.X.Label.Text = withUnit("Age", c.AgeUnit)
	p.X.Tick.Marker = ageTicks{unit: c.AgeUnit, max: s.ageMax}
	p.Y.Label.Text = withUnit(capitalize(measureName(c.Measure)), c.Unit)

	// Nested bands, outermost first, so inner ones paint over. Dashed
	// curves (whole SD) lie outside the banding.
	var banded []Curve
	for _, cv := range curves {
		if !cv.Dashed {
			banded = append(banded, cv)
		}
	}
	pairs := bandPairs(banded)
	fills := Palette(hue, len(pairs))
	for k, pr := range pairs {
		lo, hi := banded[pr[0]], banded[pr[1]]
		poly := ribbon(lo.Ages, lo.Values, hi.Ages, hi.Values)
		poly.Color = fills[k]
		poly.LineStyle.Width = 0
		p.Add(poly)
		p.Legend.Add(fmt.Sprintf("centiles %s–%s", centileText(lo.Centile), centileText(hi.Centile)), poly)
	}
	addGrid(p, s)

	if c.Data != nil && len(c.Data.Ages) > 0 {
		n := len(c.Data.Ages)
		step := (n + maxCloudPoints - 1) / maxCloudPoints
		var cloud plotter.XYs
		for i := 0; i < n; i += step {
			cloud = append(cloud, plotter.XY{X: c.Data.Ages[i], Y: c.Data.Values[i]})
		}
		sc, err := plotter.NewScatter(cloud)
		if err != nil {
			return nil, fmt.Errorf("data: %w", err)
		}
		sc.GlyphStyle = draw.GlyphStyle{Color: scatterColor, Radius: vg.Points(0.9), Shape: draw.CircleGlyph{}}
		p.Add(sc)
		label := fmt.Sprintf("measurements (n = %d)", n)
		if step > 1 {
			label = fmt.Sprintf("measurements: every %s of %d drawn", ordinal(step), n)
		}
		p.Legend.Add(label, sc)
	}

	haveBand := false
	for _, cv := range curves {
		if cv.Band == nil {
			continue
		}
		ages := cv.Band.Ages
		if ages == nil {
			ages = cv.Ages
		}
		poly := ribbon(ages, cv.Band.Lo, ages, cv.Band.Hi)
		poly.Color = withAlpha(shade(hue, lineLight), bootstrapAlpha)
		poly.LineStyle.Width = 0
		p.Add(poly)
		for _, edge := range [][]float64{cv.Band.Lo, cv.Band.Hi} {
			ln, err := plotter.NewLine(xys(ages, edge))
			if err != nil {
				return nil, fmt.Errorf("centile %s band: %w", centileText(cv.Centile), err)
			}
			ln.LineStyle = bootstrapEdge(hue)
			p.Add(ln)
		}
		if !haveBand {
			p.Legend.Add("bootstrap 95% interval", poly, &plotter.Line{LineStyle: bootstrapEdge(hue)})
			haveBand = true
		}
	}

	labels := &endLabels{style: textStyle(base*smallScale, inkColor), pad: base * 0.35}
	for _, cv := range curves {
		ln, err := plotter.NewLine(xys(cv.Ages, cv.Values))
		if err != nil {
			return nil, fmt.Errorf("centile %s: %w", centileText(cv.Centile), err)
		}
		col := shade(hue, lineLight)
		ln.LineStyle = draw.LineStyle{Color: col, Width: centileWidth}
		switch {
		case cv.Dashed:
			ln.LineStyle.Dashes = sdDashes
		case cv.Centile == medianCentile:
			col = shade(hue, medianLight)
			ln.LineStyle = draw.LineStyle{Color: col, Width: medianWidth}
		}
		p.Add(ln)
		last := len(cv.Ages) - 1
		text := cv.Label
		if text == "" {
			text = centileText(cv.Centile)
		}
		labels.labels = append(labels.labels, endLabel{
			x: cv.Ages[last], y: cv.Values[last], text: text, color: col,
		})
	}
	if o := c.Overlay; o != nil {
		style := draw.LineStyle{Color: accentColors[1], Width: childWidth, Dashes: overlayDashes}
		for k, cv := range o.Curves {
			ln, err := plotter.NewLine(xys(cv.Ages, cv.Values))
			if err != nil {
				return nil, fmt.Errorf("overlay centile %s: %w", centileText(cv.Centile), err)
			}
			ln.LineStyle = style
			p.Add(ln)
			if k == 0 && o.Label != "" {
				p.Legend.Add(o.Label, ln)
			}
		}
	}

	labels.noteStyle = textStyle(base*smallScale*0.9, inkColor)
	labels.clear = glyphRadius*base/DefaultFontSize + 1.5
	for i, ch := range c.Children {
		col := accentColors[i%len(accentColors)]
		t := &trajectory{
			pts:    xys(ch.Ages, ch.Values),
			color:  col,
			shape:  childShapes[i%len(childShapes)],
			radius: glyphRadius * base / DefaultFontSize,
		}
		p.Add(t)
		if ch.Label != "" {
			p.Legend.Add(ch.Label, t)
		}
		for j, z := range ch.Z {
			labels.notes = append(labels.notes, pointNote{x: ch.Ages[j], y: ch.Values[j], text: fmt.Sprintf("%+.1f", z), color: col})
		}
	}
	p.Add(labels) // last, so no trajectory hides a label

	padRanges(p, labelRoom, 0.03)

	p.Add(legendBacking{})

	title := s.title
	if title == "" {
		title = joinTitle(capitalize(measureName(c.Measure))+" by age", c.Stratum)
	}
	return &Figure{Title: title, Panels: [][]*plot.Plot{{p}}, Caution: c.Caution, fontSize: base}, nil
}

func (c *Centiles) check() error {
	if c == nil || len(c.Curves) == 0 {
		return fmt.Errorf("centile chart: no curves: %w", ErrEmpty)
	}
	seen := make(map[float64]bool)
	for _, cv := range c.Curves {
		name := "centile " + centileText(cv.Centile)
		if math.IsNaN(cv.Centile) || !(cv.Centile > 0 && cv.Centile < 100) {
			return fmt.Errorf("%s: %w", name, ErrCentile)
		}
		if seen[cv.Centile] {
			return fmt.Errorf("%s: %w", name, ErrDuplicate)
		}
		seen[cv.Centile] = true
		if len(cv.Ages) == 0 {
			return fmt.Errorf("%s: no points: %w", name, ErrEmpty)
		}
		if err := checkPairs("ages", cv.Ages, "values", cv.Values); err != nil {
			return fmt.Errorf("%s: %w", name, err)
		}
		if err := checkIncreasing("ages", cv.Ages); err != nil {
			return fmt.Errorf("%s: %w", name, err)
		}
		if b := cv.Band; b != nil {
			ages := b.Ages
			if ages == nil {
				ages = cv.Ages
			} else if err := checkIncreasing("band ages", ages); err != nil {
				return fmt.Errorf("%s: %w", name, err)
			}
			if len(ages) == 0 {
				return fmt.Errorf("%s: band has no points: %w", name, ErrEmpty)
			}
			if err := checkPairs("band ages", ages, "band lo", b.Lo); err != nil {
				return fmt.Errorf("%s: %w", name, err)
			}
			if err := checkPairs("band ages", ages, "band hi", b.Hi); err != nil {
				return fmt.Errorf("%s: %w", name, err)
			}
		}
	}
	if c.Data != nil {
		if err := checkPairs("data ages", c.Data.Ages, "data values", c.Data.Values); err != nil {
			return err
		}
	}
	if c.Overlay != nil {
		for _, cv := range c.Overlay.Curves {
			name := "overlay centile " + centileText(cv.Centile)
			if len(cv.Ages) == 0 {
				return fmt.Errorf("%s: no points: %w", name, ErrEmpty)
			}
			if err := checkPairs("ages", cv.Ages, "values", cv.Values); err != nil {
				return fmt.Errorf("%s: %w", name, err)
			}
		}
	}
	for i, ch := range c.Children {
		name := fmt.Sprintf("child %d", i+1)
		if ch.Label != "" {
			name = fmt.Sprintf("child %q", ch.Label)
		}
		if len(ch.Ages) == 0 {
			return fmt.Errorf("%s: no points: %w", name, ErrEmpty)
		}
		if err := checkPairs("ages", ch.Ages, "values", ch.Values); err != nil {
			return fmt.Errorf("%s: %w", name, err)
		}
		if len(ch.Z) > 0 {
			if err := checkPairs("ages", ch.Ages, "z", ch.Z); err != nil {
				return fmt.Errorf("%s: %w", name, err)
			}
		}
	}
	return nil
}

// bandPairs pairs the sorted curves from the outside in, lowest with
// highest, while the two centiles sum to 100. It returns index pairs
// (lower, upper), outermost first.
func bandPairs(sorted []Curve) [][2]int {
	var out [][2]int
	for i, j := 0, len(sorted)-1; i < j; {
		sum := sorted[i].Centile + sorted[j].Centile
		switch {
		case math.Abs(sum-100) <= pairTol:
			out = append(out, [2]int{i, j})
			i++
			j--
		case sum < 100:
			i++
		default:
			j--
		}
	}
	return out
}

// ribbon returns the polygon between a lower and an upper curve.
func ribbon(xlo, ylo, xhi, yhi []float64) *plotter.Polygon {
	ring := make(plotter.XYs, 0, len(xlo)+len(xhi))
	for i := range xlo {
		ring = append(ring, plotter.XY{X: xlo[i], Y: ylo[i]})
	}
	for i := len(xhi) - 1; i >= 0; i-- {
		ring = append(ring, plotter.XY{X: xhi[i], Y: yhi[i]})
	}
	return &plotter.Polygon{XYs: []plotter.XYs{ring}}
}

// xys zips two checked, equally long slices.
func xys(x, y []float64) plotter.XYs {
	out := make(plotter.XYs, len(x))
	for i := range x {
		out[i] = plotter.XY{X: x[i], Y: y[i]}
	}
	return out
}

// centileText formats a centile as its number: "3", "50", "99.6".
func centileText(c float64) string {
	return strconv.FormatFloat(c, 'f', -1, 64)
}

func measureName(m string) string {
	if m == "" {
		return "measurement"
	}
	return m
}

// padRanges widens the plot's ranges by fractions of their spans: fx on the
// right only (room for curve labels), fy on both ends.
func padRanges(p *plot.Plot, fx, fy float64) {
	if dx := p.X.Max - p.X.Min; dx > 0 {
		p.X.Max += fx * dx
	}
	if dy := p.Y.Max - p.Y.Min; dy > 0 {
		p.Y.Min -= fy * dy
		p.Y.Max += fy * dy
	}
}

// childShapes are the markers of successive children.
var childShapes = []draw.GlyphDrawer{
	draw.CircleGlyph{}, draw.BoxGlyph{}, draw.PyramidGlyph{}, draw.RingGlyph{},
	draw.SquareGlyph{}, draw.TriangleGlyph{}, draw.CrossGlyph{}, draw.PlusGlyph{},
}

// trajectory is one child's connected measurements with a marker per point.
// The points' z-scores are written by the label layer, which keeps them off
// the curve labels.
type trajectory struct {
	pts    plotter.XYs
	color  color.Color
	shape  draw.GlyphDrawer
	radius vg.Length // marker radius
}

func (t *trajectory) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	pts := make([]vg.Point, len(t.pts))
	for i, xy := range t.pts {
		pts[i] = vg.Point{X: trX(xy.X), Y: trY(xy.Y)}
	}
	halo := draw.LineStyle{Color: color.White, Width: childWidth + 2}
	c.StrokeLines(halo, c.ClipLinesXY(pts)...)
	c.StrokeLines(draw.LineStyle{Color: t.color, Width: childWidth}, c.ClipLinesXY(pts)...)
	for _, pt := range pts {
		if !c.Contains(pt) {
			continue
		}
		c.DrawGlyph(draw.GlyphStyle{Color: color.White, Radius: t.radius + 1.2, Shape: draw.CircleGlyph{}}, pt)
		c.DrawGlyph(draw.GlyphStyle{Color: t.color, Radius: t.radius, Shape: t.shape}, pt)
	}
}

func (t *trajectory) DataRange() (xmin, xmax, ymin, ymax float64) {
	return plotter.XYRange(t.pts)
}

func (t *trajectory) GlyphBoxes(p *plot.Plot) []plot.GlyphBox {
	r := t.radius + 1.2
	out := make([]plot.GlyphBox, len(t.pts))
	for i, xy := range t.pts {
		out[i] = plot.GlyphBox{X: p.X.Norm(xy.X), Y: p.Y.Norm(xy.Y), Rectangle: vg.Rectangle{Min: vg.Point{X: -r, Y: -r}, Max: vg.Point{X: r, Y: r}}}
	}
	return out
}

func (t *trajectory) Thumbnail(c *draw.Canvas) {
	y := c.Center().Y
	c.StrokeLine2(draw.LineStyle{Color: t.color, Width: childWidth}, c.Min.X, y, c.Max.X, y)
	c.DrawGlyph(draw.GlyphStyle{Color: t.color, Radius: t.radius, Shape: t.shape}, c.Center())
}
