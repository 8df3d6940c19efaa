package clinic

import (
	"bytes"
	"fmt"

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

// point is one measurement of a child drawn on the chart.
type point struct {
	Age, Value, Z float64
}

// chartSVG draws the centile chart of one stratum with the child's points
// (ages inside the stratum's range) as a trajectory, and returns the SVG.
func chartSVG(r *curve.Reference, st *curve.Stratum, pts []point) ([]byte, error) {
	c, _, err := refchart.Centiles(r, st, &refchart.Options{Points: chartAges})
	if err != nil {
		return nil, fmt.Errorf("centile table: %w", err)
	}
	c.Caution = cautionOf(r)
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
	fig, err := render.CentileChart(c)
	if err != nil {
		return nil, err
	}
	var buf bytes.Buffer
	if err := render.Write(&buf, fig, "svg", 0, 0); err != nil {
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
