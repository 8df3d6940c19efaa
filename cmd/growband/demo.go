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
	"growband/examples/district"
	"growband/internal/intake"
	"growband/internal/scorefile"
)

const demoUsage = `usage: growband demo [--out DIR] [--measure weight|length] [--half] [--quiet]

Builds a reference from the invented Tarnwick District survey (a district
that does not exist; see examples/district) and scores a few of its children.
Writes into DIR (default: growband-demo in the current directory) the survey
as survey.csv, the plan as plan.toml, and everything "growband build" writes.

By default the demo uses the whole survey: 6,000 children, about 9,600
rows. --half keeps every second child, plus every child with a planted
recording error, for a quicker run.

The survey codes sex as F/M at three clinics and 1 (male) / 2 (female) at
the fourth; the demo plan maps both codings to "female" and "male" with an
[input.stratum_codes] table.
`

// demoCodes is the stratum code map appended to the demo plan.
const demoCodes = `
# Added by "growband demo": one coding for sex at all four clinics.
[input.stratum_codes]
F = "female"
M = "male"
1 = "male"
2 = "female"
`

// demoChildren is how many children the demo scores.
const demoChildren = 3

func runDemo(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("demo")
	out := fs.String("out", "growband-demo", "directory to write into")
	measure := fs.String("measure", "weight", "measure to build: weight or length")
	half := fs.Bool("half", false, "use every second child (and every planted error) for a quicker run")
	quiet := fs.Bool("quiet", false, "print no progress messages")
	pos, err := parseFlags(fs, demoUsage, args, stdout)
	if err != nil {
		return err
	}
	if len(pos) > 0 {
		return usagef("demo", "demo: unexpected argument %q", pos[0])
	}
	m := district.Measure(*measure)
	if m != district.Weight && m != district.Length {
		return usagef("demo", "demo: --measure must be weight or length, not %q", *measure)
	}
	prog := progress{w: stderr}
	if *quiet {
		prog.w = nil
	}
	rows := district.Generate()
	keep := demoSample(rows, !*half)
	if err := os.MkdirAll(*out, 0o755); err != nil {
		return err
	}
	survey := filterSurvey(district.CSV(), keep)
	if err := os.WriteFile(filepath.Join(*out, "survey.csv"), survey, 0o644); err != nil {
		return err
	}
	planText := append(district.Plan(m), demoCodes...)
	planPath := filepath.Join(*out, "plan.toml")
	if err := os.WriteFile(planPath, planText, 0o644); err != nil {
		return err
	}
	plan, err := intake.ParsePlan(planText, planPath, *out)
	if err != nil {
		return fmt.Errorf("demo plan: %w", err)
	}
	prog.printf("Tarnwick District demo: %s, %d children", m, len(keep))
	b, err := build(plan, *out, prog)
	if err != nil {
		return err
	}
	if err := b.summary(stdout); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "\nexample children scored against the new reference:\n")
	demoScores(stdout, b.ref, rows, keep, m)
	ref := filepath.Join(*out, "reference.json")
	fmt.Fprintf(stdout, "\nnext, for example:\n  growband table --ref %s --ages 0:60:6\n  growband score --ref %s --age 24 --value 12.1 --stratum female\n  growband chart --ref %s --stratum male --out male.png\n",
		ref, ref, ref)
	return nil
}

// demoSample returns the child ids in the demo: every second child in
// survey order, plus every child with a planted recording error; all
// children with full.
func demoSample(rows []district.Row, full bool) map[string]bool {
	keep := map[string]bool{}
	n := 0
	last := ""
	for _, r := range rows {
		if r.ChildID != last {
			last = r.ChildID
			if full || n%2 == 0 {
				keep[r.ChildID] = true
			}
			n++
		}
		if r.Fault != district.NoFault {
			keep[r.ChildID] = true
		}
	}
	return keep
}

// filterSurvey keeps the header and the lines of the children in keep.
// The child id is the first field and never quoted.
func filterSurvey(csv []byte, keep map[string]bool) []byte {
	var out bytes.Buffer
	for i, line := range bytes.SplitAfter(csv, []byte("\n")) {
		id, _, _ := strings.Cut(string(line), ",")
		if i == 0 || keep[id] {
			out.Write(line)
		}
	}
	return out.Bytes()
}

// demoScores prints the visits of a few children with several clean
// visits: a girl, a boy, and a child from the clinic that codes sex 1/2.
func demoScores(w io.Writer, r *curve.Reference, rows []district.Row, keep map[string]bool, m district.Measure) {
	visits := map[string][]district.Row{}
	var order []string
	for _, row := range rows {
		if !keep[row.ChildID] {
			continue
		}
		if _, ok := visits[row.ChildID]; !ok {
			order = append(order, row.ChildID)
		}
		visits[row.ChildID] = append(visits[row.ChildID], row)
	}
	var picked []string
	want := []func(district.Row) bool{
		func(x district.Row) bool { return x.SexCode == "F" },
		func(x district.Row) bool { return x.SexCode == "M" },
		func(x district.Row) bool { return x.SexCode == "1" || x.SexCode == "2" },
	}
	for _, ok := range want[:demoChildren] {
		for _, id := range order {
			v := visits[id]
			if len(v) >= 3 && allClean(v, m) && ok(v[0]) && !contains(picked, id) {
				picked = append(picked, id)
				break
			}
		}
	}
	sexName := map[string]string{"F": "female", "M": "male"}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintf(tw, "child\tclinic\tsex\tage (%s)\t%s (%s)\tz\tcentile\t\n", r.AgeUnit, r.Measure, r.Unit)
	for _, id := range picked {
		for _, v := range visits[id] {
			// The survey's values are recorded to 0.1 and its ages to 0.01.
			sex := sexName[v.Sex]
			val := v.Value(m)
			s, err := r.Score(sex, v.AgeMonths, val)
			z, c := "", ""
			if err != nil {
				z = scorefile.Reason(r, err)
			} else {
				z, c = scorefile.ZText(s.Z), scorefile.CentileText(s.Centile)
			}
			fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\t%s\t\n", id, v.Clinic, v.SexCode+" = "+sex, fmt.Sprintf("%.2f", v.AgeMonths), fmt.Sprintf("%.1f", val), z, c)
		}
	}
	tw.Flush()
}

func allClean(v []district.Row, m district.Measure) bool {
	for _, r := range v {
		if !r.Clean(m) {
			return false
		}
	}
	return true
}

func contains(s []string, x string) bool {
	for _, y := range s {
		if x == y {
			return true
		}
	}
	return false
}
