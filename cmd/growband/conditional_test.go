package main

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// TestBuildAndScoreConditional builds the fixture again with a [conditional]
// table and scores its own file with --subject-column: every row comes back,
// later visits at a modelled gap carry cond_z and cond_centile (the centile
// 100 Phi(cond_z) to the printed digits), and the others carry a reason.
func TestBuildAndScoreConditional(t *testing.T) {
	f := builtFixture(t)
	dir := t.TempDir()
	data, err := os.ReadFile(filepath.Join(f.dir, "data.csv"))
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "data.csv"), data, 0o644); err != nil {
		t.Fatal(err)
	}
	// Few knots: the fixture's 700 children give a few hundred pairs.
	plan := fixturePlan + "\n[conditional]\nage_knots = 1\nz_knots = 1\n"
	if err := os.WriteFile(filepath.Join(dir, "plan.toml"), []byte(plan), 0o644); err != nil {
		t.Fatal(err)
	}
	summary := mustGB(t, dir, "build", "plan.toml", "--out", "out", "--quiet")
	if !strings.Contains(summary, "conditional model, female:") || !strings.Contains(summary, "conditional model, male:") {
		t.Errorf("summary does not report the conditional models:\n%s", summary)
	}
	for _, name := range []string{"conditional-female.svg", "conditional-male.png"} {
		if _, err := os.Stat(filepath.Join(dir, "out", name)); err != nil {
			t.Errorf("build: %v", err)
		}
	}
	// The report shows the conditional charts of both strata.
	rep := readFile(t, filepath.Join(dir, "out", "report.html"))
	if !strings.Contains(rep, "Growth since the previous visit") || strings.Count(rep, "<svg") < 6 {
		t.Errorf("report lacks the conditional charts (%d inline SVGs)", strings.Count(rep, "<svg"))
	}
	// conditional.csv: the conditional centiles of the next measurement
	// increase across its columns (non-crossing) on every row.
	head, rows := readCSV(t, readFile(t, filepath.Join(dir, "out", "conditional.csv")))
	if len(head) != 13 || head[6] != "next_c5" || len(rows) == 0 {
		t.Fatalf("conditional.csv: %v, %d rows", head, len(rows))
	}
	for _, r := range rows {
		for k := 7; k < len(r); k++ {
			a, _ := strconv.ParseFloat(r[k-1], 64)
			b, _ := strconv.ParseFloat(r[k], 64)
			if r[k] != "" && r[k-1] != "" && !(b >= a) {
				t.Errorf("conditional.csv row %v: centiles decrease", r)
			}
		}
	}
	out := mustGB(t, dir, "score", "--ref", "out/reference.json", "--in", "data.csv", "--subject-column", "child",
		"--stratum-column", "sex", "--stratum-codes", "F=female,M=male,1=male,2=female")
	head, rows = readCSV(t, out)
	if got := strings.Join(head, ","); got != "child,sex,age,weight,z,centile,cond_z,cond_centile,flag" {
		t.Fatalf("header %s", got)
	}
	if len(rows) != f.rows {
		t.Fatalf("%d rows back, %d in", len(rows), f.rows)
	}
	scored, first := 0, 0
	for _, r := range rows {
		cz, cc, flag := r[6], r[7], r[8]
		switch {
		case cz != "":
			scored++
			z, err1 := strconv.ParseFloat(cz, 64)
			c, err2 := strconv.ParseFloat(cc, 64)
			if err1 != nil || err2 != nil || (z < 0) != (c < 50) {
				t.Errorf("row %v: cond_z %q, cond_centile %q", r, cz, cc)
			}
		case strings.Contains(flag, "no cond_z: no earlier visit of the child"):
			first++
		case !strings.Contains(flag, "no cond_z") && r[4] != "":
			t.Errorf("row %v: no conditional score and no reason", r)
		}
	}
	t.Logf("%d rows: %d with a conditional score, %d first visits", len(rows), scored, first)
	if scored == 0 || first == 0 {
		t.Errorf("%d conditional scores, %d first visits", scored, first)
	}
	// compare reports growth faltering and, with --vs, the centile
	// differences (here of the file with itself: zero at every centile).
	mustGB(t, dir, "compare", "--ref", "out/reference.json", "--in", "data.csv", "--vs", "data.csv",
		"--subject-column", "child", "--stratum-column", "sex", "--stratum-codes", "F=female,M=male,1=male,2=female", "--out", "cmp")
	for _, name := range []string{"growth.csv", "centile-diff.csv", "centile-diff-female.svg", "centile-diff-male.svg"} {
		if _, err := os.Stat(filepath.Join(dir, "cmp", name)); err != nil {
			t.Errorf("compare --out: %v", err)
		}
	}
	head, rows = readCSV(t, readFile(t, filepath.Join(dir, "cmp", "centile-diff.csv")))
	if len(rows) != 14 || head[4] != "diff" {
		t.Fatalf("centile-diff.csv: %v, %d rows", head, len(rows))
	}
	for _, r := range rows {
		// Every row appears twice, so 0 is an optimal difference; 1e-9 kg
		// allows the rounding of the vertex's linear solve (common practice).
		if d, err := strconv.ParseFloat(r[4], 64); err != nil || math.Abs(d) > 1e-9 || !strings.Contains(r[9], "bootstrap over subjects") {
			t.Errorf("centile-diff.csv row %v: a cohort against itself differs", r)
		}
	}
	head, rows = readCSV(t, readFile(t, filepath.Join(dir, "cmp", "growth.csv")))
	if len(rows) != 3 || rows[2][0] != "overall" {
		t.Errorf("growth.csv: %v %v", head, rows)
	}
	// Without a conditional model the flag is refused with a clear message.
	_, errOut, code := gb(t, dir, "score", "--ref", f.ref(), "--in", "data.csv", "--subject-column", "child",
		"--stratum-column", "sex", "--stratum-codes", "F=female,M=male,1=male,2=female")
	if code != 1 || !strings.Contains(errOut, "no conditional model") {
		t.Errorf("score against a reference without the model: exit %d, %s", code, errOut)
	}
}

func readFile(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// TestBuildCovariates builds the fixture with two added columns from a
// stated model: "site" is a for even and b for odd children, and every
// weight of a site-b child is raised by 0.4 kg, so the true site=b effect
// is 0.4 kg at every centile; "noise" is a standard normal draw with no
// effect. With standard errors by the bootstrap over children (visits of a
// child are dependent), each estimate must lie within four standard errors
// of the truth (a false alarm about once in 16,000 per estimate, common
// practice), and a row with a missing covariate is listed in
// covariates-unused.csv.
func TestBuildCovariates(t *testing.T) {
	f := builtFixture(t)
	dir := t.TempDir()
	data, err := os.ReadFile(filepath.Join(f.dir, "data.csv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(data)), "\n")
	var b strings.Builder
	b.WriteString(lines[0] + ",site,noise\n")
	rng := rand.New(rand.NewPCG(5, 6))
	for k, l := range lines[1:] {
		cells := strings.Split(l, ",")
		site := "a"
		if n, err := strconv.Atoi(strings.TrimLeft(cells[0], "TWX")); err == nil && n%2 == 1 {
			site = "b"
			if w, err := strconv.ParseFloat(cells[3], 64); err == nil && w < 100 {
				cells[3] = strconv.FormatFloat(w+0.4, 'f', 3, 64)
			}
		}
		noise := strconv.FormatFloat(rng.NormFloat64(), 'f', 3, 64)
		if k == 5 {
			noise = "NA"
		}
		fmt.Fprintf(&b, "%s,%s,%s\n", strings.Join(cells, ","), site, noise)
	}
	if err := os.WriteFile(filepath.Join(dir, "data.csv"), []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	plan := fixturePlan + "\n[covariates]\nnumeric = [\"noise\"]\ncategorical = [\"site\"]\nmethod = \"bootstrap\"\n"
	if err := os.WriteFile(filepath.Join(dir, "plan.toml"), []byte(plan), 0o644); err != nil {
		t.Fatal(err)
	}
	mustGB(t, dir, "build", "plan.toml", "--out", "out", "--quiet")
	head, rows := readCSV(t, readFile(t, filepath.Join(dir, "out", "covariates.csv")))
	if strings.Join(head, ",") != "stratum,centile,term,estimate,se,lo95,hi95,p,n,method" {
		t.Fatalf("header %v", head)
	}
	if len(rows) != 2*7*2 {
		t.Fatalf("%d rows, want 2 strata x 7 centiles x 2 terms", len(rows))
	}
	for _, r := range rows {
		est, _ := strconv.ParseFloat(r[3], 64)
		se, _ := strconv.ParseFloat(r[4], 64)
		truth := map[string]float64{"site=b": 0.4, "noise": 0}[r[2]]
		if !(se > 0) || math.Abs(est-truth) > 4*se || r[9] != "bootstrap over subjects" {
			t.Errorf("row %v: truth %g", r, truth)
		}
	}
	_, rows = readCSV(t, readFile(t, filepath.Join(dir, "out", "covariates-unused.csv")))
	if len(rows) != 1 || rows[0][1] != "noise: missing" {
		t.Errorf("covariates-unused.csv: %v", rows)
	}
}
