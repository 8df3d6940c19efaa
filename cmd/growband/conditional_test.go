package main

import (
	"math"
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
	out := mustGB(t, dir, "score", "--ref", "out/reference.json", "--in", "data.csv", "--subject-column", "child",
		"--stratum-column", "sex", "--stratum-codes", "F=female,M=male,1=male,2=female")
	head, rows := readCSV(t, out)
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
