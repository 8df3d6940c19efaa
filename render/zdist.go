package render

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// ZDist is the input of the z-score distribution chart: one cohort's
// z-scores against the reference, shown as a density histogram under the
// standard normal density.
type ZDist struct {
	Measure, Stratum string
	Cohort           string // names the cohort, for example "clinic 2024"
	Z                []float64
	Caution          string
}

// Histogram constants.
const (
	minZDistN = 2 // a standard deviation needs two values
	// zdistHalfWidth is the least half-width of the z axis: ±4 shows the
	// normal density down to 1e-4 of its peak.
	zdistHalfWidth = 4
	// maxBins caps the number of bins when a few extreme z stretch the
	// range; the bin width grows instead.
	maxBins = 400
	// normalSteps is the number of segments drawing the normal density.
	normalSteps = 200
)

// tidyWidths are the bin widths, in z units, the default rule rounds to.
var tidyWidths = []float64{0.1, 0.2, 0.25, 0.5, 1}

// binWidthFD returns the Freedman–Diaconis bin width 2·IQR·n^(−1/3) of
// sorted x, rounded to the nearest tidy width (on a log scale). It returns
// 0.25 when the interquartile range is zero.
//
// References:
//   - Freedman D, Diaconis P (1981). On the histogram as a density
//     estimator: L2 theory. Zeitschrift für Wahrscheinlichkeitstheorie und
//     verwandte Gebiete 57, 453–476.
func binWidthFD(sorted []float64) float64 {
	iqr := stat.Quantile(0.75, stat.LinInterp, sorted, nil) - stat.Quantile(0.25, stat.LinInterp, sorted, nil)
	if !(iqr > 0) {
		return 0.25
	}
	raw := 2 * iqr * math.Pow(float64(len(sorted)), -1.0/3)
	best, bestErr := tidyWidths[0], math.Inf(1)
	for _, w := range tidyWidths {
		if e := math.Abs(math.Log(raw / w)); e < bestErr {
			best, bestErr = w, e
		}
	}
	return best
}

// densityBins returns histogram bins of the given width aligned to
// multiples of it, holding the density count/(n·width) so the bars' area
// is one. Values on a boundary go to the bin above. When more than maxBins
// bins would be needed the width doubles until they fit; the width used is
// returned.
func densityBins(sorted []float64, width float64) ([]plotter.HistogramBin, float64) {
	n := len(sorted)
	lo := math.Floor(sorted[0] / width)
	hi := math.Floor(sorted[n-1]/width) + 1
	for hi-lo > maxBins {
		width *= 2
		lo = math.Floor(sorted[0] / width)
		hi = math.Floor(sorted[n-1]/width) + 1
	}
	bins := make([]plotter.HistogramBin, int(hi-lo))
	for k := range bins {
		bins[k].Min = (lo + float64(k)) * width
		bins[k].Max = (lo + float64(k) + 1) * width
	}
	for _, v := range sorted {
		k := int(math.Floor(v/width) - lo)
		k = max(0, min(k, len(bins)-1))
		bins[k].Weight++
	}
	for k := range bins {
		bins[k].Weight /= float64(n) * width
	}
	return bins, width
}

// ZDistChart returns the histogram of z.Z on the density scale with the
// standard normal density over it and the count, mean and standard
// deviation written in a corner. It returns an error wrapping ErrTooFew for
// fewer than two values and ErrNaN for NaN or infinite ones.
func ZDistChart(z *ZDist, opt ...Option) (*Figure, error) {
	if z == nil || len(z.Z) == 0 {
		return nil, fmt.Errorf("z distribution: no values: %w", ErrEmpty)
	}
	if len(z.Z) < minZDistN {
		return nil, fmt.Errorf("z distribution: %d value, need %d: %w", len(z.Z), minZDistN, ErrTooFew)
	}
	if err := checkFinite("z", z.Z); err != nil {
		return nil, fmt.Errorf("z distribution: %w", err)
	}
	s := newSettings(opt)
	base := s.base()
	hue := s.hueDeg()

	sorted := append([]float64(nil), z.Z...)
	sort.Float64s(sorted)
	width := s.binWidth
	if width == 0 {
		width = binWidthFD(sorted)
	}
	mean, sd := stat.MeanStdDev(sorted, nil)

	bins, width := densityBins(sorted, width)

	p := newPlot(base)
	p.X.Label.Text = "z-score"
	p.Y.Label.Text = "Density"
	hist := &plotter.Histogram{
		Bins:      bins,
		Width:     width,
		FillColor: Palette(hue, 2)[1],
		LineStyle: draw.LineStyle{Color: shade(hue, 0.55), Width: 0.5},
	}
	p.Add(hist)
	addGrid(p, s)
	p.Legend.Add(fmt.Sprintf("cohort, bins of %g", width), hist)

	// A symmetric axis keeps z = 0 in the middle.
	xhi := math.Max(zdistHalfWidth, math.Max(-bins[0].Min, bins[len(bins)-1].Max))
	xlo := -xhi
	var curve plotter.XYs
	for k := 0; k <= normalSteps; k++ {
		x := xlo + (xhi-xlo)*float64(k)/normalSteps
		curve = append(curve, plotter.XY{X: x, Y: distuv.UnitNormal.Prob(x)})
	}
	ln, err := plotter.NewLine(curve)
	if err != nil {
		return nil, err
	}
	ln.LineStyle = draw.LineStyle{Color: shade(hue, medianLight), Width: medianWidth}
	p.Add(ln)
	p.Legend.Add("standard normal density", ln)

	meanLine, err := plotter.NewLine(plotter.XYs{{X: mean, Y: 0}, {X: mean, Y: distuv.UnitNormal.Prob(0)}})
	if err != nil {
		return nil, err
	}
	meanLine.LineStyle = draw.LineStyle{Color: accentColors[0], Width: 1, Dashes: []vg.Length{4, 2}}
	p.Add(meanLine)
	p.Legend.Add("cohort mean", meanLine)

	p.Add(&cornerNote{
		lines: []string{
			fmt.Sprintf("n = %d", len(sorted)),
			fmt.Sprintf("mean = %.2f", mean),
			fmt.Sprintf("SD = %.2f", sd),
		},
		style: textStyle(base*smallScale, inkColor),
		inset: base * 0.6,
	})
	p.X.Min, p.X.Max = xlo, xhi
	p.Y.Min = 0
	p.Y.Max *= 1.08

	p.Add(legendBacking{})

	title := s.title
	if title == "" {
		t := capitalize(measureName(z.Measure)) + " z-scores"
		if z.Cohort != "" {
			t += " in " + z.Cohort
		}
		title = joinTitle(t, z.Stratum)
	}
	return &Figure{Title: title, Panels: [][]*plot.Plot{{p}}, Caution: z.Caution, fontSize: base}, nil
}

// cornerNote writes a few right-aligned lines in the top-right corner of
// the data area.
type cornerNote struct {
	lines []string
	style text.Style
	inset vg.Length
}

func (n *cornerNote) Plot(c draw.Canvas, _ *plot.Plot) {
	h := n.style.FontExtents().Height
	y := c.Max.Y - n.inset
	for _, l := range n.lines {
		y -= h
		fillHaloText(&c, n.style, vg.Point{X: c.Max.X - n.inset - n.style.Width(l), Y: y}, l)
	}
}
