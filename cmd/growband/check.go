package main

import (
	"bytes"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"text/tabwriter"

	"growband/curve"
	"growband/internal/intake"
	"growband/render"
)

const checkUsage = `usage: growband check --ref FILE --in DATA.csv [--out DIR] [column flags]

Scores the measurements in DATA.csv against the reference and prints the
diagnostics: per stratum and age group the share of rows below each chart
centile (with its Wilson 95% interval; "*" marks a nominal share outside it)
and the moments of the z-scores, then the Q-tests of Royston & Wright (2000)
per stratum. Rows with |z| above --limit (default 5, as in build) are left
out as implausible first, since a few gross recording errors would swamp the
moments. With --out, writes the worm plot of each stratum to
DIR/worm-STRATUM.svg and .png.

The columns are named as for "growband score".
`

func runCheck(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("check")
	refPath := fs.String("ref", "", "reference file written by build (required)")
	in := fs.String("in", "", "CSV file of measurements to check (required)")
	out := fs.String("out", "", "directory to write the worm plots into (default: none)")
	limit := fs.Float64("limit", curve.ImplausibleZ, limitHelp)
	bands := fs.String("bands", "", bandsHelp+" (default: equal-count groups)")
	var cols columnFlags
	cols.register(fs, false)
	fs.StringVar(&cols.stratumName, "stratum", "", "treat every row as belonging to this stratum (no stratum column)")
	pos, err := parseFlags(fs, checkUsage, args, stdout)
	if err != nil {
		return err
	}
	if len(pos) > 0 {
		return usagef("check", "check: unexpected argument %q", pos[0])
	}
	if *in == "" {
		return usagef("check", "check: --in DATA.csv is required")
	}
	var edges []float64
	if *bands != "" {
		if edges, err = parseBands(*bands); err != nil {
			return usagef("check", "check: --bands: %v", err)
		}
	}
	if _, err := limitOption(*limit); err != nil {
		return usagef("check", "check: %v", err)
	}
	ref, err := loadReference("check", *refPath)
	if err != nil {
		return err
	}
	spec, err := cols.spec("check", ref)
	if err != nil {
		return err
	}
	t, err := intake.ReadFile(*in, spec)
	if err != nil {
		return err
	}
	if err := cols.needStratum(ref, t); err != nil {
		return err
	}
	prog := progress{w: stderr}
	if len(t.Excluded) > 0 {
		prog.printf("%s: %d of %d rows not read (%s); see \"growband score\" for each row", t.Name, len(t.Excluded), t.Total, countsText(t.Counts()))
	}
	data := tableData(t)
	if cols.stratumName != "" {
		data.Stratum = make([]string, len(data.Age))
		for i := range data.Stratum {
			data.Stratum[i] = cols.stratumName
		}
	}
	if *limit > 0 {
		idx, _ := implausible(ref, data, *limit)
		if len(idx) > 0 {
			prog.printf("%d rows with |z| > %g left out as implausible, for example line %d", len(idx), *limit, t.Rows[idx[0]].Line)
			t.Exclude(idx, intake.ReasonImplausible, nil)
			data = tableData(t)
			if cols.stratumName != "" {
				data.Stratum = make([]string, len(data.Age))
				for i := range data.Stratum {
					data.Stratum[i] = cols.stratumName
				}
			}
		}
	}
	d, err := curve.Check(ref, data, edges)
	if err != nil {
		return err
	}
	if len(d.Skipped) > 0 {
		prog.printf("%d rows could not be scored, for example line %d: %s", len(d.Skipped), t.Rows[d.Skipped[0].Row].Line, d.Skipped[0].Reason)
	}
	if len(d.Groups) == 0 {
		return fmt.Errorf("%s: no row could be scored against the reference", t.Name)
	}
	writeCoverage(stdout, ref, d)
	fmt.Fprintln(stdout)
	writeQTests(stdout, d)
	if *out != "" {
		if err := os.MkdirAll(*out, 0o755); err != nil {
			return err
		}
		worms, err := wormFigures(ref, d)
		if err != nil {
			return err
		}
		stems := fileStems(ref.Strata)
		for i, w := range worms {
			if w == nil {
				continue
			}
			for _, f := range []string{"svg", "png"} {
				path := filepath.Join(*out, "worm-"+stems[i]+"."+f)
				if err := render.Save(path, w, f, 0, 0); err != nil {
					return err
				}
				prog.printf("wrote %s", path)
			}
		}
	}
	return nil
}

// countsText lists exclusion counts as "missing value 3, not a number 1".
func countsText(c []intake.ReasonCount) string {
	var s []string
	for _, rc := range c {
		s = append(s, fmt.Sprintf("%s %d", rc.Reason, rc.N))
	}
	return strings.Join(s, ", ")
}

// writeCoverage prints the coverage table: one line per age group with the
// observed percentage below each chart centile.
func writeCoverage(w io.Writer, r *curve.Reference, d *curve.Diagnostics) {
	fmt.Fprintf(w, "coverage: percent of rows below each centile (* = nominal outside the 95%% interval)\n")
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	last := "\x00"
	for _, g := range d.Groups {
		if g.Stratum != last {
			if last != "\x00" {
				fmt.Fprintln(tw)
			}
			last = g.Stratum
			fmt.Fprintf(tw, "stratum\tages (%s)\tn\t", r.AgeUnit)
			for _, s := range g.Shares {
				fmt.Fprintf(tw, "%s\t", centileName(tidy(100*s.Tau)))
			}
			fmt.Fprintln(tw, "mean z\tSD z\tskew\tkurtosis\t")
		}
		fmt.Fprintf(tw, "%s\t%s–%s\t%d\t", nameOr(g.Stratum), shortAge(g.AgeLo), shortAge(g.AgeHi), g.N)
		for _, s := range g.Shares {
			mark := ""
			if s.Off {
				mark = "*"
			}
			fmt.Fprintf(tw, "%.1f%s\t", 100*s.Observed, mark)
		}
		fmt.Fprintf(tw, "%.3f\t%.3f\t%.3f\t%.3f\t\n", g.Mean, g.SD, g.Skew, g.Kurt)
	}
	tw.Flush()
}

// writeQTests prints the Q statistics per stratum.
func writeQTests(w io.Writer, d *curve.Diagnostics) {
	fmt.Fprintf(w, "Q-tests (Royston & Wright 2000): chi-squared on DF = contributing age groups\n")
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "stratum\tgroups\ttest\tQ\tDF\tP\t")
	for _, q := range d.Q {
		for _, s := range []struct {
			name string
			q    curve.QStat
		}{{"mean", q.Mean}, {"variance", q.Variance}, {"skewness", q.Skewness}, {"kurtosis", q.Kurtosis}} {
			fmt.Fprintf(tw, "%s\t%d\t%s\t%s\t%d\t%s\t\n", nameOr(q.Stratum), q.Groups, s.name, fmtQ(s.q.Q), s.q.DF, fmtP(s.q.P))
		}
	}
	tw.Flush()
}

func fmtQ(q float64) string {
	if q != q {
		return "-"
	}
	return fmt.Sprintf("%.2f", q)
}

func fmtP(p float64) string {
	switch {
	case p != p:
		return "-"
	case p < 0.001:
		return "<0.001"
	}
	return fmt.Sprintf("%.3f", p)
}

// wormFigures draws the worm plot of each stratum of r (nil where the
// diagnostics have no group of three or more rows).
func wormFigures(r *curve.Reference, d *curve.Diagnostics) ([]*render.Figure, error) {
	out := make([]*render.Figure, len(r.Strata))
	for i, st := range r.Strata {
		wm := &render.Worm{Measure: r.Measure, Stratum: st.Name, Caution: curve.Caution}
		for _, g := range d.Groups {
			if g.Stratum != st.Name || len(g.Worm.Normal) < 3 {
				continue
			}
			wm.Groups = append(wm.Groups, render.WormGroup{
				Label:     fmt.Sprintf("%.3g–%.3g", g.AgeLo, g.AgeHi),
				Expected:  g.Worm.Normal,
				Deviation: g.Worm.Deviation,
			})
		}
		if len(wm.Groups) == 0 {
			continue
		}
		title := fmt.Sprintf("Worm plot of %s z-scores by age group (%s)", nameOr(r.Measure), r.AgeUnit)
		if st.Name != "" {
			title += " — " + st.Name
		}
		fig, err := render.WormChart(wm, render.WithTitle(title))
		if err != nil {
			return nil, fmt.Errorf("worm plot of %s: %w", stratumLabel(st.Name), err)
		}
		out[i] = fig
	}
	return out, nil
}

// wormCharts returns the worm plots as SVG for the report.
func wormCharts(r *curve.Reference, d *curve.Diagnostics) ([][]byte, error) {
	figs, err := wormFigures(r, d)
	if err != nil {
		return nil, err
	}
	out := make([][]byte, len(figs))
	for i, f := range figs {
		if f == nil {
			continue
		}
		var buf bytes.Buffer
		if err := render.Write(&buf, f, "svg", 0, 0); err != nil {
			return nil, err
		}
		out[i] = buf.Bytes()
	}
	return out, nil
}
