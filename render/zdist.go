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
	// Weights, when not nil, are survey weights of the z-scores: the
	// histogram, mean and SD are then weighted, and the chart says so.
	Weights []float64
	// Vs, when not nil, is a second cohort drawn over the first as an
	// outlined histogram on the same bins.
	Vs      *ZSample
	Caution string
}

// ZSample is a second cohort's z-scores and optional survey weights.
type ZSample struct {
	Cohort  string
	Z       []float64
	Weights []float64
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
// is one (with weights w, not nil, the weighted count over the summed
// weight). Values on a boundary go to the bin above. When more than maxBins
// bins would be needed the width doubles until they fit; the width used is
// returned. lo and hi, when finite, widen the bins' range to cover them.
func densityBins(sorted, w []float64, width, lo0, hi0 float64) ([]plotter.HistogramBin, float64) {
	n := len(sorted)
	first, last := math.Min(sorted[0], lo0), math.Max(sorted[n-1], hi0)
	lo := math.Floor(first / width)
	hi := math.Floor(last/width) + 1
	for hi-lo > maxBins {
		width *= 2
		lo = math.Floor(first / width)
		hi = math.Floor(last/width) + 1
	}
	bins := make([]plotter.HistogramBin, int(hi-lo))
	for k := range bins {
		bins[k].Min = (lo + float64(k)) * width
		bins[k].Max = (lo + float64(k) + 1) * width
	}
	total := 0.0
	for i, v := range sorted {
		k := int(math.Floor(v/width) - lo)
		k = max(0, min(k, len(bins)-1))
		wi := 1.0
		if w != nil {
			wi = w[i]
		}
		bins[k].Weight += wi
		total += wi
	}
	for k := range bins {
		bins[k].Weight /= total * width
	}
	return bins, width
}

// ZDistChart returns the histogram of z.Z on the density scale with the
// standard normal density over it and the count, mean and standard
// deviation written in a corner; with z.Weights these are survey-weighted
// and the chart says so. A second cohort z.Vs is drawn as an outlined
// histogram on the same bins with its own mean line. It returns an error
// wrapping ErrTooFew for fewer than two values, ErrNaN for NaN or infinite
// ones and ErrLength when weights and values differ in number.
func ZDistChart(z *ZDist, opt ...Option) (*Figure, error) {
	if z == nil || len(z.Z) == 0 {
		return nil, fmt.Errorf("z distribution: no values: %w", ErrEmpty)
	}
	a, err := newZSample("z distribution", z.Z, z.Weights)
	if err != nil {
		return nil, err
	}
	var b *zSample
	if z.Vs != nil {
		if b, err = newZSample("z distribution of "+z.Vs.Cohort, z.Vs.Z, z.Vs.Weights); err != nil {
			return nil, err
		}
	}
	s := newSettings(opt)
	base := s.base()
	hue := s.hueDeg()

	width := s.binWidth
	if width == 0 {
		width = binWidthFD(a.z)
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	if b != nil {
		lo, hi = b.z[0], b.z[len(b.z)-1]
	}
	bins, width := densityBins(a.z, a.w, width, lo, hi)

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
	name := "cohort"
	if z.Cohort != "" && b != nil {
		name = z.Cohort
	}
	weighted := ""
	if a.w != nil {
		weighted = ", weighted by survey weights"
	}
	p.Legend.Add(fmt.Sprintf("%s%s, bins of %g", name, weighted, width), hist)
	xhi := math.Max(zdistHalfWidth, math.Max(-bins[0].Min, bins[len(bins)-1].Max))
	var bbins []plotter.HistogramBin
	if b != nil {
		bbins, _ = densityBins(b.z, b.w, width, a.z[0], a.z[len(a.z)-1])
		outline := &plotter.Histogram{Bins: bbins, Width: width,
			LineStyle: draw.LineStyle{Color: accentColors[1], Width: 1.2}}
		p.Add(outline)
		vw := ""
		if b.w != nil {
			vw = ", weighted by survey weights"
		}
		p.Legend.Add(z.Vs.Cohort+vw, outline)
	}

	// A symmetric axis keeps z = 0 in the middle.
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

	notes := a.notes("")
	for k, smp := range []*zSample{a, b} {
		if smp == nil {
			continue
		}
		ml, err := plotter.NewLine(plotter.XYs{{X: smp.mean, Y: 0}, {X: smp.mean, Y: distuv.UnitNormal.Prob(0)}})
		if err != nil {
			return nil, err
		}
		ml.LineStyle = draw.LineStyle{Color: accentColors[k], Width: 1, Dashes: []vg.Length{4, 2}}
		p.Add(ml)
		label := "cohort mean"
		if b != nil {
			label = "mean of " + []string{z.Cohort, z.Vs.Cohort}[k]
		}
		p.Legend.Add(label, ml)
	}
	if b != nil {
		notes = append(a.notes(z.Cohort+": "), b.notes(z.Vs.Cohort+": ")...)
	}
	p.Add(&cornerNote{lines: notes, style: textStyle(base*smallScale, inkColor), inset: base * 0.6})
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
		if b != nil && z.Vs.Cohort != "" {
			t += " and " + z.Vs.Cohort
		}
		title = joinTitle(t, z.Stratum)
	}
	return &Figure{Title: title, Panels: [][]*plot.Plot{{p}}, Caution: z.Caution, fontSize: base}, nil
}

// zSample is a checked cohort: z sorted, weights (nil: none) in the same
// order, and the (weighted) mean and SD.
type zSample struct {
	z, w     []float64
	mean, sd float64
}

func newZSample(what string, z, w []float64) (*zSample, error) {
	if len(z) < minZDistN {
		return nil, fmt.Errorf("%s: %d value(s), need %d: %w", what, len(z), minZDistN, ErrTooFew)
	}
	if err := checkFinite("z", z); err != nil {
		return nil, fmt.Errorf("%s: %w", what, err)
	}
	out := &zSample{z: append([]float64(nil), z...)}
	if w != nil {
		if err := checkPairs("z", z, "weights", w); err != nil {
			return nil, fmt.Errorf("%s: %w", what, err)
		}
		idx := make([]int, len(z))
		for i := range idx {
			idx[i] = i
		}
		sort.Slice(idx, func(a, b int) bool { return z[idx[a]] < z[idx[b]] })
		out.w = make([]float64, len(z))
		for k, i := range idx {
			out.z[k], out.w[k] = z[i], w[i]
		}
	} else {
		sort.Float64s(out.z)
	}
	// Weighted mean and SD with the n/(n-1) correction, as the cohort
	// comparison estimates them (the ordinary sample SD for no weights).
	out.mean = stat.Mean(out.z, out.w)
	n := float64(len(out.z))
	out.sd = math.Sqrt(stat.MomentAbout(2, out.z, out.mean, out.w) * n / (n - 1))
	return out, nil
}

// notes are the corner lines of a sample: n, mean and SD.
func (s *zSample) notes(prefix string) []string {
	w := ""
	if s.w != nil {
		w = ", weighted mean and SD"
	}
	return []string{
		fmt.Sprintf("%sn = %d%s", prefix, len(s.z), w),
		fmt.Sprintf("mean = %.2f", s.mean),
		fmt.Sprintf("SD = %.2f", s.sd),
	}
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
