package cohort

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"growband/internal/intake"
)

// writeCohort writes a cohort CSV drawn from testTable with a shift in z,
// children with 2 visits each, and two unusable rows.
func writeCohort(t *testing.T, path string, shift float64, seed uint64) {
	t.Helper()
	ref := testRef(t)
	rng := rand.New(rand.NewPCG(seed, 1))
	var b strings.Builder
	b.WriteString("id,sex,age,weight\n")
	for c := range 150 {
		sex := []string{"boys", "girls"}[c%2]
		for range 2 {
			age := rng.Float64() * 60
			y := valueAt(t, ref, sex, age, shift+rng.NormFloat64())
			fmt.Fprintf(&b, "c%d,%s,%.3f,%.3f\n", c, sex, age, y)
		}
	}
	b.WriteString("x1,boys,12,heavy\n") // not a number: excluded by intake
	b.WriteString("x2,boys,75,20\n")    // beyond the table's ages: not scored
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
}

func TestRunCompare(t *testing.T) {
	dir := t.TempDir()
	refPath := filepath.Join(dir, "ref.csv")
	if err := os.WriteFile(refPath, []byte(testTable), 0o644); err != nil {
		t.Fatal(err)
	}
	in, vs := filepath.Join(dir, "a.csv"), filepath.Join(dir, "b.csv")
	writeCohort(t, in, -0.4, 1)
	writeCohort(t, vs, 0, 2)
	out := filepath.Join(dir, "out")
	var stdout, stderr bytes.Buffer
	args := []string{"--ref", refPath, "--in", in, "--vs", vs, "--bands", "0:60:12",
		"--stratum-column", "sex", "--subject-column", "id", "--against-ref", refPath, "--out", out, "--own-centiles"}
	if err := RunCompare(args, &stdout, &stderr, testReadFlags); err != nil {
		t.Fatalf("%v\n%s", err, stderr.String())
	}
	for _, f := range []string{"compare.csv", "differences.csv", "refdiff.csv", "unscored.csv", "zdist.svg", "zdist-vs.svg", "refdiff-boys.svg", "refdiff-girls.svg", "own-boys.svg", "own-girls.svg"} {
		if fi, err := os.Stat(filepath.Join(out, f)); err != nil || fi.Size() == 0 {
			t.Errorf("%s: %v", f, err)
		}
	}
	rows := readCSV(t, filepath.Join(out, "compare.csv"))
	// 2 cohorts x (2 strata x (5 bands + 1) + overall) = 26 rows + header.
	if len(rows) != 27 || rows[0][0] != "cohort" {
		t.Fatalf("compare.csv: %d rows, header %v", len(rows), rows[0])
	}
	if !strings.Contains(rows[1][len(rows[1])-1], "cluster-robust") {
		t.Errorf("method column %q", rows[1][len(rows[1])-1])
	}
	un := readCSV(t, filepath.Join(out, "unscored.csv"))
	// Per cohort: line 302 not a number, line 303 age outside the table.
	if len(un) != 5 || un[1][1] != "302" || un[2][1] != "303" || !strings.Contains(un[2][2], "outside") {
		t.Errorf("unscored.csv: %v", un)
	}
	// Self comparison: every difference is zero.
	for _, r := range readCSV(t, filepath.Join(out, "refdiff.csv"))[1:] {
		if v, err := strconv.ParseFloat(r[5], 64); err != nil || math.Abs(v) > 1e-9 { // rounding of Phi and its inverse

			t.Errorf("refdiff row %v", r)
			break
		}
	}
	if stdout.Len() != 0 || !strings.Contains(stderr.String(), "growband: wrote") {
		t.Errorf("stdout %q, stderr %q", stdout.String(), stderr.String())
	}

	// JSON to stdout.
	stdout.Reset()
	if err := RunCompare([]string{"--ref", refPath, "--in", in, "--stratum-column", "sex", "--format", "json"}, &stdout, &stderr, testReadFlags); err != nil {
		t.Fatal(err)
	}
	var doc struct {
		Cohorts []struct {
			Clustered bool
			Groups    []struct{ N int }
		}
		Unscored []struct{ Line int }
	}
	if err := json.Unmarshal(stdout.Bytes(), &doc); err != nil {
		t.Fatalf("%v\n%s", err, stdout.String())
	}
	if len(doc.Cohorts) != 1 || doc.Cohorts[0].Clustered || len(doc.Cohorts[0].Groups) != 3 || len(doc.Unscored) != 2 {
		t.Errorf("json %+v", doc)
	}
}

func TestRunCompareUsage(t *testing.T) {
	var stdout, stderr bytes.Buffer
	if err := RunCompare([]string{"-h"}, &stdout, &stderr, testReadFlags); !errors.Is(err, flag.ErrHelp) || !strings.Contains(stdout.String(), "usage: growband compare") || !strings.Contains(stdout.String(), "-subject-column") {
		t.Errorf("-h: %v\n%s", err, stdout.String())
	}
	var u *UsageError
	for _, args := range [][]string{
		{},
		{"--ref", "r.json"},
		{"--ref", "r.json", "--in", "a.csv", "--format", "xml"},
		{"--ref", "r.json", "--in", "a.csv", "--bands", "0:60:-6"},
		{"--ref", "r.json", "--in", "a.csv", "--bands", "6,0"},
		{"--ref", "r.json", "--in", "a.csv", "extra"},
		{"--nonsense"},
	} {
		if err := RunCompare(args, &stdout, &stderr, testReadFlags); !errors.As(err, &u) {
			t.Errorf("%v: %v, want a UsageError", args, err)
		}
	}
	// A missing file is a failure, not a usage error.
	if err := RunCompare([]string{"--ref", "/nonexistent.json", "--in", "a.csv"}, &stdout, &stderr, testReadFlags); err == nil || errors.As(err, &u) {
		t.Errorf("missing file: %v", err)
	}
}

func TestParseBands(t *testing.T) {
	cases := []struct {
		in   string
		want []float64
	}{
		{"0:60:6", []float64{0, 6, 12, 18, 24, 30, 36, 42, 48, 54, 60}},
		{"0:10:4", []float64{0, 4, 8, 10}}, // shorter last band
		{"0, 6,24", []float64{0, 6, 24}},
	}
	for _, c := range cases {
		got, err := parseBands(c.in)
		if err != nil || fmt.Sprint(got) != fmt.Sprint(c.want) {
			t.Errorf("%q: %v %v, want %v", c.in, got, err, c.want)
		}
	}
}

func readCSV(t *testing.T, path string) [][]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return rows
}

func FuzzParseBands(f *testing.F) {
	for _, s := range []string{"0:60:6", "0,6,12", "1:0:1", "0:1e300:1e-300", ":", "a,b"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		b, err := parseBands(s)
		if err == nil && len(b) > 10001 {
			t.Fatalf("%q: %d edges", s, len(b))
		}
	})
}

// testReadFlags registers the shared reading options as the command does
// (cmd/growband's registerReadFlags, without its help texts).
func testReadFlags(fs *flag.FlagSet) func(*intake.Spec) error {
	var o intake.Options
	for _, name := range intake.OptionNames {
		fs.Func(name, name, func(v string) error { return o.Set(name, v) })
	}
	return o.Apply
}
