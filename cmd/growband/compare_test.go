package main

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"growband/curve"
)

// compareTable is a small LMS table written for the tests (invented numbers
// of a plausible shape; growband ships no third-party tables), shared with
// internal/cohort's tests.
var compareTable = mustReadTestdata("invented-weight-lms.csv")

// mustReadTestdata returns a file of the project's testdata folder.
func mustReadTestdata(name string) string {
	b, err := os.ReadFile(filepath.Join("..", "..", "testdata", name))
	if err != nil {
		panic(err)
	}
	return string(b)
}

// writeCohort writes a cohort CSV drawn from compareTable with a shift in
// z, 150 children with 2 visits each, survey weights, and two unusable
// rows.
func writeCohort(t *testing.T, path string, shift float64, seed uint64) {
	t.Helper()
	ref, err := curve.LoadLMSTable(strings.NewReader(compareTable), "t.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(seed, 1))
	var b strings.Builder
	b.WriteString("id,sex,age,weight,w\n")
	for c := range 150 {
		sex := []string{"boys", "girls"}[c%2]
		for range 2 {
			age := rng.Float64() * 60
			y, err := ref.Quantile(sex, age, distuv.UnitNormal.CDF(shift+rng.NormFloat64()))
			if err != nil {
				t.Fatal(err)
			}
			fmt.Fprintf(&b, "c%d,%s,%.3f,%.3f,%.2f\n", c, sex, age, y, 0.5+rng.Float64())
		}
	}
	b.WriteString("x1,boys,12,heavy,1\n") // not a number: excluded by intake
	b.WriteString("x2,boys,75,20,1\n")    // beyond the table's ages: not scored
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
}

func compareFixture(t *testing.T) (dir, ref, in, vs string) {
	dir = t.TempDir()
	ref = filepath.Join(dir, "ref.csv")
	if err := os.WriteFile(ref, []byte(compareTable), 0o644); err != nil {
		t.Fatal(err)
	}
	in, vs = filepath.Join(dir, "a.csv"), filepath.Join(dir, "b.csv")
	writeCohort(t, in, -0.4, 1)
	writeCohort(t, vs, 0, 2)
	return dir, ref, in, vs
}

func runIn(args ...string) (stdout, stderr string, err error) {
	var o, e bytes.Buffer
	err = run(args, &o, &e)
	return o.String(), e.String(), err
}

func TestCompare(t *testing.T) {
	dir, refPath, in, vs := compareFixture(t)
	out := filepath.Join(dir, "out")
	rowsPath := filepath.Join(dir, "rows.csv")
	stdout, stderr, err := runIn("compare", "--ref", refPath, "--in", in, "--vs", vs, "--bands", "0:60:12",
		"--stratum-column", "sex", "--subject-column", "id", "--weight-column", "w", "--against-ref", refPath,
		"--out", out, "--own-centiles", "--rows", rowsPath)
	if err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	for _, f := range []string{"compare.csv", "differences.csv", "refdiff.csv", "unscored.csv",
		"zdist-boys.svg", "zdist-girls.svg", "qq-boys.svg", "means-girls.svg", "refs-boys.svg",
		"refdiff-boys.svg", "refdiff-girls.svg", "own-boys.svg", "own-girls.svg"} {
		if fi, err := os.Stat(filepath.Join(out, f)); err != nil || fi.Size() == 0 {
			t.Errorf("%s: %v", f, err)
		}
	}
	rows := readCSVFile(t, filepath.Join(out, "compare.csv"))
	// 2 cohorts x (2 strata x (5 bands + 1) + overall) = 26 rows + header.
	if len(rows) != 27 {
		t.Fatalf("compare.csv: %d rows", len(rows))
	}
	col := columnIndex(rows[0])
	for _, name := range []string{"reference", "mean_z_se", "below_minus2_se", "below_minus2_deff", "below_minus2_n_eff",
		"below_minus3_deff", "above_plus2_n_eff", "not_scored", "method", "caution"} {
		if _, ok := col[name]; !ok {
			t.Errorf("compare.csv lacks column %q", name)
		}
	}
	r1 := rows[1]
	if r1[col["reference"]] != "ref.csv" || !strings.Contains(r1[col["method"]], "cluster-robust") ||
		!strings.Contains(r1[col["method"]], "weighted") || r1[col["caution"]] != curve.Caution {
		t.Errorf("compare.csv row %v", r1)
	}
	// The file's 302 rows: one not read (not a number), one not scored (age).
	if r1[col["rows"]] != "302" || r1[col["scored"]] != "300" ||
		r1[col["not_scored"]] != "not a number 1; age outside the reference's range 1" {
		t.Errorf("rows %s, scored %s, not scored %q", r1[col["rows"]], r1[col["scored"]], r1[col["not_scored"]])
	}
	un := readCSVFile(t, filepath.Join(out, "unscored.csv"))
	// Per cohort: line 302 not a number, line 303 age outside the table.
	if len(un) != 5 || un[1][1] != "302" || un[2][1] != "303" || !strings.Contains(un[2][2], "outside") {
		t.Errorf("unscored.csv: %v", un)
	}
	// Self comparison: every difference is zero.
	for _, r := range readCSVFile(t, filepath.Join(out, "refdiff.csv"))[1:] {
		if v, err := strconv.ParseFloat(r[7], 64); err != nil || math.Abs(v) > 1e-9 { // rounding of Phi and its inverse
			t.Errorf("refdiff row %v", r)
			break
		}
	}
	// --rows: every scored row with its z; the centile is 100 Phi(z).
	rr := readCSVFile(t, rowsPath)
	if len(rr) != 601 || strings.Join(rr[0], ",") != "cohort,file,line,stratum,age,value,weight,subject,z,centile" {
		t.Fatalf("rows.csv: %d rows, header %v", len(rr), rr[0])
	}
	for _, r := range rr[1:] {
		z, _ := strconv.ParseFloat(r[8], 64)
		c, _ := strconv.ParseFloat(r[9], 64)
		if math.Abs(c-100*distuv.UnitNormal.CDF(z)) > 0.006 { // two decimals, rounded
			t.Fatalf("row %v: centile %g for z %g", r, c, z)
		}
	}
	if stdout != "" || !strings.Contains(stderr, "growband: wrote") {
		t.Errorf("stdout %q, stderr %q", stdout, stderr)
	}
	// The z-distribution chart says it is weighted; titles name the stratum.
	svg, _ := os.ReadFile(filepath.Join(out, "zdist-boys.svg"))
	for _, want := range []string{"weighted by survey weights", "— boys", "a.csv"} {
		if !strings.Contains(string(svg), want) {
			t.Errorf("zdist-boys.svg lacks %q", want)
		}
	}
	svg, _ = os.ReadFile(filepath.Join(out, "refs-girls.svg"))
	if !strings.Contains(string(svg), "of ref.csv (bands)") || strings.Contains(string(svg), "Ref.csv") {
		t.Errorf("refs-girls.svg title does not name ref.csv as written")
	}

	// JSON to stdout: the reference, the caution and counts by reason.
	stdout, _, err = runIn("compare", "--ref", refPath, "--in", in, "--stratum-column", "sex", "--format", "json")
	if err != nil {
		t.Fatal(err)
	}
	var doc struct {
		Reference struct{ Name, Unit string }
		Caution   string
		Cohorts   []struct {
			Clustered bool
			NotScored []struct {
				Reason string
				N      int
			} `json:"not_scored"`
			Groups []struct {
				N      int
				Below2 struct {
					SE, Deff, NEff float64
				} `json:"below_minus2"`
			}
		}
		Unscored []struct{ Line int }
	}
	if err := json.Unmarshal([]byte(stdout), &doc); err != nil {
		t.Fatalf("%v\n%s", err, stdout)
	}
	if len(doc.Cohorts) != 1 || doc.Cohorts[0].Clustered || len(doc.Cohorts[0].Groups) != 3 || len(doc.Unscored) != 2 ||
		doc.Reference.Name != "ref.csv" || doc.Reference.Unit != "kg" || doc.Caution != curve.Caution ||
		len(doc.Cohorts[0].NotScored) != 2 {
		t.Errorf("json %+v", doc)
	}
	if b := doc.Cohorts[0].Groups[2].Below2; !(b.SE > 0) || b.Deff != 1 {
		t.Errorf("share below -2 %+v: want an SE and deff 1 for plain rows", b)
	}
}

func TestCompareAgainstRefAlone(t *testing.T) {
	_, refPath, _, _ := compareFixture(t)
	stdout, stderr, err := runIn("compare", "--ref", refPath, "--against-ref", refPath)
	if err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	lines := strings.Split(strings.TrimSpace(stdout), "\n")
	if !strings.HasPrefix(lines[0], "reference,against,stratum,centile,age,value,z,diff_z") || len(lines) < 100 {
		t.Errorf("stdout: %d lines, first %q", len(lines), lines[0])
	}
}

func TestCompareUsage(t *testing.T) {
	stdout, _, err := runIn("compare", "-h")
	if exitCode(err) != 0 || !strings.Contains(stdout, "usage: growband compare") || !strings.Contains(stdout, "-subject-column") {
		t.Errorf("-h: %v\n%s", err, stdout)
	}
	for _, args := range [][]string{
		{},
		{"--ref", "r.json"},
		{"--ref", "r.json", "--in", "a.csv", "--format", "xml"},
		{"--ref", "r.json", "--in", "a.csv", "--bands", "0:60:-6"},
		{"--ref", "r.json", "--in", "a.csv", "--bands", "6,0"},
		{"--ref", "r.json", "--in", "a.csv", "--limit", "-1"},
		{"--ref", "r.json", "--in", "a.csv", "extra"},
		{"--ref", "r.json", "--against-ref", "b.json", "--vs", "b.csv"},
		{"--nonsense"},
	} {
		if _, _, err := runIn(append([]string{"compare"}, args...)...); exitCode(err) != 2 {
			t.Errorf("%v: %v, want a usage error", args, err)
		}
	}
	// A missing file is a failure, not a usage error.
	if _, _, err := runIn("compare", "--ref", "/nonexistent.json", "--in", "a.csv"); exitCode(err) != 1 {
		t.Errorf("missing file: %v", err)
	}
}

func TestCompareLimitZeroKeepsAll(t *testing.T) {
	// --limit means the same in check and compare: 0 keeps every row.
	dir, refPath, _, _ := compareFixture(t)
	in := filepath.Join(dir, "far.csv")
	os.WriteFile(in, []byte("sex,age,weight\nboys,12,9.6\nboys,12,9.0\nboys,12,60\n"), 0o644) // 60 kg at 12 months: z far above 5
	for _, c := range []struct {
		limit string
		n     string
	}{{"5", "2"}, {"0", "3"}} {
		stdout, _, err := runIn("compare", "--ref", refPath, "--in", in, "--limit", c.limit)
		if err != nil {
			t.Fatal(err)
		}
		rows, _ := csv.NewReader(strings.NewReader(stdout)).ReadAll()
		last := rows[len(rows)-1]
		if last[columnIndex(rows[0])["n"]] != c.n {
			t.Errorf("--limit %s: n %s, want %s", c.limit, last[columnIndex(rows[0])["n"]], c.n)
		}
	}
}

func TestParseBands(t *testing.T) {
	cases := []struct {
		in   string
		want []float64
	}{
		{"0:60:6", []float64{0, 6, 12, 18, 24, 30, 36, 42, 48, 54, 60}},
		{"0:10:4", []float64{0, 4, 8, 10}}, // shorter last band
		{"0:0.3:0.1", []float64{0, 0.1, 0.2, 0.3}},
		{"0, 6,24", []float64{0, 6, 24}},
	}
	for _, c := range cases {
		got, err := parseBands(c.in)
		if err != nil || fmt.Sprint(got) != fmt.Sprint(c.want) {
			t.Errorf("%q: %v %v, want %v", c.in, got, err, c.want)
		}
	}
	for _, bad := range []string{"6,0", "1", "0:60", "0:60:0", "a,b", "0:1e300:1e-300"} {
		if _, err := parseBands(bad); err == nil {
			t.Errorf("%q: no error", bad)
		}
	}
}

func FuzzParseBands(f *testing.F) {
	for _, s := range []string{"0:60:6", "0,6,12", "1:0:1", "0:1e300:1e-300", ":", "a,b"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		b, err := parseBands(s)
		if err == nil && len(b) > maxBands+2 {
			t.Fatalf("%q: %d edges", s, len(b))
		}
	})
}

func readCSVFile(t *testing.T, path string) [][]string {
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

func columnIndex(header []string) map[string]int {
	m := map[string]int{}
	for i, h := range header {
		m[h] = i
	}
	return m
}
