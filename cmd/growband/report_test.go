package main

import (
	"bytes"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"growband/curve"
	"growband/internal/intake"
	"growband/internal/scorefile"
	"growband/render"
)

// maxReportBytes is the most report.html may weigh at any number of rows
// (5 MB, the limit this project set itself for a report that opens in any
// browser).
const maxReportBytes = 5 << 20

// TestReportSizeAt200000Rows writes the report of 200,000 rows drawn from
// an LMS table (invented numbers of a plausible shape), with the point
// cloud drawn under the curves and worm plots of 10 age groups per stratum,
// and holds it under 5 MB: clouds and worms are thinned, the rule written
// on each chart. The reference is the table itself, so the test is quick;
// the report's size depends on the rows, not on how the curves were fitted.
func TestReportSizeAt200000Rows(t *testing.T) {
	const rows = 200000
	const table = "# age_unit = months\n# measure = weight\n# unit = kg\nsex,age,L,M,S\n" +
		"female,0,0.38,3.2,0.141\nfemale,24,-0.15,11.5,0.113\nfemale,60,-0.3,18.2,0.125\n" +
		"male,0,0.35,3.3,0.146\nmale,24,-0.1,12.2,0.108\nmale,60,-0.25,18.3,0.12\n"
	ref, err := curve.LoadLMSTable(strings.NewReader(table), "t.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	var csv bytes.Buffer
	csv.WriteString("sex,age,weight\n")
	rng := rand.New(rand.NewPCG(7, 8))
	for i := range rows {
		sex := []string{"female", "male"}[i%2]
		age := 60 * rng.Float64()
		y, err := ref.Quantile(sex, age, distuv.UnitNormal.CDF(rng.NormFloat64()))
		if err != nil {
			t.Fatal(err)
		}
		fmt.Fprintf(&csv, "%s,%.3f,%.3f\n", sex, age, y)
	}
	path := filepath.Join(dir, "rows.csv")
	if err := os.WriteFile(path, csv.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	spec := scorefile.Spec(ref) // every row kept, as score reads a file
	spec.Value, spec.Stratum = "weight", "sex"
	tab, err := intake.ReadFile(path, spec)
	if err != nil || len(tab.Rows) != rows {
		t.Fatalf("%v, %d rows", err, len(tab.Rows))
	}
	diag, err := curve.Check(ref, tableData(tab), nil)
	if err != nil {
		t.Fatal(err)
	}
	b := &built{plan: &intake.Plan{Name: "plan.toml", Output: intake.Output{Points: true}}, table: tab, ref: ref, diag: diag}
	charts := make([][]byte, len(ref.Strata))
	for i := range ref.Strata {
		fig, err := centileFigure(ref, &ref.Strata[i], b.points(ref.Strata[i].Name), nil)
		if err != nil {
			t.Fatal(err)
		}
		var svg bytes.Buffer
		if err := render.Write(&svg, fig, "svg", 0, 0); err != nil {
			t.Fatal(err)
		}
		charts[i] = svg.Bytes()
	}
	worms, err := wormCharts(ref, diag)
	if err != nil {
		t.Fatal(err)
	}
	var out bytes.Buffer
	if err := b.report(&out, charts, worms); err != nil {
		t.Fatal(err)
	}
	rep := out.String()
	t.Logf("report of %d rows: %d bytes", rows, out.Len())
	if out.Len() > maxReportBytes {
		t.Errorf("report of %d rows is %d bytes, over %d", rows, out.Len(), maxReportBytes)
	}
	for _, want := range []string{"measurements: every 20th of 100000 drawn", "point drawn"} {
		if !strings.Contains(rep, want) {
			t.Errorf("report does not state the thinning rule %q", want)
		}
	}
}
