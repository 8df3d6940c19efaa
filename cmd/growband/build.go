package main

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"text/tabwriter"
	"time"

	"growband/curve"
	"growband/internal/intake"
	"growband/internal/refchart"
	"growband/render"
)

const buildUsage = `usage: growband build PLAN.toml [--out DIR] [--quiet]

Reads the plan file (see internal/intake/PLAN.md for its keys) and the CSV
file it names, fits a first pass, moves rows with |z| above plausible.z
(default 5) to the exclusions, fits again and writes into DIR:

  reference.json       the reference file, for "growband table/score/chart/check"
  centiles.csv         the chart centiles and L, M, S on the plan's age grid
  excluded.csv         every row not used, with its line and reason
  chart-STRATUM.svg    the centile chart of each stratum, also as .png
                       (and .pdf when output.charts lists "pdf"; output.charts = []
                       writes no chart files)
  report.html          one self-contained page: summary, charts, diagnostics,
                       exclusions and the caution

DIR defaults to a directory beside the plan named after it: plans/weight.toml
writes into plans/weight-out/. Files already there are overwritten. A summary
is printed to standard output, progress to standard error.
`

func runBuild(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("build")
	out := fs.String("out", "", "directory to write into (default: PLAN-out beside the plan file)")
	quiet := fs.Bool("quiet", false, "print no progress messages")
	pos, err := parseFlags(fs, buildUsage, args, stdout)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usagef("build", "build: want one plan file, got %d arguments", len(pos))
	}
	plan, err := intake.LoadPlan(pos[0])
	if err != nil {
		return err
	}
	dir := *out
	if dir == "" {
		dir = defaultOutDir(pos[0])
	}
	prog := progress{w: stderr}
	if *quiet {
		prog.w = nil
	}
	res, err := build(plan, dir, prog)
	if err != nil {
		return err
	}
	return res.summary(stdout)
}

// defaultOutDir is DIR/NAME-out for the plan DIR/NAME.toml.
func defaultOutDir(planPath string) string {
	base := strings.TrimSuffix(filepath.Base(planPath), filepath.Ext(planPath))
	return filepath.Join(filepath.Dir(planPath), base+"-out")
}

// built is everything a build made, for the summary and the report.
type built struct {
	plan     *intake.Plan
	table    *intake.Table
	ref      *curve.Reference
	diag     *curve.Diagnostics
	refitted bool                // the implausibility screen ran before the fit
	scales   []curve.ScaleChoice // candidate age scales, when chosen from the data
	dir      string              // output directory
	files    []string            // files written, relative to dir
	notes    []string            // remarks worth the user's attention
	elapsed  time.Duration
}

// build runs a plan end to end and writes its files into dir.
func build(plan *intake.Plan, dir string, prog progress) (*built, error) {
	start := time.Now()
	b := &built{plan: plan, dir: dir}
	t, err := plan.ReadInput()
	if err != nil {
		return nil, err
	}
	b.table = t
	prog.printf("%s: %d rows read, %d usable", t.Name, t.Total, len(t.Rows))
	if len(t.Rows) == 0 {
		return nil, allExcluded(t, dir)
	}
	if err := intake.Misreadings(t, plan); err != nil {
		return nil, err
	}
	data := tableData(t)
	res, err := curve.Build(data, buildSettings(plan, prog))
	if errors.Is(err, curve.ErrEdge) {
		return nil, fmt.Errorf("%s: %w\n(nothing written; a larger sample, a stated fit.age_range or another fit.age_scale may help; fit.accept_edge_problems = true builds anyway)", plan.Name, err)
	}
	if err != nil {
		return nil, fmt.Errorf("%s: %w", plan.Name, err)
	}
	excludeBuilt(t, res.Excluded)
	b.ref = res.Reference
	b.refitted = plan.Plausible.Z > 0
	b.scales = res.Scales
	if len(res.Scales) > 0 {
		var parts []string
		for _, c := range res.Scales {
			switch {
			case c.Err != "":
				parts = append(parts, fmt.Sprintf("%s (unusable)", c.Scale))
			case c.Thin != "" && math.IsNaN(c.Score):
				parts = append(parts, fmt.Sprintf("%s (passed over unscored: %s)", c.Scale, c.Thin))
			case c.Thin != "":
				parts = append(parts, fmt.Sprintf("%s %.5g (passed over: %s)", c.Scale, c.Score, c.Thin))
			case c.Problems > 0:
				parts = append(parts, fmt.Sprintf("%s %.5g (%d edge problems)", c.Scale, c.Score, c.Problems))
			default:
				parts = append(parts, fmt.Sprintf("%s %.5g", c.Scale, c.Score))
			}
		}
		b.notes = append(b.notes, "age scale chosen by the smoothness criterion summed over strata (lower is better; the best without edge problems, whose curves at both ends rest on enough rows, wins): "+strings.Join(parts, ", "))
	}
	for _, p := range res.Problems {
		b.notes = append(b.notes, "accepted edge problem: "+p.String())
	}
	data = tableData(t)
	notes, err := fitConditional(plan, b.ref, data, prog)
	if err != nil {
		return nil, err
	}
	b.notes = append(b.notes, notes...)
	if b.diag, err = curve.Check(b.ref, data, nil); err != nil {
		return nil, fmt.Errorf("diagnostics: %w", err)
	}
	b.elapsed = time.Since(start)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, err
	}
	if err := b.writeFiles(prog); err != nil {
		return nil, err
	}
	if err := b.fitCovariates(prog); err != nil {
		return nil, err
	}
	if err := b.writeConditionalTable(); err != nil {
		return nil, err
	}
	return b, nil
}

// allExcluded writes excluded.csv of a table whose rows are all excluded
// and returns the error that gives the breakdown by reason.
func allExcluded(t *intake.Table, dir string) error {
	var b strings.Builder
	fmt.Fprintf(&b, "%s: no usable rows: all %d rows excluded", t.Name, t.Total)
	path := filepath.Join(dir, "excluded.csv")
	var buf bytes.Buffer
	err := intake.WriteExcluded(&buf, t)
	if err == nil {
		if err = os.MkdirAll(dir, 0o755); err == nil {
			err = os.WriteFile(path, buf.Bytes(), 0o644)
		}
	}
	if err == nil {
		fmt.Fprintf(&b, ", each listed with its reason in %s", path)
	}
	for _, c := range t.Counts() {
		fmt.Fprintf(&b, "\n  %-40s %d", c.Reason, c.N)
	}
	if err != nil {
		fmt.Fprintf(&b, "\n(excluded.csv could not be written: %v)", err)
	}
	return errors.New(b.String())
}

// buildSettings turns the plan's [fit], [measure] and [plausible] tables
// into the settings of curve.Build.
func buildSettings(plan *intake.Plan, prog progress) *curve.BuildSettings {
	f := plan.Fit
	s := &curve.BuildSettings{
		Fit: curve.Settings{
			Centiles:  slices.Clone(f.Centiles),
			Bootstrap: f.Bootstrap,
			Seed:      uint64(f.Seed),
			Progress:  prog.w,
			Measure:   plan.Measure.Name,
			Unit:      plan.Measure.Unit,
			AgeUnit:   plan.Measure.AgeUnit,
			AgeRange:  [2]float64{f.AgeRange.Min, f.AgeRange.Max},
		},
		ScreenZ:     plan.Plausible.Z,
		AcceptEdges: f.AcceptEdges,
	}
	if s.ScreenZ == 0 {
		s.ScreenZ = curve.NoScreen
	}
	fs := &s.Fit
	switch {
	case f.Knots.At != nil:
		fs.KnotAges = slices.Clone(f.Knots.At)
	case f.Knots.Auto:
	case f.Knots.Count == 0:
		fs.Knots = curve.NoKnots
	default:
		fs.Knots = f.Knots.Count
	}
	switch {
	case f.Penalty.Auto:
		fs.Penalty = curve.PenaltyAuto
	case f.Penalty.Lambda == 0:
		fs.Penalty = curve.PenaltyNone
	default:
		fs.Penalty, fs.Lambda = curve.PenaltyFixed, f.Penalty.Lambda
	}
	switch f.AgeScale.Kind {
	case "auto":
		fs.AgeScale = curve.AgeScale{Kind: curve.ScaleAuto}
	case "log":
		fs.AgeScale = curve.AgeScale{Kind: curve.ScaleLog, Shift: f.AgeScale.Shift}
		s.AutoLogShift = f.AgeScale.AutoShift
	case "power":
		fs.AgeScale = curve.AgeScale{Kind: curve.ScalePower, Power: f.AgeScale.Power}
	}
	return s
}

// excludeBuilt moves the rows curve.Build left out (indices into t.Rows at
// the call) to t's exclusions with their reasons.
func excludeBuilt(t *intake.Table, ex []curve.Exclusion) {
	var ageIdx, implIdx []int
	var ageDetail, implDetail []string
	for _, e := range ex {
		if e.Reason == curve.ExcludedAgeRange {
			ageIdx, ageDetail = append(ageIdx, e.Row), append(ageDetail, e.Detail)
		}
	}
	for _, e := range ex {
		if e.Reason == curve.ExcludedImplausible {
			// Rows before it that left for their age no longer count.
			shift, _ := slices.BinarySearch(ageIdx, e.Row)
			implIdx, implDetail = append(implIdx, e.Row-shift), append(implDetail, e.Detail)
		}
	}
	t.Exclude(ageIdx, intake.ReasonAgeRange, ageDetail)
	t.Exclude(implIdx, intake.ReasonImplausible, implDetail)
}

// tableData returns the used rows of t as fit data.
func tableData(t *intake.Table) *curve.Data {
	age, value, weight, stratum, subject := t.Columns()
	return &curve.Data{Age: age, Value: value, Weight: weight, Stratum: stratum, Subject: subject}
}

// writeFiles writes the reference, tables, charts and report into b.dir.
func (b *built) writeFiles(prog progress) error {
	write := func(name string, fill func(w io.Writer) error) error {
		var buf bytes.Buffer
		if err := fill(&buf); err != nil {
			return fmt.Errorf("%s: %w", name, err)
		}
		if err := os.WriteFile(filepath.Join(b.dir, name), buf.Bytes(), 0o644); err != nil {
			return err
		}
		b.files = append(b.files, name)
		return nil
	}
	if err := write("reference.json", func(w io.Writer) error { return curve.Save(w, b.ref) }); err != nil {
		return err
	}
	if err := write("centiles.csv", b.writeCentiles); err != nil {
		return err
	}
	if err := write("excluded.csv", func(w io.Writer) error { return intake.WriteExcluded(w, b.table) }); err != nil {
		return err
	}
	formats := chartFormats(b.plan.Output.Charts)
	stems := fileStems(b.ref.Strata)
	charts := make([][]byte, len(b.ref.Strata))
	for i := range b.ref.Strata {
		st := &b.ref.Strata[i]
		fig, err := stratumFigure(b.ref, st, &refchart.Options{SDCurves: b.plan.Output.SDCurves}, b.points(st.Name), nil, progress{})
		if err != nil {
			return fmt.Errorf("chart of stratum %q: %w", st.Name, err)
		}
		for _, f := range formats {
			name := "chart-" + stems[i] + "." + f
			if err := write(name, func(w io.Writer) error { return render.Write(w, fig, f, 0, 0) }); err != nil {
				return err
			}
		}
		var svg bytes.Buffer
		if err := render.Write(&svg, fig, "svg", 0, 0); err != nil {
			return fmt.Errorf("chart of stratum %q: %w", st.Name, err)
		}
		charts[i] = svg.Bytes()
	}
	worms, err := wormCharts(b.ref, b.diag)
	if err != nil {
		return err
	}
	return write("report.html", func(w io.Writer) error { return b.report(w, charts, worms) })
}

// chartFormats is the chart files of a build: SVG and PNG always, PDF when
// the plan lists it; none when the plan asks for none.
func chartFormats(plan []string) []string {
	if len(plan) == 0 {
		return nil
	}
	out := []string{"svg", "png"}
	if slices.Contains(plan, "pdf") {
		out = append(out, "pdf")
	}
	return out
}

// points returns the used rows of one stratum for the chart's data cloud,
// or nil when the plan does not ask for them.
func (b *built) points(stratum string) *render.Points {
	if !b.plan.Output.Points {
		return nil
	}
	p := &render.Points{}
	for _, r := range b.table.Rows {
		if r.Stratum == stratum {
			p.Ages = append(p.Ages, r.Age)
			p.Values = append(p.Values, r.Value)
		}
	}
	return p
}

// writeCentiles writes centiles.csv: per stratum, the chart centiles and
// L, M, S on the plan's age grid, or a tidy grid over the fitted range.
func (b *built) writeCentiles(w io.Writer) error {
	var ages []float64
	if g := b.plan.Table; g.Set {
		ages = grid(g.From, g.To, g.Step)
	}
	rows, cols, err := centileRows(b.ref, nil, ages, nil, false, func(st *curve.Stratum, out []float64) {
		b.notes = append(b.notes, fmt.Sprintf("centiles.csv: %s: %d ages of the table grid outside the fitted range %s–%s left out",
			stratumLabel(st.Name), len(out), shortAge(st.AgeMin), shortAge(st.AgeMax)))
	})
	if err != nil {
		return err
	}
	roundTable(b.ref, rows, cols, false)
	return writeRowsCSV(w, b.ref, cols, rows, false)
}

// stratumLabel names a stratum in messages.
func stratumLabel(name string) string {
	if name == "" {
		return "(single stratum)"
	}
	return "stratum " + name
}

// summary prints the build's summary to w.
func (b *built) summary(w io.Writer) error {
	t := b.table
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintf(tw, "input\t%s\n", t.Name)
	fmt.Fprintf(tw, "rows read\t%d\n", t.Total)
	fmt.Fprintf(tw, "rows used\t%d\n", len(t.Rows))
	fmt.Fprintf(tw, "rows excluded\t%d\n", len(t.Excluded))
	for _, c := range t.Counts() {
		fmt.Fprintf(tw, "  %s\t%d\n", c.Reason, c.N)
	}
	tw.Flush()
	fmt.Fprintf(w, "\n%s, %s, age scale %s%s\n", refTitle(b.ref), fitPasses(b.refitted), b.ref.AgeScale, scaleHow(b.scales))
	tw = tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "stratum\tn\tages\tinterior knots\tlambda\tchosen by\tsize guard")
	for _, st := range b.ref.Strata {
		fmt.Fprintf(tw, "%s\t%d\t%s–%s\t%d\t%.4g\t%s\t%s\n", nameOr(st.Name), st.N, shortAge(st.AgeMin), shortAge(st.AgeMax),
			st.Smoothness.InteriorKnots, st.Smoothness.Lambda, curve.CriterionText(st.Smoothness.Criterion), guardText(&st))
	}
	tw.Flush()
	for _, n := range b.notes {
		fmt.Fprintf(w, "note: %s\n", n)
	}
	fmt.Fprintf(w, "\nfiles in %s:\n", b.dir)
	for _, f := range b.files {
		fmt.Fprintf(w, "  %s\n", f)
	}
	fmt.Fprintf(w, "\n%s\n", curve.Caution)
	return nil
}

func fitPasses(refitted bool) string {
	if refitted {
		return "fitted after the implausibility screen"
	}
	return "fitted without an implausibility screen"
}

// scaleHow says how the age scale was chosen.
func scaleHow(sc []curve.ScaleChoice) string {
	if sc == nil {
		return " (from the plan)"
	}
	return fmt.Sprintf(" (chosen from %d candidates)", len(sc))
}

// refTitle names the reference's measure and units.
func refTitle(r *curve.Reference) string {
	s := r.Measure
	if s == "" {
		s = "measurement"
	}
	if r.Unit != "" {
		s += " (" + r.Unit + ")"
	}
	if r.AgeUnit != "" {
		s += " by age in " + r.AgeUnit
	}
	return s
}

func nameOr(name string) string {
	if name == "" {
		return "(all)"
	}
	return name
}

// guardText summarises a stratum's sample-size guard decisions: chart
// centiles flagged (with their age windows) and grid taus dropped.
func guardText(st *curve.Stratum) string {
	var flagged, dropped []string
	seen := map[string]bool{}
	for _, f := range st.Flags {
		c := centileName(tidy(100 * f.Tau))
		switch f.Action {
		case "dropped":
			if !seen["d"+c] {
				dropped = append(dropped, c)
				seen["d"+c] = true
			}
		default:
			flagged = append(flagged, fmt.Sprintf("%s at %.4g–%.4g", c, f.AgeLo, f.AgeHi))
		}
	}
	var parts []string
	if len(flagged) > 0 {
		parts = append(parts, "centiles flagged: "+strings.Join(flagged, ", "))
	}
	if len(dropped) > 0 {
		parts = append(parts, "tail centiles dropped: "+strings.Join(dropped, ", "))
	}
	if len(parts) == 0 {
		return "ok"
	}
	return strings.Join(parts, "; ")
}

// tableRow is one line of a centile or velocity table.
type tableRow struct {
	stratum string
	age     float64
	values  []float64
	lo, hi  []float64  // bootstrap band per centile, NaN where none; nil for none at all
	lms     *curve.LMS // nil for velocity tables or where no LMS fits
}

// centileRows computes table rows for the strata named (nil means all) at
// ages (nil means each stratum's default grid) for centiles in percent (nil
// means the chart centiles). Ages outside a stratum's fitted range are left
// out and reported to skipped. With velocity the values are dQ/dage.
func centileRows(r *curve.Reference, strata []*curve.Stratum, ages, centiles []float64, velocity bool,
	skipped func(st *curve.Stratum, out []float64)) ([]tableRow, []float64, error) {
	if strata == nil {
		strata, _ = selectStrata(r, "")
	}
	if centiles == nil {
		centiles = chartCentiles(strata[0])
	}
	taus := make([]float64, len(centiles))
	for i, c := range centiles {
		taus[i] = c / 100
	}
	var rows []tableRow
	for _, st := range strata {
		at := ages
		if at == nil {
			at = defaultAges(st)
		}
		in, out := inRange(st, at)
		if len(out) > 0 && skipped != nil {
			skipped(st, out)
		}
		if len(in) == 0 {
			continue
		}
		if velocity {
			for _, a := range in {
				row := tableRow{stratum: st.Name, age: a, values: make([]float64, len(taus))}
				for j, tau := range taus {
					v, err := r.Velocity(st.Name, a, tau)
					if err != nil {
						return nil, nil, fmt.Errorf("%s, centile %s: %w", stratumLabel(st.Name), centileName(centiles[j]), err)
					}
					row.values[j] = v
				}
				rows = append(rows, row)
			}
			continue
		}
		tab, err := r.Table(st.Name, in, taus)
		if err != nil {
			return nil, nil, fmt.Errorf("%s: %w", stratumLabel(st.Name), err)
		}
		for i, a := range in {
			row := tableRow{stratum: st.Name, age: a, values: tab.Values[i]}
			row.lo, row.hi = bandsAt(st, a, taus)
			if l, err := r.LMS(st.Name, a); err == nil {
				row.lms = &l
			} else if !errors.Is(err, curve.ErrDegenerate) {
				return nil, nil, fmt.Errorf("%s: LMS at age %s: %w", stratumLabel(st.Name), ageText(a), err)
			}
			rows = append(rows, row)
		}
	}
	if len(rows) == 0 {
		return nil, nil, errors.New("no table ages inside the fitted age range of any stratum")
	}
	return rows, centiles, nil
}

// writeRowsCSV writes table rows as CSV: stratum, age, one column per
// centile named by its number, then L, M, S, then the bootstrap band of
// each centile as "C_lo95" and "C_hi95" when the reference has bands. A
// velocity table has columns named "slope of centile-C curve (UNIT/AGE)"
// and no L, M, S or bands.
func writeRowsCSV(w io.Writer, r *curve.Reference, centiles []float64, rows []tableRow, velocity bool) error {
	cw := csv.NewWriter(w)
	head := []string{"stratum", "age"}
	bands := false
	for _, row := range rows {
		bands = bands || row.lo != nil
	}
	for _, c := range centiles {
		if velocity {
			head = append(head, slopeName(r, c))
		} else {
			head = append(head, centileName(c))
		}
	}
	if !velocity {
		head = append(head, "L", "M", "S")
		if bands {
			for _, c := range centiles {
				head = append(head, centileName(c)+"_lo95", centileName(c)+"_hi95")
			}
		}
	}
	cw.Write(head)
	for _, row := range rows {
		rec := []string{row.stratum, ageText(row.age)}
		for _, v := range row.values {
			rec = append(rec, num(v))
		}
		if !velocity {
			if row.lms != nil {
				rec = append(rec, num(row.lms.L), num(row.lms.M), num(row.lms.S))
			} else {
				rec = append(rec, "", "", "")
			}
			if bands {
				for j := range centiles {
					if row.lo == nil || math.IsNaN(row.lo[j]) {
						rec = append(rec, "", "")
					} else {
						rec = append(rec, num(row.lo[j]), num(row.hi[j]))
					}
				}
			}
		}
		cw.Write(rec)
	}
	cw.Flush()
	return cw.Error()
}

// slopeName heads a velocity column so that it cannot be read as a
// velocity centile: the slope of the centile's curve in value units per age
// unit.
func slopeName(r *curve.Reference, c float64) string {
	return fmt.Sprintf("slope of centile-%s curve (%s)", centileName(c), slopeUnit(r))
}

// slopeUnit is the unit of a centile curve's slope, e.g. "kg/month".
func slopeUnit(r *curve.Reference) string {
	u := r.Unit
	if u == "" {
		u = "units"
	}
	return u + "/" + singular(r.AgeUnit)
}

// bandsAt returns the bootstrap band of each tau at age (NaN where the
// stratum has none for it), or nils when the stratum has no bands.
func bandsAt(st *curve.Stratum, age float64, taus []float64) (lo, hi []float64) {
	if len(st.Bands) == 0 {
		return nil, nil
	}
	lo, hi = make([]float64, len(taus)), make([]float64, len(taus))
	for j, tau := range taus {
		lo[j], hi[j] = math.NaN(), math.NaN()
		for k := range st.Bands {
			if bd := &st.Bands[k]; math.Abs(bd.Tau-tau) <= 1e-12 {
				if l, h, ok := bd.At(age); ok {
					lo[j], hi[j] = l, h
				}
			}
		}
	}
	return lo, hi
}

// implausible returns the rows of d with |z| > lim under r, with their
// z-scores as detail text.
func implausible(r *curve.Reference, d *curve.Data, lim float64) ([]int, []string) {
	// Rows the reference cannot score are not implausible, just unscored.
	scores, _ := r.ScoreAll(nil, d)
	var idx []int
	var detail []string
	for i, s := range scores {
		if math.Abs(s.Z) > lim {
			idx = append(idx, i)
			detail = append(detail, fmt.Sprintf("z = %.2f", s.Z))
		}
	}
	return idx, detail
}

// writeCSV writes a table of the build's output directory and lists the
// file among those written.
func (b *built) writeCSV(name string, head []string, rows [][]string) error {
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	w.Write(head)
	w.WriteAll(rows)
	if err := w.Error(); err != nil {
		return err
	}
	if err := os.WriteFile(filepath.Join(b.dir, name), buf.Bytes(), 0o644); err != nil {
		return err
	}
	b.files = append(b.files, name)
	return nil
}
