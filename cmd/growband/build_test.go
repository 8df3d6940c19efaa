package main

import (
	"bytes"
	"os"
	"path/filepath"
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
