package main

import (
	"flag"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"

	"gonum.org/v1/plot/vg"

	"growband/curve"
	"growband/internal/intake"
	"growband/internal/refchart"
	"growband/internal/scorefile"
	"growband/render"
)

const chartUsage = `usage: growband chart --ref FILE [--stratum S] [--points FILE.csv] [--ages FROM:TO]
                      [--sd-curves] --out FILE.svg|.png|.pdf

Draws the reference's centile chart of one stratum (--stratum is needed when
the reference has several), in the format given by the --out file's
extension, over the whole fitted age range or the part --ages names. With
--sd-curves the curves at -3, -2, +2 and +3 SD are drawn dashed as well,
where the reference's centiles reach them. With --points, children's
measurements from a CSV file are drawn over the curves: the points of one
child (same value in the subject column, found automatically as
"child_id", "child" or "id" unless --subject-column names it) are joined in
age order; without a subject column the points are drawn as a light cloud.
The age and value columns are named as for "growband score".
`

// childColumns are the header names taken as the subject id column when
// --subject-column is not given, in order of preference.
var childColumns = []string{"child_id", "child", "id"}

func runChart(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("chart")
	refPath := fs.String("ref", "", "reference file written by build (required)")
	out := fs.String("out", "", "chart file to write; the extension .svg, .png or .pdf picks the format (required)")
	pointsPath := fs.String("points", "", "CSV file of children's measurements to draw over the curves")
	showZ := fs.Bool("show-z", false, "write each point's z-score beside it")
	title := fs.String("title", "", "chart title (default: measure, age and stratum)")
	width := fs.Float64("width", 20, "chart width in centimetres")
	height := fs.Float64("height", 14, "chart height in centimetres")
	agesFlag := fs.String("ages", "", "draw only this part of the age range, FROM:TO (e.g. 0:24)")
	sdCurves := fs.Bool("sd-curves", false, "also draw the curves at -3, -2, +2 and +3 SD, dashed")
	var cols columnFlags
	cols.register(fs, true)
	fs.StringVar(&cols.stratumName, "stratum", "", "stratum to draw (needed when the reference has several)")
	pos, err := parseFlags(fs, chartUsage, args, stdout)
	if err != nil {
		return err
	}
	if len(pos) > 0 {
		return usagef("chart", "chart: unexpected argument %q", pos[0])
	}
	if *out == "" {
		return usagef("chart", "chart: --out FILE is required")
	}
	format, err := render.FormatOf(*out)
	if err != nil {
		return usagef("chart", "chart: --out %s: want a .svg, .png or .pdf file", *out)
	}
	if !(*width > 0 && *width < 500 && *height > 0 && *height < 500) {
		return usagef("chart", "chart: --width and --height must be between 0 and 500 cm")
	}
	opt := &refchart.Options{SDCurves: *sdCurves}
	if *agesFlag != "" {
		if opt.AgeLo, opt.AgeHi, err = parseAgeRange(*agesFlag); err != nil {
			return usagef("chart", "chart: --ages: %v", err)
		}
	}
	ref, err := loadReference("chart", *refPath)
	if err != nil {
		return err
	}
	st, err := chartStratum(ref, cols.stratumName)
	if err != nil {
		return err
	}
	var cloud *render.Points
	var children []render.Child
	if *pointsPath != "" {
		if cloud, children, err = readPoints(ref, st, *pointsPath, &cols, fs, *showZ, progress{w: stderr}); err != nil {
			return err
		}
	}
	fig, err := stratumFigure(ref, st, opt, cloud, children, progress{w: stderr})
	if err != nil {
		return err
	}
	if *title != "" {
		fig.Title = *title
	}
	if err := render.Save(*out, fig, format, vg.Length(*width)*vg.Centimeter, vg.Length(*height)*vg.Centimeter); err != nil {
		return err
	}
	progress{w: stderr}.printf("wrote %s", *out)
	return nil
}

// centileFigure draws the whole centile chart of one stratum with an
// optional data cloud and children's trajectories, as build does.
func centileFigure(r *curve.Reference, st *curve.Stratum, pts *render.Points, children []render.Child) (*render.Figure, error) {
	return stratumFigure(r, st, nil, pts, children, progress{})
}

// stratumFigure draws the centile chart of one stratum built by refchart,
// with an optional data cloud and children's trajectories; its notes go to
// prog.
func stratumFigure(r *curve.Reference, st *curve.Stratum, opt *refchart.Options, pts *render.Points, children []render.Child, prog progress) (*render.Figure, error) {
	c, notes, err := refchart.Centiles(r, st, opt)
	if err != nil {
		return nil, err
	}
	for _, n := range notes {
		prog.printf("%s", n)
	}
	c.Data, c.Children = pts, children
	return render.CentileChart(c)
}

// parseAgeRange reads FROM:TO.
func parseAgeRange(s string) (lo, hi float64, err error) {
	from, to, ok := strings.Cut(s, ":")
	if !ok {
		return 0, 0, fmt.Errorf("want FROM:TO, got %q", s)
	}
	if lo, err = strconv.ParseFloat(strings.TrimSpace(from), 64); err != nil || math.IsInf(lo, 0) {
		return 0, 0, fmt.Errorf("%q is not an age", from)
	}
	if hi, err = strconv.ParseFloat(strings.TrimSpace(to), 64); err != nil || math.IsInf(hi, 0) {
		return 0, 0, fmt.Errorf("%q is not an age", to)
	}
	if !(hi > lo) {
		return 0, 0, fmt.Errorf("want FROM < TO, got %q", s)
	}
	return lo, hi, nil
}

// chartStratum picks the stratum to draw.
func chartStratum(r *curve.Reference, name string) (*curve.Stratum, error) {
	if name == "" && len(r.Strata) > 1 {
		return nil, usagef("chart", "chart: the reference has strata %s: choose one with --stratum", scorefile.StrataNames(r))
	}
	return r.Stratum(name)
}

// readPoints reads the children's measurements to draw on the chart of st.
func readPoints(r *curve.Reference, st *curve.Stratum, path string, cols *columnFlags, fs *flag.FlagSet,
	showZ bool, prog progress) (*render.Points, []render.Child, error) {
	// The chart's stratum is fixed; a stratum column, when named, only
	// selects the rows of it.
	c := *cols
	c.stratumName = st.Name
	spec, err := c.spec("chart", r)
	if err != nil {
		return nil, nil, err
	}
	if spec.Subject == "" {
		probe := *spec
		t, err := intake.ReadFile(path, &probe)
		if err != nil {
			return nil, nil, err
		}
		for _, name := range childColumns {
			if slices.Contains(t.Header, name) {
				spec.Subject = name
				break
			}
		}
	}
	t, err := intake.ReadFile(path, spec)
	if err != nil {
		return nil, nil, err
	}
	if len(t.Excluded) > 0 {
		prog.printf("%s: %d rows not drawn (%s)", t.Name, len(t.Excluded), countsText(t.Counts()))
	}
	var rows []intake.Row
	outside := 0
	for _, row := range t.Rows {
		switch {
		case spec.Stratum != "" && row.Stratum != st.Name:
		case row.Age < st.AgeMin || row.Age > st.AgeMax:
			outside++
		default:
			rows = append(rows, row)
		}
	}
	if outside > 0 {
		prog.printf("%s: %d points outside the fitted age range %s–%s not drawn", t.Name, outside, shortAge(st.AgeMin), shortAge(st.AgeMax))
	}
	if len(rows) == 0 {
		return nil, nil, fmt.Errorf("%s: no points to draw for %s", t.Name, stratumLabel(st.Name))
	}
	if spec.Subject == "" {
		p := &render.Points{}
		for _, row := range rows {
			p.Ages = append(p.Ages, row.Age)
			p.Values = append(p.Values, row.Value)
		}
		return p, nil, nil
	}
	byChild := map[string]int{}
	var children []render.Child
	for _, row := range rows {
		k, ok := byChild[row.Subject]
		if !ok {
			k = len(children)
			byChild[row.Subject] = k
			children = append(children, render.Child{Label: row.Subject})
		}
		ch := &children[k]
		ch.Ages = append(ch.Ages, row.Age)
		ch.Values = append(ch.Values, row.Value)
	}
	for i := range children {
		ch := &children[i]
		sortByAge(ch)
		if !showZ {
			continue
		}
		for j := range ch.Ages {
			s, err := r.Score(st.Name, ch.Ages[j], ch.Values[j])
			if err == nil && math.IsNaN(s.Z) {
				err = curve.ErrDegenerate
			}
			if err != nil {
				prog.printf("child %s, age %s: no z-score (%s)", ch.Label, ageText(ch.Ages[j]), scorefile.Reason(r, err))
				ch.Z = nil
				break
			}
			ch.Z = append(ch.Z, s.Z)
		}
	}
	return nil, children, nil
}

// sortByAge orders one child's points by age.
func sortByAge(ch *render.Child) {
	idx := make([]int, len(ch.Ages))
	for i := range idx {
		idx[i] = i
	}
	slices.SortStableFunc(idx, func(a, b int) int {
		switch {
		case ch.Ages[a] < ch.Ages[b]:
			return -1
		case ch.Ages[a] > ch.Ages[b]:
			return 1
		}
		return 0
	})
	ages, values := make([]float64, len(idx)), make([]float64, len(idx))
	for i, k := range idx {
		ages[i], values[i] = ch.Ages[k], ch.Values[k]
	}
	ch.Ages, ch.Values = ages, values
}
