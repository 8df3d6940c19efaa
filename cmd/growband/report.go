package main

import (
	"bytes"
	"fmt"
	"html/template"
	"io"
	"math"
	"regexp"
	"slices"
	"strings"
	"time"

	"growband/curve"
	"growband/render"
)

// reportCSS keeps the report readable on screen and in print without any
// external asset.
const reportCSS = `
body { font-family: system-ui, -apple-system, "Segoe UI", Helvetica, Arial, sans-serif;
       max-width: 62rem; margin: 2rem auto; padding: 0 1rem; color: #1d2628; line-height: 1.45; }
h1 { font-size: 1.6rem; margin-bottom: 0.2rem; }
h2 { font-size: 1.25rem; margin-top: 2.2rem; border-bottom: 1px solid #c9d6d8; padding-bottom: 0.2rem; }
h3 { font-size: 1.05rem; margin-top: 1.4rem; }
.meta { color: #56676a; font-size: 0.92rem; }
.caution { background: #fff7e0; border-left: 4px solid #d39b00; padding: 0.6rem 0.9rem; margin: 1.2rem 0; }
table { border-collapse: collapse; margin: 0.6rem 0 1rem; font-size: 0.9rem; }
th, td { padding: 0.25rem 0.6rem; border-bottom: 1px solid #e1e8e9; text-align: right; }
th { background: #eef4f5; }
td.l, th.l { text-align: left; }
td.off { color: #a32020; font-weight: 600; }
figure { margin: 1rem 0; }
figure svg { width: 100%; height: auto; }
code { background: #f1f4f4; padding: 0 0.25rem; }
ul.files { columns: 2; }
`

const reportHTML = `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>growband reference: {{.Title}}</title>
<style>{{.CSS}}</style>
</head>
<body>
<h1>Growth reference: {{.Title}}</h1>
<p class="meta">Plan <code>{{.Plan}}</code>, input <code>{{.Input}}</code>. Built {{.Created}}; reading and fitting took {{.Elapsed}}.</p>
<div class="caution"><strong>Caution.</strong> {{.Caution}}</div>

<h2>Summary</h2>
<table>
<tr><th class="l">rows read</th><td>{{.Read}}</td></tr>
<tr><th class="l">rows used</th><td>{{.Used}}</td></tr>
<tr><th class="l">rows excluded</th><td>{{.Excluded}}</td></tr>
</table>
<p>{{.Passes}}. Curves are quantile regressions on {{.Degree}} B-splines in {{.Scale}}, fitted without crossing at {{.TauCount}} levels; the chart shows centiles {{.Centiles}}.</p>
<p>{{.Weights}}</p>
<table>
<tr><th class="l">stratum</th><th>n</th><th>ages</th><th>interior knots</th><th>lambda</th><th>effective df (median)</th><th class="l">chosen by</th><th class="l">sample-size guard</th></tr>
{{range .Strata}}<tr><td class="l">{{.Name}}</td><td>{{.N}}</td><td>{{.Ages}}</td><td>{{.Knots}}</td><td>{{.Lambda}}</td><td>{{.EDF}}</td><td class="l">{{.Criterion}}</td><td class="l">{{.Guard}}</td></tr>
{{end}}</table>
<p class="meta">The effective degrees of freedom of a fit are the number of rows its median curve passes through
exactly (Koenker, Ng &amp; Portnoy 1994). {{.ScaleChoice}}</p>
{{range .Candidates}}<h3>Smoothness values tried: {{.Name}}</h3>
<p class="meta">In the order tried: interior knot counts from the fewest (no penalty), then penalty
weights lambda at the best count; {{.Rule}}. The chosen value is marked.</p>
<table>
<tr><th>interior knots</th><th>lambda</th><th>{{.Criterion}}</th><th>effective df (median)</th><th class="l"></th></tr>
{{range .Rows}}<tr><td>{{.Knots}}</td><td>{{.Lambda}}</td><td>{{.Score}}</td><td>{{.EDF}}</td><td class="l">{{if .Chosen}}chosen{{end}}</td></tr>
{{end}}</table>
{{end}}
{{if .Scales}}<h3>Age scales tried</h3>
<p class="meta">Each candidate scale scored by the smoothness criterion summed over strata (lower is
better); the best whose curves pass the edge checks (no ties, hooks or bends the data do not show)
is chosen. A scale whose curves at an end of the age range would rest on under a quarter of the rows'
worth that the best-supported scale's rest on there is passed over: its centiles at that end would
carry over twice the sampling error.</p>
<table>
<tr><th class="l">age scale</th><th>criterion</th><th>edge problems</th><th class="l"></th></tr>
{{range .Scales}}<tr><td class="l">{{.Scale}}</td><td>{{.Score}}</td><td>{{.Problems}}</td><td class="l">{{if .Chosen}}chosen scale{{end}}</td></tr>
{{end}}</table>
{{end}}
{{range .Notes}}<p class="meta">Note: {{.}}</p>
{{end}}

<h2>Centile charts</h2>
{{range .Charts}}<figure>{{.}}</figure>
{{end}}<p class="meta">To draw the curves at &minus;3, &minus;2, +2 and +3 SD on these charts, set
<code>sd_curves = true</code> in the plan's <code>[output]</code> table; for one chart, or a part of the age range:
<code>growband chart --ref reference.json --sd-curves --ages 0:24 --out chart.png</code>.</p>

{{if .Conditional}}<h2>Growth since the previous visit</h2>
<p>For a child measured at the age named on each chart, the centiles of the measurement one gap later,
given the earlier measurement (the reference's conditional model; its table is conditional.csv).</p>
{{range .Conditional}}<figure>{{.}}</figure>
{{end}}{{end}}
{{if .Bands}}<h2>Bootstrap bands</h2>
<p>Each chart centile carries a pointwise 95% band from {{.Replicates}} bootstrap replicates
({{.Resampled}} drawn with replacement, each centile refitted without the roughness penalty and,
where the knots were chosen automatically, with more knots, so that the band is not pulled by the
smoothing). At each age the band is that refit's curve &plusmn; 1.96 standard deviations of the
replicate curves: in repeated samples like this one it would hold the true centile about 95 times in
100 (93&ndash;95 in our simulations). The bands are columns of <code>centiles.csv</code> and of
<code>growband table</code>.</p>
<table>
<tr><th class="l">stratum</th><th>centile</th><th>median width</th><th>widest</th><th>at age</th><th class="l">stable</th></tr>
{{range .Bands}}<tr><td class="l">{{.Name}}</td><td>{{.Centile}}</td><td>{{.Median}}</td><td>{{.Widest}}</td><td>{{.At}}</td><td class="l{{if .Unstable}} off{{end}}">{{.Stable}}</td></tr>
{{end}}</table>
{{if .Unstable}}<p><strong>Some bands are unstable.</strong> {{.Unstable}}</p>{{else}}<p>Every band is stable: the replicate curves are centred on the fitted curve everywhere
(|bias|/SE at most {{.BiasLimit}}).</p>{{end}}
{{end}}
<h2>Rows not used</h2>
{{if .Reasons}}<table>
<tr><th class="l">reason</th><th>rows</th></tr>
{{range .Reasons}}<tr><td class="l">{{.Reason}}</td><td>{{.N}}</td></tr>
{{end}}<tr><th class="l">total</th><th>{{.Excluded}}</th></tr>
</table>
<p>Each row is listed with its line number and reason in <code>excluded.csv</code>.</p>
{{else}}<p>Every row read was used.</p>{{end}}

<h2>Diagnostics</h2>
<p>The rows used, scored against the reference. Per age group: the percentage of rows below each
centile, which should be close to the centile itself (red: the centile lies outside the Wilson 95%
interval of the observed share), and the mean, SD, skewness and kurtosis of the z-scores (0, 1, 0
and 3 for a unit normal). Checking a reference against its own training rows is lenient; check it
on other data with <code>growband check</code> as well.</p>
{{range .Coverage}}<h3>{{.Name}}</h3>
<table>
<tr><th>ages</th><th>n</th>{{range .Centiles}}<th>{{.}}</th>{{end}}<th>mean z</th><th>SD z</th><th>skew</th><th>kurtosis</th></tr>
{{range .Rows}}<tr><td>{{.Ages}}</td><td>{{.N}}</td>{{range .Shares}}<td{{if .Off}} class="off"{{end}}>{{.Text}}</td>{{end}}<td>{{.Mean}}</td><td>{{.SD}}</td><td>{{.Skew}}</td><td>{{.Kurt}}</td></tr>
{{end}}</table>
{{end}}
<h3>Q-tests</h3>
<p>Royston &amp; Wright (2000): for each moment, the sum over age groups of squared standardised
departures, chi-squared on DF = contributing groups when the reference fits. Small P values point at
a misfit in that moment.</p>
<table>
<tr><th class="l">stratum</th><th>groups</th><th class="l">test</th><th>Q</th><th>DF</th><th>P</th></tr>
{{range .Q}}<tr><td class="l">{{.Name}}</td><td>{{.Groups}}</td><td class="l">{{.Test}}</td><td>{{.Q}}</td><td>{{.DF}}</td><td>{{.P}}</td></tr>
{{end}}</table>
<h3>Worm plots</h3>
<p>Detrended normal Q&ndash;Q plots of the z-scores per age group (van Buuren &amp; Fredriks 2001):
points should scatter about zero inside the envelope. A slope means the spread is wrong, a U or
inverted U skewness, an S shape kurtosis.</p>
{{range .Worms}}<figure>{{.}}</figure>
{{end}}

<h2>Files</h2>
<ul class="files">{{range .Files}}<li><code>{{.}}</code></li>{{end}}</ul>

<div class="caution"><strong>Caution.</strong> {{.Caution}}</div>
<p class="meta">References: Koenker R, Bassett G (1978). Regression quantiles. Econometrica 46, 33&ndash;50.
Koenker R, Ng P, Portnoy S (1994). Quantile smoothing splines. Biometrika 81, 673&ndash;680.
Royston P, Wright E M (2000). Goodness-of-fit statistics for age-specific reference intervals.
Statistics in Medicine 19, 2943&ndash;2962. van Buuren S, Fredriks M (2001). Worm plot: a simple
diagnostic device for modelling growth reference curves. Statistics in Medicine 20, 1259&ndash;1277.
Wilson E B (1927). Probable inference, the law of succession, and statistical inference. Journal of the
American Statistical Association 22, 209&ndash;212.</p>
</body>
</html>
`

var reportTemplate = template.Must(template.New("report").Parse(reportHTML))

// svgProlog matches the XML declaration, comment and doctype before the
// <svg> element, which an inline SVG does not need.
var svgProlog = regexp.MustCompile(`(?s)^\s*(<\?xml.*?\?>\s*)?(<!--.*?-->\s*)?(<!DOCTYPE[^>]*>\s*)?`)

// inlineSVG makes an SVG file embeddable in HTML. The SVG comes from our
// own renderer, which escapes the text it draws.
func inlineSVG(svg []byte) template.HTML {
	return template.HTML(svgProlog.ReplaceAll(svg, nil))
}

type reportShare struct {
	Text string
	Off  bool
}

type reportGroup struct {
	Ages                 string
	N                    int
	Shares               []reportShare
	Mean, SD, Skew, Kurt string
}

type reportCoverage struct {
	Name     string
	Centiles []string
	Rows     []reportGroup
}

// report writes report.html with the given inline charts.
func (b *built) report(w io.Writer, charts, worms [][]byte) error {
	r := b.ref
	type stratumRow struct {
		Name, Ages, Knots, Lambda, EDF, Criterion, Guard string
		N                                                int
	}
	type qRow struct {
		Name, Test, Q, P string
		Groups, DF       int
	}
	data := map[string]any{
		"CSS":      template.CSS(reportCSS),
		"Title":    refTitle(r),
		"Plan":     b.plan.Name,
		"Input":    b.table.Name,
		"Created":  r.Created.UTC().Format(time.RFC3339),
		"Elapsed":  b.elapsed.Round(100 * time.Millisecond).String(),
		"Caution":  curve.Caution,
		"Read":     b.table.Total,
		"Used":     len(b.table.Rows),
		"Excluded": len(b.table.Excluded),
		"Passes":   capitalise(fitPasses(b.refitted)),
		"Scale":    scaleText(r),
		"Degree":   degreeText(r.Degree),
		"Reasons":  b.table.Counts(),
		"Notes":    b.notes,
		"Files":    append(b.files, "report.html"),
	}
	if len(r.Strata) > 0 {
		st := &r.Strata[0]
		data["TauCount"] = len(st.Taus)
		data["Centiles"] = joinNumbers(chartCentiles(st))
	}
	var strata []stratumRow
	for _, st := range r.Strata {
		strata = append(strata, stratumRow{
			Name: nameOr(st.Name), N: st.N, Ages: shortAge(st.AgeMin) + "–" + shortAge(st.AgeMax) + " " + r.AgeUnit,
			Knots: fmt.Sprint(st.Smoothness.InteriorKnots), Lambda: fmt.Sprintf("%.4g", st.Smoothness.Lambda),
			EDF: edfText(st.Smoothness.EDF), Criterion: curve.CriterionText(st.Smoothness.Criterion), Guard: guardText(&st),
		})
	}
	data["Strata"] = strata
	data["Candidates"] = candidateTables(r)
	data["Weights"] = "Sampling weights were not used: every row counts once."
	if w := b.plan.Input.Weight; w != "" {
		data["Weights"] = fmt.Sprintf("Sampling weights (column %q) were used: each row counts by its weight in the fit, the smoothness criterion (at Kish's effective sample size) and the diagnostics' shares.", w)
	}
	data["ScaleChoice"] = fmt.Sprintf("The age scale (curves in %s) is set by the plan, not chosen by a criterion.", scaleText(r))
	if len(b.scales) > 0 {
		data["ScaleChoice"] = fmt.Sprintf("The age scale (curves in %s) was chosen from the data by the same criterion (see the age scales tried below).", scaleText(r))
		var rows []scaleRow
		for _, c := range b.scales {
			row := scaleRow{Scale: c.Scale.String(), Score: fmt.Sprintf("%.6g", c.Score), Problems: fmt.Sprint(c.Problems), Chosen: c.Chosen}
			switch {
			case c.Err != "":
				row.Score, row.Problems = "unusable: "+c.Err, ""
			case c.Thin != "":
				row.Problems = "passed over: " + c.Thin
				if math.IsNaN(c.Score) {
					row.Score = "not scored"
				}
			case c.Problems < 0:
				row.Problems = "not fitted (a better candidate passed)"
			}
			rows = append(rows, row)
		}
		data["Scales"] = rows
	}
	var ch, wm []template.HTML
	for _, c := range charts {
		ch = append(ch, inlineSVG(c))
	}
	for _, c := range worms {
		if c != nil {
			wm = append(wm, inlineSVG(c))
		}
	}
	data["Charts"], data["Worms"] = ch, wm
	var conds []template.HTML
	for i := range r.Strata {
		st := &r.Strata[i]
		if st.Conditional == nil {
			continue
		}
		fig, err := b.conditionalFigure(st)
		if err != nil {
			continue // the build's notes say why (writeConditionalCharts)
		}
		var svg bytes.Buffer
		if err := render.Write(&svg, fig, "svg", 0, 0); err != nil {
			return fmt.Errorf("conditional chart of stratum %q: %w", st.Name, err)
		}
		conds = append(conds, inlineSVG(svg.Bytes()))
	}
	data["Conditional"] = conds

	var cov []reportCoverage
	for _, g := range b.diag.Groups {
		if len(cov) == 0 || cov[len(cov)-1].Name != nameOr(g.Stratum) {
			c := reportCoverage{Name: nameOr(g.Stratum)}
			for _, s := range g.Shares {
				c.Centiles = append(c.Centiles, centileName(tidy(100*s.Tau)))
			}
			cov = append(cov, c)
		}
		row := reportGroup{
			Ages: shortAge(g.AgeLo) + "–" + shortAge(g.AgeHi), N: g.N,
			Mean: fmt.Sprintf("%.3f", g.Mean), SD: fmt.Sprintf("%.3f", g.SD),
			Skew: fmt.Sprintf("%.3f", g.Skew), Kurt: fmt.Sprintf("%.3f", g.Kurt),
		}
		for _, s := range g.Shares {
			row.Shares = append(row.Shares, reportShare{fmt.Sprintf("%.1f", 100*s.Observed), s.Off})
		}
		cov[len(cov)-1].Rows = append(cov[len(cov)-1].Rows, row)
	}
	data["Coverage"] = cov
	var qs []qRow
	for _, q := range b.diag.Q {
		for _, s := range []struct {
			name string
			q    curve.QStat
		}{{"mean", q.Mean}, {"variance", q.Variance}, {"skewness", q.Skewness}, {"kurtosis", q.Kurtosis}} {
			qs = append(qs, qRow{Name: nameOr(q.Stratum), Groups: q.Groups, Test: s.name, Q: fmtQ(s.q.Q), DF: s.q.DF, P: fmtP(s.q.P)})
		}
	}
	data["Q"] = qs
	b.reportBands(data)
	return reportTemplate.Execute(w, data)
}

// reportBands adds the bootstrap band summary to the report data: per
// stratum and chart centile the median and largest width, and in words
// what an unstable band means.
func (b *built) reportBands(data map[string]any) {
	type bandRow struct {
		Name, Centile, Median, Widest, At, Stable string
		Unstable                                  bool
	}
	var rows []bandRow
	var unstable []string
	for _, st := range b.ref.Strata {
		for _, bd := range st.Bands {
			w := make([]float64, len(bd.Ages))
			widest := 0
			for a := range bd.Ages {
				w[a] = bd.Hi[a] - bd.Lo[a]
				if w[a] > w[widest] {
					widest = a
				}
			}
			sorted := slices.Clone(w)
			slices.Sort(sorted)
			c := centileName(tidy(100 * bd.Tau))
			row := bandRow{Name: nameOr(st.Name), Centile: c, Median: fmt.Sprintf("%.3g", sorted[len(sorted)/2]),
				Widest: fmt.Sprintf("%.3g", w[widest]), At: shortAge(bd.Ages[widest]), Stable: "yes", Unstable: bd.Unstable}
			if bd.Unstable {
				var ages []string
				for a, r := range bd.BiasToSE {
					if r > curve.BiasSELimit {
						ages = append(ages, shortAge(bd.Ages[a]))
					}
				}
				row.Stable = "no, at ages " + strings.Join(ages, ", ")
				unstable = append(unstable, fmt.Sprintf("%s, centile %s", nameOr(st.Name), c))
			}
			rows = append(rows, row)
		}
	}
	if rows == nil {
		return
	}
	data["Bands"] = rows
	data["Replicates"] = b.plan.Fit.Bootstrap
	data["Resampled"] = "rows"
	if b.plan.Input.Subject != "" {
		data["Resampled"] = "whole children (all of a child's measurements together)"
	}
	data["BiasLimit"] = curve.BiasSELimit
	if unstable != nil {
		data["Unstable"] = fmt.Sprintf("For %s the replicate curves are not centred on the fitted curve at the ages listed "+
			"(their mean differs from it by more than %g standard errors). There the fitted curve rests on few or "+
			"unusual rows, the band is less trustworthy than its width suggests, and the true centile may lie outside "+
			"it more often than 5 times in 100. Read the curve at those ages with caution; more rows at those ages, "+
			"or fewer centiles far out in the tails, make it firmer.", strings.Join(unstable, "; "), curve.BiasSELimit)
	}
}

// scaleText describes the reference's age scale in words.
func scaleText(r *curve.Reference) string {
	switch r.AgeScale.Kind {
	case curve.ScaleLog:
		return fmt.Sprintf("log(age + %.4g)", r.AgeScale.Shift)
	case curve.ScalePower:
		return fmt.Sprintf("age^%g", r.AgeScale.Power)
	}
	return "age"
}

func joinNumbers(x []float64) string {
	s := ""
	for i, v := range x {
		if i > 0 {
			s += ", "
		}
		s += centileName(v)
	}
	return s
}

func capitalise(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

// degreeText names a spline degree.
func degreeText(d int) string {
	if name, ok := map[int]string{1: "linear", 2: "quadratic", 3: "cubic"}[d]; ok {
		return name
	}
	return fmt.Sprintf("degree-%d", d)
}

// edfText formats effective degrees of freedom; "–" when not computed.
func edfText(edf int) string {
	if edf <= 0 {
		return "–"
	}
	return fmt.Sprint(edf)
}

type candidateRow struct {
	Knots, Lambda, Score, EDF string
	Chosen                    bool
}

type candidateTable struct {
	Name, Criterion, Rule string
	Rows                  []candidateRow
}

// scaleRow is one candidate age scale in the report.
type scaleRow struct {
	Scale, Score, Problems string
	Chosen                 bool
}

// candidateTables lists, per stratum, the smoothness values tried with
// their criterion values.
func candidateTables(r *curve.Reference) []candidateTable {
	var out []candidateTable
	for _, st := range r.Strata {
		sm := st.Smoothness
		if len(sm.Candidates) == 0 {
			continue
		}
		t := candidateTable{Name: nameOr(st.Name), Criterion: capitalise(curve.CriterionText(sm.Criterion))}
		switch sm.Criterion {
		case curve.CriterionCV:
			t.Criterion = "cross-validated check loss ± SE"
			t.Rule = "the simplest value within one standard error of the lowest loss is chosen"
		default:
			t.Rule = "the lowest value is chosen, ties to the simpler"
		}
		for _, c := range sm.Candidates {
			row := candidateRow{Knots: fmt.Sprint(c.InteriorKnots), Lambda: fmt.Sprintf("%.4g", c.Lambda),
				Score: fmt.Sprintf("%.6g", c.Score), EDF: edfText(c.EDF),
				Chosen: c.InteriorKnots == sm.InteriorKnots && c.Lambda == sm.Lambda}
			if c.SE > 0 {
				row.Score += fmt.Sprintf(" ± %.3g", c.SE)
			}
			t.Rows = append(t.Rows, row)
		}
		out = append(out, t)
	}
	return out
}
