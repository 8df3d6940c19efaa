// Package render draws growband's charts with gonum/plot: the centile chart
// (with optional curves at whole SD and an overlay of a second set of
// curves), the worm plot of detrended normal Q–Q points per age group, the
// histogram of a cohort's z-scores against the standard normal density
// (weighted, and with a second cohort overlaid, on request), the normal Q–Q
// plot, the mean z by age band, and the chart of a difference curve between
// two references in z units. Charts are built from plain input structs (this
// package knows nothing of how curves are fitted) and written as SVG, PNG or
// PDF by Write and Save. Age axes tick at the steps growth charts use (in
// months 3, 6 or 12; in years whole years). Point clouds and Q–Q or worm
// points are thinned to evenly spaced rows or ranks beyond a few thousand
// (clouds) or 400 (panels), and the chart says so, so that a chart's size
// does not grow with the data.
//
// Each constructor returns a *Figure: one plot or a grid of panels, a title
// and the caution printed in small type at the bottom.
//
// The centile chart shades the areas between paired centiles (for example
// 3–97, 10–90, 25–75) in one hue, lighter outward; see Palette.
//
// The worm plot draws, per age group, the points (qᵢ, dᵢ) of a detrended
// normal Q–Q plot that curve.Check computes (qᵢ the expected normal score of
// the i-th smallest z, dᵢ = z₍ᵢ₎ − qᵢ) on the approximate pointwise 95% band
//
//	±1.96 · √(p(1 − p)/n) / φ(q),   p = Φ(q),
//
// from the large-sample standard error of a normal order statistic.
//
// References:
//   - van Buuren S, Fredriks M (2001). Worm plot: a simple diagnostic device
//     for modelling growth reference curves. Statistics in Medicine 20,
//     1259–1277.
//   - Freedman D, Diaconis P (1981). On the histogram as a density estimator:
//     L2 theory. Zeitschrift für Wahrscheinlichkeitstheorie und verwandte
//     Gebiete 57, 453–476.
package render
