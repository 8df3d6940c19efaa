package main

import (
	"fmt"
	"io"
	"math"

	"growband/curve"
	"growband/internal/intake"
	"growband/internal/scorefile"
)

const scoreUsage = `usage: growband score --ref FILE --in FILE.csv [column flags] [--format csv|json]
       growband score --ref FILE --age A --value V [--stratum S] [--format csv|json]

Gives the z-score (SDS) and centile of measurements against the reference.

With --in, every row of the CSV file is written back in file order with
three columns added: z, centile (percent) and flag. A row that cannot be
scored (missing or unreadable cells, an age outside the reference's fitted
range, an unknown stratum) has an empty z and centile and the reason in
flag; a scored row's flag lists remarks such as beyond-tail (outside the
outermost fitted centiles) or implausible (|z| > 5). By default the file has
an "age" column in the reference's age unit, a value column named after the
reference's measure, and, when the reference has several strata, a
"stratum" column; the column flags below change this.

With --age and --value, one measurement is scored; --stratum names its
stratum when the reference has several.

With --subject-column, each visit also gets cond_z and cond_centile: its
place among the conditional centiles of the reference's conditional model
(a plan with a [conditional] table) given the same child's most recent
earlier visit at a modelled gap. A visit without one (a first visit, a gap
outside the model's range) has them empty with the reason in flag.
`

func runScore(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("score")
	refPath := fs.String("ref", "", "reference file written by build (required)")
	in := fs.String("in", "", "CSV file of measurements to score")
	ageFlag := fs.String("age", "", "age of a single measurement, in the reference's age unit")
	valueFlag := fs.String("value", "", "a single measurement, in the reference's unit")
	format := fs.String("format", "csv", "output format: csv or json")
	var cols columnFlags
	cols.register(fs, false)
	fs.StringVar(&cols.subject, "subject-column", "", "column holding the child id: adds cond_z and cond_centile, the place of each visit among the conditional centiles given the child's previous visit")
	fs.StringVar(&cols.stratumName, "stratum", "", "stratum of the measurement(s); with --in, every row is taken to be in it")
	pos, err := parseFlags(fs, scoreUsage, args, stdout)
	if err != nil {
		return err
	}
	if len(pos) > 0 {
		return usagef("score", "score: unexpected argument %q", pos[0])
	}
	if *format != "csv" && *format != "json" {
		return usagef("score", "score: --format must be csv or json, not %q", *format)
	}
	single := *ageFlag != "" || *valueFlag != ""
	switch {
	case single && *in != "":
		return usagef("score", "score: give --in, or --age with --value, not both")
	case single && (*ageFlag == "" || *valueFlag == ""):
		return usagef("score", "score: --age and --value go together")
	case !single && *in == "":
		return usagef("score", "score: give --in FILE.csv, or --age and --value")
	}
	var age, value float64
	if single {
		if age, err = intake.ParseNumber(*ageFlag); err != nil {
			return usagef("score", "score: --age: %v", err)
		}
		if value, err = intake.ParseNumber(*valueFlag); err != nil {
			return usagef("score", "score: --value: %v", err)
		}
	}
	ref, err := loadReference("score", *refPath)
	if err != nil {
		return err
	}
	if single {
		if cols.stratumName == "" && len(ref.Strata) > 1 {
			return usagef("score", "score: the reference has strata %s: name one with --stratum", scorefile.StrataNames(ref))
		}
		if which, err := intake.CheckMeasurement(ref.Measure, ref.Unit, age, value); err != nil {
			return fmt.Errorf("score: --%s: %v; not scored", which, err)
		}
		return scoreOne(stdout, ref, cols.stratumName, age, value, *format)
	}
	spec, err := cols.spec("score", ref)
	if err != nil {
		return err
	}
	t, err := intake.ReadFile(*in, spec)
	if err != nil {
		return err
	}
	var stratum func(string) string
	if cols.stratumName != "" {
		stratum = cols.rowStratum
	}
	out, err := scorefile.Score(ref, t, stratum)
	if err != nil {
		return err
	}
	if cols.subject != "" {
		if err := scorefile.AddChanges(ref, t, out); err != nil {
			return fmt.Errorf("score: %w", err)
		}
	}
	n := 0
	for _, o := range out {
		if o.OK {
			n++
		}
	}
	progress{w: stderr}.printf("%s: %d of %d rows scored; %d not scored (reason in the flag column)", t.Name, n, len(out), len(out)-n)
	if *format == "json" {
		return scorefile.WriteJSON(stdout, ref, t.Header, out)
	}
	return scorefile.WriteCSV(stdout, t.Header, out)
}

// scoreOne scores a single measurement. A measurement that cannot be
// scored is still written, flagged, and the error returned.
func scoreOne(w io.Writer, r *curve.Reference, stratum string, age, value float64, format string) error {
	o := scorefile.Row{Fields: []string{stratum, ageText(age), num(value)}, Stratum: stratum, Age: age, Value: value,
		Z: math.NaN(), Centile: math.NaN()}
	s, err := r.Score(stratum, age, value)
	if err != nil {
		o.Flag = scorefile.Reason(r, err)
	} else {
		o.Z, o.Centile, o.Flag, o.OK = s.Z, s.Centile, s.Flags.String(), true
	}
	head := []string{"stratum", "age", "value"}
	var werr error
	if format == "json" {
		werr = scorefile.WriteJSON(w, r, head, []scorefile.Row{o})
	} else {
		werr = scorefile.WriteCSV(w, head, []scorefile.Row{o})
	}
	if err != nil {
		return err
	}
	return werr
}
