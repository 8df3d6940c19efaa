package clinic

import (
	"bytes"
	"fmt"

	"gonum.org/v1/plot/vg"

	"growband/curve"
	"growband/internal/refchart"
	"growband/render"
)

// chartAges is the number of equally spaced ages at which the centile curves
// are evaluated for drawing: enough for smooth lines at chart size.
const chartAges = 121

// maxChartLabels is the most points whose z-score is written beside them;
// longer trajectories would be cluttered by labels.
const maxChartLabels = 8

// chartSize is the size a chart is drawn at, its base font size, and
// whether it carries the caution (the page shows it beside the chart). The
// SVG is scaled to the width of its box on the page, so the font size on
// screen is the base size times that width over the drawn width.
type chartSize struct {
	width, height, font vg.Length
	noCaution           bool
	ageIntervals        int // most labelled age intervals; 0 for render's default
}

// Chart sizes. The API's chart has render's defaults. The page's charts are
// drawn near the size they are shown at, so that their smallest text (the
// notes beside a child's points, 0.72 of the base size) stays at least
// 11 px on screen: the wide chart is shown from a window of 38rem (608 px)
// up, in a box at least 536 px wide (536/420 * 0.72 * 13 = 11.9 px); the
// phone chart below that, in a box at least 280 px wide from a window of
// 326 px (280/235 * 0.72 * 13 = 11.2 px). style.css holds the breakpoint.
var (
	apiChart   = chartSize{}
	pageChart  = chartSize{width: 420, height: 300, font: 13, noCaution: true}
	phoneChart = chartSize{width: 235, height: 225, font: 13, noCaution: true, ageIntervals: phoneAgeIntervals}
)

// phoneAgeIntervals: the phone chart labels at most 5 age intervals (0–60
// months every 12, 0–19 years every 5): at 235 drawn units wide, the
// default 11 labels of 0–60 months sit about 19 units apart, and a
// two-digit label at font 13 is about 14 wide, leaving almost no gap.
const phoneAgeIntervals = 5

// point is one measurement of a child drawn on the chart.
type point struct {
	Age, Value, Z float64
}

// chartSVG draws the centile chart of one stratum with the child's points
// (ages inside the stratum's range) as a trajectory, and returns the SVG.
func chartSVG(r *curve.Reference, st *curve.Stratum, pts []point, size chartSize) ([]byte, error) {
	c, _, err := refchart.Centiles(r, st, &refchart.Options{Points: chartAges})
	if err != nil {
		return nil, fmt.Errorf("centile table: %w", err)
	}
	c.Caution = cautionOf(r)
	if size.noCaution {
		c.Caution = ""
	}
	if len(pts) > 0 {
		kid := render.Child{Label: "child"}
		for _, p := range pts {
			kid.Ages = append(kid.Ages, p.Age)
			kid.Values = append(kid.Values, p.Value)
			kid.Z = append(kid.Z, p.Z)
		}
		if len(pts) > maxChartLabels {
			kid.Z = nil
		}
		c.Children = []render.Child{kid}
	}
	var opts []render.Option
	if size.font > 0 {
		opts = append(opts, render.WithFontSize(size.font))
	}
	if size.ageIntervals > 0 {
		opts = append(opts, render.WithAgeIntervals(size.ageIntervals))
	}
	fig, err := render.CentileChart(c, opts...)
	if err != nil {
		return nil, err
	}
	var buf bytes.Buffer
	if err := render.Write(&buf, fig, "svg", size.width, size.height); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// inlineSVG strips what precedes the <svg> element (an XML declaration), so
// the chart can be placed inside an HTML page.
func inlineSVG(svg []byte) []byte {
	if i := bytes.Index(svg, []byte("<svg")); i > 0 {
		return svg[i:]
	}
	return svg
}
