package render

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Diff is the input of the difference chart: for each centile, a curve over
// age of how far reference B lies from reference A in z units (for example
// the z-score, under A, of B's centile curve minus the centile's own z).
type Diff struct {
	Measure, AgeUnit, Stratum string
	A, B                      string // names of the two references; the chart shows B against A
	YLabel                    string // y-axis label; "" means "Difference (z units)"
	Curves                    []DiffCurve
	Caution                   string
}

// DiffCurve is one centile's difference curve on increasing ages.
type DiffCurve struct {
	Centile float64 // in (0, 100)
	Ages    []float64
	Z       []float64
}

// diffMinY is the least half-height of the difference chart's y axis, in z
// units, so that negligible differences are not magnified to fill the
// chart.
const diffMinY = 0.25

// Lightness range of the difference lines: the median darkest, the
// outermost centile lightest that still reads as a line on white.
const (
	diffLightNear = medianLight
	diffLightFar  = 0.58
)

// belowDashes marks the curves of centiles below the median, which share
// their colours with their mirror centiles above it.
var belowDashes = []vg.Length{5, 2.5}

// DiffChart returns the line chart of d's difference curves over age, each
// labelled at its right end, about a zero line. It returns an error wrapping
// ErrEmpty, ErrLength, ErrNaN, ErrCentile, ErrDuplicate or ErrOrder for bad
// input, as CentileChart does.
func DiffChart(d *Diff, opt ...Option) (*Figure, error) {
	if d == nil || len(d.Curves) == 0 {
		return nil, fmt.Errorf("difference chart: no curves: %w", ErrEmpty)
	}
	seen := make(map[float64]bool)
	for _, cv := range d.Curves {
		name := "difference chart: centile " + centileText(cv.Centile)
		if math.IsNaN(cv.Centile) || !(cv.Centile > 0 && cv.Centile < 100) {
			return nil, fmt.Errorf("%s: %w", name, ErrCentile)
		}
		if seen[cv.Centile] {
			return nil, fmt.Errorf("%s: %w", name, ErrDuplicate)
		}
		seen[cv.Centile] = true
		if len(cv.Ages) == 0 {
			return nil, fmt.Errorf("%s: no points: %w", name, ErrEmpty)
		}
		if err := checkPairs("ages", cv.Ages, "z", cv.Z); err != nil {
			return nil, fmt.Errorf("%s: %w", name, err)
		}
		if err := checkIncreasing("ages", cv.Ages); err != nil {
			return nil, fmt.Errorf("%s: %w", name, err)
		}
	}
	s := newSettings(opt)
	base := s.base()
	hue := s.hueDeg()

	curves := append([]DiffCurve(nil), d.Curves...)
	sort.Slice(curves, func(i, j int) bool { return curves[i].Centile < curves[j].Centile })
	far := 0.0
	for _, cv := range curves {
		far = math.Max(far, math.Abs(cv.Centile-medianCentile))
	}

	p := newPlot(base)
	p.X.Label.Text = withUnit("Age", d.AgeUnit)
	p.X.Tick.Marker = ageTicks{unit: d.AgeUnit}
	p.Y.Label.Text = d.YLabel
	if p.Y.Label.Text == "" {
		p.Y.Label.Text = "Difference (z units)"
	}
	addGrid(p, s)

	xmin, xmax := math.Inf(1), math.Inf(-1)
	ylim := diffMinY
	for _, cv := range curves {
		xmin = math.Min(xmin, cv.Ages[0])
		xmax = math.Max(xmax, cv.Ages[len(cv.Ages)-1])
		for _, v := range cv.Z {
			ylim = math.Max(ylim, 1.1*math.Abs(v))
		}
	}
	zero, err := plotter.NewLine(plotter.XYs{{X: xmin, Y: 0}, {X: xmax, Y: 0}})
	if err != nil {
		return nil, err
	}
	zero.LineStyle = draw.LineStyle{Color: inkColor, Width: 0.6}
	p.Add(zero)

	labels := &endLabels{style: textStyle(base*smallScale, inkColor), pad: base * 0.35}
	for _, cv := range curves {
		ln, err := plotter.NewLine(xys(cv.Ages, cv.Z))
		if err != nil {
			return nil, fmt.Errorf("centile %s: %w", centileText(cv.Centile), err)
		}
		t := 0.0
		if far > 0 {
			t = math.Abs(cv.Centile-medianCentile) / far
		}
		col := shade(hue, diffLightNear+(diffLightFar-diffLightNear)*t)
		width := vg.Length(1.1)
		if cv.Centile == medianCentile {
			width = medianWidth
		}
		ln.LineStyle = draw.LineStyle{Color: col, Width: width}
		if cv.Centile < medianCentile {
			ln.LineStyle.Dashes = belowDashes
		}
		p.Add(ln)
		last := len(cv.Ages) - 1
		labels.labels = append(labels.labels, endLabel{x: cv.Ages[last], y: cv.Z[last], text: centileText(cv.Centile), color: col})
	}
	p.Add(labels)
	if curves[0].Centile < medianCentile && curves[len(curves)-1].Centile > medianCentile {
		for _, k := range []struct {
			name   string
			dashes []vg.Length
		}{{"centiles above the median", nil}, {"centiles below the median", belowDashes}} {
			key := &plotter.Line{LineStyle: draw.LineStyle{Color: shade(hue, lineLight), Width: 1.1, Dashes: k.dashes}}
			p.Legend.Add(k.name, key)
		}
	}
	p.X.Min, p.X.Max = xmin, xmax
	padRanges(p, labelRoom, 0)
	p.Y.Min, p.Y.Max = -ylim, ylim

	p.Add(legendBacking{})

	title := s.title
	if title == "" {
		// File names are shown as they are, never capitalised.
		t := capitalize(measureName(d.Measure)) + ": difference between references"
		switch {
		case d.A != "" && d.B != "":
			t = capitalize(measureName(d.Measure)) + " centiles of " + d.B + " in z-scores of " + d.A
		case d.B != "":
			t = capitalize(measureName(d.Measure)) + " centiles of " + d.B + " in z-scores of the reference"
		}
		title = joinTitle(t, d.Stratum)
	}
	return &Figure{Title: title, Panels: [][]*plot.Plot{{p}}, Caution: d.Caution, fontSize: base}, nil
}
