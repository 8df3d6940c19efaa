package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"growband/curve"
	"growband/internal/intake"
)

// TestBuildLibraryMatchesCommand builds the fixture's reference through the
// library call curve.Build, with the settings the plan gives, and compares
// it byte for byte with the command's reference.json once both carry the
// same creation time (the only field that depends on the clock).
func TestBuildLibraryMatchesCommand(t *testing.T) {
	f := builtFixture(t)
	plan, err := intake.LoadPlan(filepath.Join(f.dir, "plan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	tab, err := plan.ReadInput()
	if err != nil {
		t.Fatal(err)
	}
	res, err := curve.Build(tableData(tab), buildSettings(plan, progress{}))
	if err != nil {
		t.Fatalf("curve.Build: %v", err)
	}
	cmdRef, err := curve.LoadFile(f.ref())
	if err != nil {
		t.Fatal(err)
	}
	res.Reference.Created = cmdRef.Created
	var lib, cmd bytes.Buffer
	if err := curve.Save(&lib, res.Reference); err != nil {
		t.Fatal(err)
	}
	if err := curve.Save(&cmd, cmdRef); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(lib.Bytes(), cmd.Bytes()) {
		t.Error("the library's reference differs from the command's")
	}
	// The command's file is what Save writes for the library's reference.
	disk, _ := os.ReadFile(f.ref())
	if !bytes.Equal(disk, cmd.Bytes()) {
		t.Error("reference.json is not what Save writes for the loaded reference")
	}
	// Every row the library excluded is in excluded.csv with its reason:
	// the fixture plants one implausible row.
	impl := 0
	for _, e := range res.Excluded {
		if e.Reason == curve.ExcludedImplausible {
			impl++
		}
	}
	if n := summaryCount(t, f.summary, "implausible against a first-pass fit"); n != impl {
		t.Errorf("command excluded %d rows as implausible, library %d", n, impl)
	}
}

// TestBuildEdgeProblemsFail: the fixture's small sample (about 550 rows a
// stratum) gives centiles that tie or hook near birth under every candidate
// age scale; without fit.accept_edge_problems the build must fail, name the
// problems and write nothing; with it the summary lists them.
func TestBuildEdgeProblemsFail(t *testing.T) {
	f := builtFixture(t)
	if !strings.Contains(f.summary, "note: accepted edge problem: stratum ") {
		t.Errorf("summary does not list the accepted edge problems:\n%s", f.summary)
	}
	plan, err := os.ReadFile(filepath.Join(f.dir, "plan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	strict := strings.Replace(string(plan), "accept_edge_problems = true", "accept_edge_problems = false", 1)
	if err := os.WriteFile(filepath.Join(f.dir, "strict.toml"), []byte(strict), 0o644); err != nil {
		t.Fatal(err)
	}
	_, errOut, code := gb(t, f.dir, "build", "strict.toml", "--out", "strict-out", "--quiet")
	if code != 1 {
		t.Fatalf("exit %d, want 1\n%s", code, errOut)
	}
	for _, want := range []string{"centile curves tie, hook or bend", "stratum ", "accept_edge_problems = true"} {
		if !strings.Contains(errOut, want) {
			t.Errorf("message lacks %q:\n%s", want, errOut)
		}
	}
	if _, err := os.Stat(filepath.Join(f.dir, "strict-out", "reference.json")); err == nil {
		t.Error("reference.json written although the build failed")
	}
}

// TestBuildBands builds the fixture with bootstrap replicates: centiles.csv
// and "growband table" carry each chart centile's band, which holds the
// centile itself, and the report summarises the bands in words.
func TestBuildBands(t *testing.T) {
	f := builtFixture(t)
	plan, err := os.ReadFile(filepath.Join(f.dir, "plan.toml"))
	if err != nil {
		t.Fatal(err)
	}
	boot := strings.Replace(string(plan), "[fit]\n", "[fit]\nbootstrap = 20\nage_scale = \"identity\"\n", 1)
	if err := os.WriteFile(filepath.Join(f.dir, "boot.toml"), []byte(boot), 0o644); err != nil {
		t.Fatal(err)
	}
	mustGB(t, f.dir, "build", "boot.toml", "--out", "boot-out", "--quiet")
	csvText, _ := os.ReadFile(filepath.Join(f.dir, "boot-out", "centiles.csv"))
	tableText := mustGB(t, f.dir, "table", "--ref", filepath.Join("boot-out", "reference.json"), "--ages", "6,30")
	for name, text := range map[string]string{"centiles.csv": string(csvText), "table": tableText} {
		head, recs := readCSV(t, text)
		c50, lo, hi := column(t, head, "50"), column(t, head, "50_lo95"), column(t, head, "50_hi95")
		column(t, head, "3_lo95")
		column(t, head, "97_hi95")
		for _, r := range recs {
			v, _ := strconv.ParseFloat(r[c50], 64)
			l, err1 := strconv.ParseFloat(r[lo], 64)
			h, err2 := strconv.ParseFloat(r[hi], 64)
			if err1 != nil || err2 != nil || !(l <= v && v <= h) {
				t.Errorf("%s %s age %s: median %v, band [%s, %s]", name, r[0], r[1], v, r[lo], r[hi])
			}
		}
	}
	rep, _ := os.ReadFile(filepath.Join(f.dir, "boot-out", "report.html"))
	for _, want := range []string{"<h2>Bootstrap bands</h2>", "from 20 bootstrap replicates", "whole children"} {
		if !strings.Contains(string(rep), want) {
			t.Errorf("report lacks %q", want)
		}
	}
	if !strings.Contains(string(rep), "Every band is stable") && !strings.Contains(string(rep), "Some bands are unstable.") {
		t.Error("report says nothing about the bands' stability")
	}
}
