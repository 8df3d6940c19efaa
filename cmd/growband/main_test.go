package main

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"growband/examples/district"
)

// binary is the growband command built once for the tests.
var binary string

func TestMain(m *testing.M) {
	dir, err := os.MkdirTemp("", "growband-test")
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	binary = filepath.Join(dir, "growband")
	if out, err := exec.Command("go", "build", "-o", binary, ".").CombinedOutput(); err != nil {
		fmt.Fprintf(os.Stderr, "go build: %v\n%s", err, out)
		os.RemoveAll(dir)
		os.Exit(1)
	}
	code := m.Run()
	os.RemoveAll(dir)
	if fix.dir != "" {
		os.RemoveAll(fix.dir)
	}
	os.Exit(code)
}

// gb runs the binary in dir and returns its output and exit status.
func gb(t *testing.T, dir string, args ...string) (stdout, stderr string, code int) {
	t.Helper()
	cmd := exec.Command(binary, args...)
	cmd.Dir = dir
	var o, e bytes.Buffer
	cmd.Stdout, cmd.Stderr = &o, &e
	err := cmd.Run()
	var ee *exec.ExitError
	switch {
	case err == nil:
	case errors.As(err, &ee):
		code = ee.ExitCode()
	default:
		t.Fatalf("running growband %v: %v", args, err)
	}
	if strings.Contains(e.String(), "internal error") {
		t.Fatalf("growband %v: internal error:\n%s", args, e.String())
	}
	return o.String(), e.String(), code
}

// mustGB runs the binary and fails the test unless it exits 0.
func mustGB(t *testing.T, dir string, args ...string) string {
	t.Helper()
	out, errOut, code := gb(t, dir, args...)
	if code != 0 {
		t.Fatalf("growband %v: exit %d\nstderr:\n%s", args, code, errOut)
	}
	return out
}

// fixtureChildren is the number of demo-survey children in the test data:
// about 1,100 rows, two strata, enough for a fit to settle in a second or
// two.
const fixtureChildren = 700

// The test data: the clean weight rows of the first fixtureChildren
// children of the demo survey (sex coded F/M or 1/2 as there), plus three
// rows with one fault each, so every exclusion path of a build is used.
const fixturePlan = `[input]
file = "data.csv"
age = "age"
value = "weight"
stratum = "sex"
subject = "child"

[input.stratum_codes]
F = "female"
2 = "female"
M = "male"
1 = "male"

[measure]
name = "weight"
unit = "kg"
age_unit = "months"

[fit]
accept_edge_problems = true

[table]
from = 0
to = 60
step = 6

[output]
charts = ["svg", "png"]
points = true
sd_curves = true
`

// Rows appended to the fixture: a missing value, a value that is not a
// number, and a decimal point lost (12.4 kg written 124) that only the
// first-pass |z| screen catches, since 124 kg is inside the default
// plausible range.
const fixtureFaults = "X001,F,12.00,\nX002,M,12.00,12kg\nX003,F,12.00,124\n"

type fixture struct {
	dir     string // holds data.csv, plan.toml and out/
	summary string // stdout of the build
	rows    int    // data rows in data.csv
	err     error
}

var (
	fixOnce sync.Once
	fix     fixture
)

// built returns the fixture, building it on first use.
func builtFixture(t *testing.T) *fixture {
	t.Helper()
	fixOnce.Do(func() {
		dir, err := os.MkdirTemp("", "growband-fixture")
		if err != nil {
			fix.err = err
			return
		}
		fix.dir = dir
		var b strings.Builder
		b.WriteString("child,sex,age,weight\n")
		seen := map[string]bool{}
		for _, r := range district.Generate() {
			if !seen[r.ChildID] {
				if len(seen) == fixtureChildren {
					break
				}
				seen[r.ChildID] = true
			}
			if r.Clean(district.Weight) {
				fmt.Fprintf(&b, "%s,%s,%.2f,%s\n", r.ChildID, r.SexCode, r.AgeMonths, r.WeightCell)
				fix.rows++
			}
		}
		b.WriteString(fixtureFaults)
		fix.rows += 3
		if err := os.WriteFile(filepath.Join(dir, "data.csv"), []byte(b.String()), 0o644); err != nil {
			fix.err = err
			return
		}
		if err := os.WriteFile(filepath.Join(dir, "plan.toml"), []byte(fixturePlan), 0o644); err != nil {
			fix.err = err
			return
		}
		cmd := exec.Command(binary, "build", "plan.toml", "--out", "out", "--quiet")
		cmd.Dir = dir
		var o, e bytes.Buffer
		cmd.Stdout, cmd.Stderr = &o, &e
		if err := cmd.Run(); err != nil {
			fix.err = fmt.Errorf("build: %v\n%s", err, e.String())
		}
		fix.summary = o.String()
	})
	if fix.err != nil {
		t.Fatal(fix.err)
	}
	return &fix
}

func (f *fixture) ref() string { return filepath.Join(f.dir, "out", "reference.json") }

// readCSV parses CSV text into a header and records.
func readCSV(t *testing.T, text string) ([]string, [][]string) {
	t.Helper()
	recs, err := csv.NewReader(strings.NewReader(text)).ReadAll()
	if err != nil {
		t.Fatalf("output is not CSV: %v\n%s", err, text)
	}
	if len(recs) == 0 {
		t.Fatalf("empty CSV output")
	}
	return recs[0], recs[1:]
}

func column(t *testing.T, header []string, name string) int {
	t.Helper()
	for i, h := range header {
		if h == name {
			return i
		}
	}
	t.Fatalf("no column %q in %v", name, header)
	return -1
}

func summaryCount(t *testing.T, summary, label string) int {
	t.Helper()
	m := regexp.MustCompile(`(?m)^\s*` + regexp.QuoteMeta(label) + `\s+(\d+)\s*$`).FindStringSubmatch(summary)
	if m == nil {
		t.Fatalf("summary has no %q line:\n%s", label, summary)
	}
	n, _ := strconv.Atoi(m[1])
	return n
}

func TestBuild(t *testing.T) {
	f := builtFixture(t)
	read := summaryCount(t, f.summary, "rows read")
	used := summaryCount(t, f.summary, "rows used")
	excl := summaryCount(t, f.summary, "rows excluded")
	if read != f.rows || used+excl != read {
		t.Errorf("rows read %d (file has %d), used %d + excluded %d", read, f.rows, used, excl)
	}
	// Each planted fault is one row with one reason. The first-pass screen
	// may also catch a few genuine extremes near the ends of the age range,
	// where about 550 rows a stratum pin the tails down loosely; more than
	// 1% of the rows would mean the screen is broken (common practice:
	// |z| > 5 flags far fewer than that).
	for _, reason := range []string{"missing value", "not a number"} {
		if n := summaryCount(t, f.summary, reason); n != 1 {
			t.Errorf("%s: %d rows, want the 1 planted", reason, n)
		}
	}
	impl := summaryCount(t, f.summary, "implausible against a first-pass fit")
	if impl < 1 || impl > f.rows/100 {
		t.Errorf("%d rows implausible, want the 1 planted and at most %d", impl, f.rows/100)
	}
	if excl != 2+impl {
		t.Errorf("%d rows excluded, want 2 + %d implausible", excl, impl)
	}
	for _, name := range []string{"female", "male"} {
		if !regexp.MustCompile(`(?m)^` + name + `\s+\d+\s`).MatchString(f.summary) {
			t.Errorf("summary lacks stratum %s:\n%s", name, f.summary)
		}
	}
	out := filepath.Join(f.dir, "out")
	for _, name := range []string{"reference.json", "centiles.csv", "excluded.csv", "report.html",
		"chart-female.svg", "chart-female.png", "chart-male.svg", "chart-male.png"} {
		if st, err := os.Stat(filepath.Join(out, name)); err != nil || st.Size() == 0 {
			t.Errorf("%s not written: %v", name, err)
		}
		if !strings.Contains(f.summary, name) {
			t.Errorf("summary does not list %s", name)
		}
	}
	if _, err := os.Stat(filepath.Join(out, "chart-female.pdf")); err == nil {
		t.Errorf("PDF written although the plan does not ask for it")
	}

	// excluded.csv: line, reason, then the original columns.
	b, _ := os.ReadFile(filepath.Join(out, "excluded.csv"))
	head, recs := readCSV(t, string(b))
	if strings.Join(head, ",") != "line,reason,child,sex,age,weight" || len(recs) != excl {
		t.Errorf("excluded.csv: header %v, %d rows", head, len(recs))
	}
	found := false
	for _, r := range recs {
		if r[2] == "X003" && strings.HasPrefix(r[1], "implausible against a first-pass fit (z = ") {
			found = true
		}
	}
	if !found {
		t.Errorf("excluded.csv does not list X003 as implausible:\n%s", b)
	}

	// centiles.csv on the plan's grid 0:60:6, inside each fitted range.
	b, _ = os.ReadFile(filepath.Join(out, "centiles.csv"))
	head, recs = readCSV(t, string(b))
	if got := strings.Join(head, ","); got != "stratum,age,3,10,25,50,75,90,97,L,M,S" {
		t.Errorf("centiles.csv header %s", got)
	}
	for _, r := range recs {
		age, _ := strconv.ParseFloat(r[1], 64)
		if math.Mod(age, 6) != 0 {
			t.Errorf("centiles.csv age %v not on the plan's grid", age)
		}
		checkIncreasing(t, r[2:9], "centiles.csv "+r[0]+" "+r[1])
	}
	if len(recs) < 16 {
		t.Errorf("centiles.csv has %d rows, want most of 2 strata x 11 ages", len(recs))
	}

	// The report stands alone: inline SVG and CSS, nothing fetched.
	b, _ = os.ReadFile(filepath.Join(out, "report.html"))
	rep := string(b)
	if n := strings.Count(rep, "<svg"); n < 4 {
		t.Errorf("report has %d inline SVGs, want 2 charts and 2 worm plots", n)
	}
	for _, bad := range []string{"<script", "<link", "src=", "<?xml", "@import"} {
		if strings.Contains(rep, bad) {
			t.Errorf("report contains %q: not self-contained", bad)
		}
	}
	for _, want := range []string{"Q-tests", "implausible against a first-pass fit", "This reference describes the sample",
		"Schwarz criterion", "Sampling weights were not used", "effective df (median)", "Smoothness values tried: female",
		"Expected normal score", "Observed minus expected z", "sd_curves = true",
		"Age scales tried", "was chosen from the data", ">+2 SD<", ">−2 SD<"} {
		if !strings.Contains(rep, want) {
			t.Errorf("report lacks %q", want)
		}
	}
	// The criterion is written out, never shown as its plan key.
	for _, bad := range []string{">sic<", "Unit normal quantile", ">Deviation<"} {
		if strings.Contains(rep, bad) {
			t.Errorf("report shows %q", bad)
		}
	}
	if !strings.Contains(f.summary, "Schwarz criterion") {
		t.Errorf("summary does not name the criterion in words:\n%s", f.summary)
	}
	if n := strings.Count(rep, ">chosen scale<"); n != 1 {
		t.Errorf("report marks %d chosen age scales, want one", n)
	}
	if n := strings.Count(rep, "<td class=\"l\">chosen</td>"); n != 2 {
		t.Errorf("report marks %d chosen smoothness values, want one per stratum", n)
	}
}

func checkIncreasing(t *testing.T, cells []string, where string) {
	t.Helper()
	prev := math.Inf(-1)
	for _, c := range cells {
		v, err := strconv.ParseFloat(c, 64)
		if err != nil || !(v >= prev) {
			t.Errorf("%s: centiles %v not increasing", where, cells)
			return
		}
		prev = v
	}
}

// TestRoundTrip scores the training rows against the reference built from
// them: the share below each chart centile must be near nominal. Tolerance:
// 4 binomial standard errors sqrt(p(1-p)/n) (common practice for a check
// that should essentially never fail by chance); in-sample quantile
// regression shares are in fact much closer than that.
func TestRoundTrip(t *testing.T) {
	f := builtFixture(t)
	out := mustGB(t, f.dir, "score", "--ref", f.ref(), "--in", "data.csv",
		"--value-column", "weight", "--stratum-column", "sex", "--stratum-codes", "F=female,2=female,M=male,1=male")
	head, recs := readCSV(t, out)
	zc, child := column(t, head, "z"), column(t, head, "child")
	if len(recs) != f.rows {
		t.Fatalf("%d rows echoed, input has %d", len(recs), f.rows)
	}
	var z []float64
	for _, r := range recs {
		if strings.HasPrefix(r[child], "X") {
			continue // the planted faults, excluded from the fit
		}
		v, err := strconv.ParseFloat(r[zc], 64)
		if err != nil {
			t.Fatalf("training row not scored: %v", r)
		}
		z = append(z, v)
	}
	n := float64(len(z))
	norm := distuv.UnitNormal
	for _, p := range []float64{0.03, 0.10, 0.25, 0.50, 0.75, 0.90, 0.97} {
		zp := norm.Quantile(p)
		below := 0
		for _, v := range z {
			if v < zp {
				below++
			}
		}
		share := float64(below) / n
		if se := math.Sqrt(p * (1 - p) / n); math.Abs(share-p) > 4*se {
			t.Errorf("centile %g: share below %.4f, want %.2f ± %.4f", 100*p, share, p, 4*se)
		}
	}
}

func TestTable(t *testing.T) {
	f := builtFixture(t)
	out := mustGB(t, f.dir, "table", "--ref", f.ref(), "--ages", "6:24:6", "--centiles", "3,50,97")
	head, recs := readCSV(t, out)
	if got := strings.Join(head, ","); got != "stratum,age,3,50,97,L,M,S" {
		t.Errorf("header %s", got)
	}
	if len(recs) != 2*4 {
		t.Errorf("%d rows, want 2 strata x 4 ages", len(recs))
	}
	for _, r := range recs {
		checkIncreasing(t, r[2:5], r[0]+" "+r[1])
		// The LMS median sits near the fitted median (six significant digits
		// printed; within 5% is a loose shape check, common practice).
		q50, _ := strconv.ParseFloat(r[3], 64)
		m, _ := strconv.ParseFloat(r[6], 64)
		if math.Abs(m-q50) > 0.05*q50 {
			t.Errorf("%s %s: LMS M %v far from the median %v", r[0], r[1], m, q50)
		}
	}

	// Exact identity: a table value scores back to its centile
	// (Score(Quantile(tau)) = tau), up to the six printed digits.
	for _, r := range recs {
		for j, p := range []float64{3, 50, 97} {
			cs := mustGB(t, f.dir, "score", "--ref", f.ref(), "--age", r[1], "--value", r[2+j], "--stratum", r[0])
			h, rr := readCSV(t, cs)
			c, _ := strconv.ParseFloat(rr[0][column(t, h, "centile")], 64)
			if math.Abs(c-p) > 0.02 {
				t.Errorf("%s age %s: centile-%g value %s scores at centile %v", r[0], r[1], p, r[2+j], c)
			}
		}
		break // one stratum-age is enough to check the identity end to end
	}

	// Velocity: the slope of each centile curve, named so, without L, M,
	// S; weight rises in early childhood.
	out = mustGB(t, f.dir, "table", "--ref", f.ref(), "--ages", "6,12", "--velocity", "--stratum", "female", "--centiles", "3,50")
	head, recs = readCSV(t, out)
	if got := strings.Join(head, ","); got != "stratum,age,slope of centile-3 curve (kg/month),slope of centile-50 curve (kg/month)" || len(recs) != 2 {
		t.Errorf("velocity table header %s, %d rows", got, len(recs))
	}
	for _, r := range recs {
		for _, c := range r[2:] {
			if v, _ := strconv.ParseFloat(c, 64); !(v > 0) {
				t.Errorf("velocity %s at age %s not positive", c, r[1])
			}
		}
	}

	// Ages from a file, JSON output.
	agesFile := filepath.Join(f.dir, "ages.txt")
	os.WriteFile(agesFile, []byte("# ages\n3\n9, 15\n"), 0o644)
	out = mustGB(t, f.dir, "table", "--ref", f.ref(), "--ages-file", agesFile, "--format", "json", "--stratum", "male")
	var doc struct {
		Kind     string
		Centiles []float64
		Rows     []struct {
			Stratum string
			Age     float64
			Values  []float64
			M       *float64
		}
		Caution string
	}
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatalf("table JSON: %v\n%s", err, out)
	}
	if doc.Kind != "centiles" || len(doc.Rows) != 3 || doc.Rows[1].Age != 9 || len(doc.Rows[0].Values) != 7 || doc.Rows[0].M == nil || doc.Caution == "" {
		t.Errorf("table JSON: %+v", doc)
	}

	// Ages outside the fitted range are left out with a message, not an error.
	out, errOut, code := gb(t, f.dir, "table", "--ref", f.ref(), "--ages", "30,500", "--stratum", "male")
	if _, recs := readCSV(t, out); code != 0 || len(recs) != 1 || !strings.Contains(errOut, "outside the fitted range") {
		t.Errorf("age 500: exit %d, %d rows, stderr %q", code, len(recs), errOut)
	}
}

func TestScoreFile(t *testing.T) {
	f := builtFixture(t)
	in := filepath.Join(f.dir, "new.csv")
	// Line 2 scores, line 3 is outside the fitted age range, line 4 has a
	// missing value, line 5 an unknown stratum, line 6 lies far above every
	// centile (tail rule, implausible).
	os.WriteFile(in, []byte("id,stratum,age,weight\n"+
		"a,female,12,9.5\nb,male,400,12\nc,male,10,\nd,other,10,9\ne,male,12,60\n"), 0o644)
	out, errOut, code := gb(t, f.dir, "score", "--ref", f.ref(), "--in", in)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	head, recs := readCSV(t, out)
	if got := strings.Join(head, ","); got != "id,stratum,age,weight,z,centile,flag" || len(recs) != 5 {
		t.Fatalf("header %s, %d rows", got, len(recs))
	}
	want := []struct {
		scored bool
		flag   string
	}{
		{true, ""},
		{false, "age outside the reference's range"},
		{false, "missing value"},
		{false, "unknown stratum"},
		{true, "beyond-tail"},
	}
	for i, w := range want {
		r := recs[i]
		if (r[4] != "") != w.scored || !strings.Contains(r[6], w.flag) {
			t.Errorf("row %d: z %q flag %q; want scored %v, flag containing %q", i+2, r[4], r[6], w.scored, w.flag)
		}
	}
	if !strings.Contains(recs[4][6], "implausible") {
		t.Errorf("60 kg at 12 months: flag %q lacks implausible", recs[4][6])
	}
	if !strings.Contains(errOut, "2 of 5 rows scored") {
		t.Errorf("stderr %q", errOut)
	}

	// JSON: null z for an unscored row.
	out = mustGB(t, f.dir, "score", "--ref", f.ref(), "--in", in, "--format", "json")
	var doc struct {
		Rows []struct {
			Line int
			Z    *float64
			Flag string
		}
	}
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Rows) != 5 || doc.Rows[0].Z == nil || doc.Rows[1].Z != nil || doc.Rows[1].Line != 3 {
		t.Errorf("score JSON rows %+v", doc.Rows)
	}

	// Age from dates: 2024-01-01 to 2025-01-01 is 366 days = 12.025 months.
	dates := filepath.Join(f.dir, "dates.csv")
	os.WriteFile(dates, []byte("born,seen,kg\n2024-01-01,2025-01-01,9.5\n"), 0o644)
	a := mustGB(t, f.dir, "score", "--ref", f.ref(), "--in", dates, "--birth-column", "born", "--visit-column", "seen",
		"--value-column", "kg", "--stratum", "female")
	b := mustGB(t, f.dir, "score", "--ref", f.ref(), "--age", strconv.FormatFloat(366/(365.25/12), 'g', -1, 64), "--value", "9.5", "--stratum", "female")
	_, ra := readCSV(t, a)
	_, rb := readCSV(t, b)
	if ra[0][3] != rb[0][3] || ra[0][3] == "" {
		t.Errorf("z from dates %q, from the age %q", ra[0][3], rb[0][3])
	}
}

func TestChart(t *testing.T) {
	f := builtFixture(t)
	pts := filepath.Join(f.dir, "kids.csv")
	os.WriteFile(pts, []byte("child_id,age,weight\nk1,3,6.1\nk1,9,8.4\nk1,15,10.2\nk2,24,12.5\nk2,30,13.4\n"), 0o644)
	for _, name := range []string{"c.svg", "c.png", "c.pdf"} {
		path := filepath.Join(f.dir, name)
		mustGB(t, f.dir, "chart", "--ref", f.ref(), "--stratum", "male", "--points", pts, "--show-z", "--out", path)
		b, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		magic := map[string]string{"c.svg": "<?xml", "c.png": "\x89PNG", "c.pdf": "%PDF"}[name]
		if !bytes.HasPrefix(b, []byte(magic)) {
			t.Errorf("%s does not start with %q", name, magic)
		}
		if name == "c.svg" && !strings.Contains(string(b), "k1") {
			t.Errorf("chart SVG does not label child k1")
		}
	}
	// Part of the age range, with the curves at whole SD.
	part := filepath.Join(f.dir, "part.svg")
	mustGB(t, f.dir, "chart", "--ref", f.ref(), "--stratum", "male", "--ages", "0:24", "--sd-curves", "--out", part)
	b, _ := os.ReadFile(part)
	svg := string(b)
	for _, want := range []string{">+2 SD<", ">−2 SD<", ">24<", ">18<"} {
		if !strings.Contains(svg, want) {
			t.Errorf("chart --ages 0:24 --sd-curves lacks %q", want)
		}
	}
	if strings.Contains(svg, ">48<") {
		t.Errorf("chart --ages 0:24 has a tick at 48 months")
	}
	if _, _, code := gb(t, f.dir, "chart", "--ref", f.ref(), "--stratum", "male", "--ages", "24", "--out", part); code != 2 {
		t.Errorf("--ages 24: exit %d, want 2", code)
	}
	// Several strata and none chosen: bad usage.
	if _, errOut, code := gb(t, f.dir, "chart", "--ref", f.ref(), "--out", filepath.Join(f.dir, "x.svg")); code != 2 || !strings.Contains(errOut, "--stratum") {
		t.Errorf("no stratum: exit %d, %q", code, errOut)
	}
	if _, _, code := gb(t, f.dir, "chart", "--ref", f.ref(), "--stratum", "male", "--out", filepath.Join(f.dir, "x.gif")); code != 2 {
		t.Errorf("gif: exit %d, want 2", code)
	}
}

func TestCheck(t *testing.T) {
	f := builtFixture(t)
	wdir := filepath.Join(f.dir, "worms")
	out, errOut, code := gb(t, f.dir, "check", "--ref", f.ref(), "--in", "data.csv",
		"--value-column", "weight", "--stratum-column", "sex", "--stratum-codes", "F=female,2=female,M=male,1=male",
		"--bands", "0,12,24,36,48,60", "--out", wdir)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	for _, want := range []string{"coverage", "Q-tests", "female", "male", "variance", "kurtosis"} {
		if !strings.Contains(out, want) {
			t.Errorf("check output lacks %q:\n%s", want, out)
		}
	}
	// Five bands per stratum: ten coverage lines with a band "0–12".
	if n := strings.Count(out, "0–12 "); n != 2 {
		t.Errorf("%d lines for the band 0–12, want one per stratum:\n%s", n, out)
	}
	for _, name := range []string{"worm-female.svg", "worm-male.png"} {
		if _, err := os.Stat(filepath.Join(wdir, name)); err != nil {
			t.Errorf("%s not written: %v", name, err)
		}
	}
	// The planted 124 kg row is screened out as in build.
	if !strings.Contains(errOut, "left out as implausible") {
		t.Errorf("stderr does not report the implausible row: %q", errOut)
	}
	// The missing and non-numeric planted rows are reported, not fatal.
	if !strings.Contains(errOut, "2 of") {
		t.Errorf("stderr does not report the unreadable rows: %q", errOut)
	}
}

// TestBadInput: each malformed input gives its message and exit code.
func TestBadInput(t *testing.T) {
	f := builtFixture(t)
	dir := t.TempDir()
	write := func(name, text string) string {
		p := filepath.Join(dir, name)
		os.WriteFile(p, []byte(text), 0o644)
		return p
	}
	data := write("d.csv", "child,sex,age,weight\na,F,1,4\n")
	unknownKey := write("unknown.toml", "[input]\nfile = \"d.csv\"\nage = \"age\"\nvalue = \"weight\"\n\n[fit]\nknot = 4\n")
	noColumn := write("nocol.toml", "[input]\nfile = \"d.csv\"\nage = \"age\"\nvalue = \"weight_kg\"\n")
	noFile := write("nofile.toml", "[input]\nfile = \"absent.csv\"\nage = \"age\"\nvalue = \"weight\"\n")
	notRef := write("notref.json", "{\"hello\": 1}\n")
	_ = data
	cases := []struct {
		name string
		args []string
		code int
		msg  string
	}{
		{"no command", nil, 2, "no command given"},
		{"unknown command", []string{"frobnicate"}, 2, `unknown command "frobnicate"`},
		{"bad flag", []string{"table", "--ref", f.ref(), "--colour", "red"}, 2, "flag provided but not defined: -colour"},
		{"bad flag value", []string{"table", "--ref", f.ref(), "--ages", "1:x:2"}, 2, `"x"`},
		{"bad format", []string{"score", "--ref", f.ref(), "--in", data, "--format", "xml"}, 2, "--format"},
		{"missing --ref", []string{"table"}, 2, "--ref FILE is required"},
		{"plan missing", []string{"build", filepath.Join(dir, "absent.toml")}, 1, "absent.toml"},
		{"two plans", []string{"build", "a.toml", "b.toml"}, 2, "want one plan file"},
		{"unknown plan key", []string{"build", unknownKey}, 1, `unknown.toml:7: unknown key "fit.knot" (did you mean "fit.knots"?)`},
		{"missing column", []string{"build", noColumn}, 1, `d.csv:1: column "weight_kg" not in header (have: child, sex, age, weight)`},
		{"data file missing", []string{"build", noFile}, 1, "absent.csv"},
		{"reference missing", []string{"table", "--ref", filepath.Join(dir, "none.json")}, 1, "none.json does not exist"},
		{"not a reference", []string{"table", "--ref", notRef}, 1, "notref.json"},
		{"score column missing", []string{"score", "--ref", f.ref(), "--in", data, "--value-column", "kg", "--stratum", "female"}, 1, `d.csv:1: column "kg" not in header`},
		{"score unknown stratum", []string{"score", "--ref", f.ref(), "--age", "3", "--value", "5", "--stratum", "other"}, 1, "unknown stratum"},
		{"score out of range", []string{"score", "--ref", f.ref(), "--age", "300", "--value", "5", "--stratum", "male"}, 1, "age outside the reference's range"},
		{"bad bands", []string{"check", "--ref", f.ref(), "--in", data, "--bands", "3,1"}, 2, "--bands: edges must increase"},
		{"score half single", []string{"score", "--ref", f.ref(), "--age", "3"}, 2, "--age and --value go together"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, errOut, code := gb(t, dir, c.args...)
			if code != c.code {
				t.Errorf("exit %d, want %d; stderr:\n%s", code, c.code, errOut)
			}
			if !strings.Contains(errOut, c.msg) {
				t.Errorf("stderr lacks %q:\n%s", c.msg, errOut)
			}
			if !strings.HasPrefix(errOut, "growband: ") && c.args != nil {
				t.Errorf("stderr not prefixed \"growband: \": %q", errOut)
			}
		})
	}
}

// TestHelp: every subcommand documents itself on -h, exit 0, to stdout.
func TestHelp(t *testing.T) {
	flags := map[string][]string{
		"build": {"-out", "-quiet"},
		"demo":  {"-out", "-measure", "-half"},
		"table": {"-ref", "-ages", "-ages-file", "-centiles", "-stratum", "-format", "-velocity"},
		"score": {"-ref", "-in", "-age", "-value", "-stratum", "-format", "-age-column", "-birth-column", "-visit-column", "-value-column", "-stratum-column"},
		"chart": {"-ref", "-points", "-stratum", "-out", "-subject-column", "-ages", "-sd-curves"},
		"check": {"-ref", "-in", "-out", "-bands"},
	}
	for cmd, fl := range flags {
		out, _, code := gb(t, "", cmd, "-h")
		if code != 0 || !strings.HasPrefix(out, "usage: growband "+cmd) {
			t.Errorf("%s -h: exit %d, output %q", cmd, code, out)
		}
		for _, f := range fl {
			if !regexp.MustCompile(`(?m)^\s+` + f + `\b.*\n\s+\S`).MatchString(out) {
				t.Errorf("%s -h: flag %s missing or without help", cmd, f)
			}
		}
	}
	if out, _, code := gb(t, "", "help"); code != 0 || !strings.Contains(out, "Commands:") {
		t.Errorf("help: exit %d, %q", code, out)
	}
}

// TestDemo runs the demo as a user would and checks what it writes.
func TestDemo(t *testing.T) {
	dir := t.TempDir()
	out, errOut, code := gb(t, dir, "demo", "--quiet")
	if code != 0 {
		t.Fatalf("demo: exit %d\n%s", code, errOut)
	}
	for _, name := range []string{"survey.csv", "plan.toml", "reference.json", "centiles.csv", "excluded.csv",
		"report.html", "chart-female.svg", "chart-female.png", "chart-male.svg", "chart-male.png"} {
		if _, err := os.Stat(filepath.Join(dir, "growband-demo", name)); err != nil {
			t.Errorf("demo did not write %s", name)
		}
	}
	read := summaryCount(t, out, "rows read")
	used := summaryCount(t, out, "rows used")
	if excl := summaryCount(t, out, "rows excluded"); used+excl != read {
		t.Errorf("demo: used %d + excluded %d != read %d", used, excl, read)
	}
	// The survey's planted errors (examples/district doc.go): 3 duplicates,
	// 3 dates swapped (negative ages), 3 weights in grams; all such children
	// are kept in the demo sample.
	for _, reason := range []string{"duplicate of an earlier row", "age outside the plausible range", "value outside the plausible range"} {
		if n := summaryCount(t, out, reason); n != 3 {
			t.Errorf("demo: %s %d, want the 3 planted", reason, n)
		}
	}
	if !strings.Contains(out, "example children") || !strings.Contains(out, "Highmoor Mobile Team") {
		t.Errorf("demo output lacks the example children:\n%s", out)
	}
}
