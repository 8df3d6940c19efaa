package main

import (
	"fmt"
	"io"
	"os"
	"path/filepath"

	"growband/curve"
	"growband/internal/cohort"
	"growband/internal/intake"
	"growband/internal/scorefile"
	"growband/render"
)

const compareUsage = `usage: growband compare --ref FILE --in COHORT.csv [--vs OTHER.csv]
                       [--bands 0:60:6] [--format csv|json] [--out DIR] [--rows FILE]
                       [--against-ref B] [column flags]
       growband compare --ref FILE --against-ref B [--out DIR]

Scores every measurement of COHORT.csv against the reference (a reference
file or an LMS table, *.csv) and summarises the z-scores per stratum and age
band, per stratum and overall: n, mean z with its standard error and
interval, SD of z, and the shares below -2 and -3 and above +2 SD with their
standard errors, Wilson intervals, design effects and effective n, beside
the shares the reference implies (2.275%, 0.135%, 2.275%). Every table
names the reference, counts the rows not scored by reason, says how the
intervals were computed, and carries the caution.

With --subject-column, a child's repeated visits are not independent: the
intervals are cluster-robust (sandwich variance over subjects) and the
Wilson intervals use the Kish effective n = n/deff. With --weight-column the
estimates, and the z-score distribution chart, are weighted.
With --subject-column and a reference that has a conditional model (a plan
with a [conditional] table), the share of later visits below the 5th
conditional centile given the child's previous visit (growth faltering) is
reported with Wilson intervals clustered by child (growth.csv with --out).

--vs adds a second cohort and the differences (cohort minus --vs) in mean z
and in the shares with their intervals, and the two cohorts compared at
every chart centile, adjusted for age (a quantile regression on B-splines
in age and a cohort indicator; intervals by the bootstrap over children with
--subject-column, else the Hall-Sheather sandwich; centile-diff.csv and the
chart centile-diff-STRATUM with --out). --against-ref B places reference
B's centiles in the reference's z units; it needs no cohort.

Without --out the table goes to stdout (the summary, or with only
--against-ref the centiles of B in the reference's z units). With --out DIR,
the files are written there: compare.csv (or compare.json: everything),
unscored.csv (rows not used and why), differences.csv (--vs), refdiff.csv
(--against-ref), and per stratum the charts (SVG unless --chart-format
says png or pdf) zdist-STRATUM.svg (z against
N(0,1), --vs overlaid), qq-STRATUM.svg (normal Q-Q plot), means-STRATUM.svg
(mean z by age band, with --bands), refs-STRATUM.svg and
refdiff-STRATUM.svg (--against-ref: the two references' centiles in the
measurement's units and their difference in z units) and, with
--own-centiles, own-STRATUM.svg (the cohort's own 3rd, 50th and 97th
centiles fitted by quantile regression, over the reference's bands).
--rows FILE writes every scored row with its z-score and centile.
`

func runCompare(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("compare")
	refPath := fs.String("ref", "", "reference file, or LMS table *.csv (required)")
	in := fs.String("in", "", "CSV file of the cohort's measurements (required unless --against-ref)")
	vs := fs.String("vs", "", "CSV file of a second cohort to compare with")
	against := fs.String("against-ref", "", "second reference whose centiles are placed in the reference's z units")
	bandSpec := fs.String("bands", "", bandsHelp+" (default: none)")
	format := fs.String("format", "csv", "table format: csv or json")
	out := fs.String("out", "", "directory to write the tables and charts into (default: the table to stdout)")
	rowsPath := fs.String("rows", "", "CSV file to write every scored row into, with its z-score and centile")
	level := fs.Float64("level", cohort.DefaultLevel, "coverage of the intervals, in (0,1)")
	limit := fs.Float64("limit", curve.ImplausibleZ, limitHelp)
	ownFit := fs.Bool("own-centiles", false, "with --out, also fit the cohort's own 3rd, 50th and 97th centiles and draw them over the reference (own-STRATUM.svg)")
	name := fs.String("name", "", "label of the cohort (default: the file name)")
	vsName := fs.String("vs-name", "", "label of the --vs cohort (default: its file name)")
	chartFormat := fs.String("chart-format", "svg", "format of the charts written with --out: svg, png or pdf")
	var cols columnFlags
	cols.register(fs, true)
	fs.StringVar(&cols.weight, "weight-column", "", "column holding survey weights (positive): estimates and charts are weighted")
	pos, err := parseFlags(fs, compareUsage, args, stdout)
	if err != nil {
		return err
	}
	if len(pos) > 0 {
		return usagef("compare", "compare: unexpected argument %q", pos[0])
	}
	if *refPath == "" {
		return usagef("compare", "compare: --ref FILE is required")
	}
	if *in == "" && *against == "" {
		return usagef("compare", "compare: --in COHORT.csv is required (or --against-ref B alone)")
	}
	if *in == "" && (*vs != "" || *rowsPath != "" || *ownFit) {
		return usagef("compare", "compare: --vs, --rows and --own-centiles need --in")
	}
	if *format != "csv" && *format != "json" {
		return usagef("compare", "compare: --format must be csv or json, not %q", *format)
	}
	if _, err := render.FormatOf("x." + *chartFormat); err != nil {
		return usagef("compare", "compare: --chart-format must be svg, png or pdf, not %q", *chartFormat)
	}
	opt := cohort.Options{Level: *level}
	if opt.Limit, err = limitOption(*limit); err != nil {
		return usagef("compare", "compare: %v", err)
	}
	if *bandSpec != "" {
		if opt.Bands, err = parseBands(*bandSpec); err != nil {
			return usagef("compare", "compare: --bands: %v", err)
		}
	}
	if !(opt.Level > 0 && opt.Level < 1) {
		return usagef("compare", "compare: --level must lie strictly between 0 and 1")
	}
	ref, err := loadReference("compare", *refPath)
	if err != nil {
		return err
	}
	job := &cohort.Job{Ref: ref, RefName: filepath.Base(*refPath), Options: opt, JSON: *format == "json",
		OutDir: *out, OwnCentiles: *ownFit, ChartFormat: *chartFormat}
	if *against != "" {
		if job.Against, err = loadReference("compare", *against); err != nil {
			return err
		}
		job.AgainstName = filepath.Base(*against)
	}
	prog := progress{w: stderr}
	for k, path := range []string{*in, *vs} {
		if path == "" {
			continue
		}
		spec, err := cols.spec("compare", ref)
		if err != nil {
			return err
		}
		t, err := intake.ReadFile(path, spec)
		if err != nil {
			return err
		}
		if err := scorefile.NeedStratum(ref, t); err != nil {
			return err
		}
		if len(t.Excluded) > 0 {
			prog.printf("%s: %d of %d rows not read (%s); they are listed in unscored.csv with --out", t.Name, len(t.Excluded), t.Total, countsText(t.Counts()))
		}
		label := []string{*name, *vsName}[k]
		if label == "" {
			label = filepath.Base(path)
		}
		job.Cohorts = append(job.Cohorts, cohort.Cohort{Name: label, Table: t})
	}
	if *rowsPath != "" {
		f, err := os.Create(*rowsPath)
		if err != nil {
			return err
		}
		defer f.Close()
		job.Rows = f
	}
	if err := cohort.Run(job, stdout, stderr); err != nil {
		return err
	}
	if *rowsPath != "" {
		if err := job.Rows.(*os.File).Close(); err != nil {
			return err
		}
		prog.printf("wrote %s", *rowsPath)
	}
	return nil
}

// bandsHelp is the help of --bands, the same in every command.
const bandsHelp = "age bands as FROM:TO:STEP (e.g. 0:60:6; a shorter last band when STEP does not divide) or edges 0,6,12,24"

// limitHelp is the help of --limit, the same in every command.
const limitHelp = "leave out rows with |z| above this as implausible, as build does (0 keeps every row)"

// limitOption turns --limit into the library's limit: 0 keeps every row
// (a negative library limit), a negative flag is refused.
func limitOption(limit float64) (float64, error) {
	switch {
	case limit < 0 || limit != limit:
		return 0, fmt.Errorf("--limit must be 0 (keep every row) or more, not %g", limit)
	case limit == 0:
		return -1, nil
	}
	return limit, nil
}
