package intake

import (
	"bytes"
	"encoding/csv"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
)

func TestExcludeKeepsCounts(t *testing.T) {
	in := "id,age,v,sex,w\n" +
		"1,1,2,m,1\n" + // 2
		"2,1,x,m,1\n" + // 3 not a number
		"3,2,3,f,2\n" + // 4
		"4,3,4,m,1\n" + // 5
		"5,4,5,f,1\n" + // 6
		"6,5,6,m,1\n" // 7
	tb := readString(t, in, &Spec{Age: "age", Value: "v", Stratum: "sex", Subject: "id", Weight: "w"})
	if len(tb.Rows) != 5 {
		t.Fatalf("rows %+v", tb.Rows)
	}
	// Rows 1 and 3 are lines 4 and 6; index 3 is given twice.
	tb.Exclude([]int{3, 1, 3}, ReasonImplausible, []string{"z = 6.1", "z = -5.5", "ignored"})
	checkCounts(t, tb)
	if len(tb.Rows) != 3 || tb.Rows[0].Line != 2 || tb.Rows[1].Line != 5 || tb.Rows[2].Line != 7 {
		t.Fatalf("rows after Exclude: %+v", tb.Rows)
	}
	lines := []int{}
	for _, e := range tb.Excluded {
		lines = append(lines, e.Line)
	}
	if !equalInts(lines, []int{3, 4, 6}) {
		t.Fatalf("excluded lines %v, want [3 4 6]", lines)
	}
	if e := tb.Excluded[1]; e.Reason != ReasonImplausible || e.Detail != "z = -5.5" || e.Fields[0] != "3" {
		t.Fatalf("moved row %+v", e)
	}
	if e := tb.Excluded[2]; e.Detail != "z = 6.1" {
		t.Fatalf("moved row %+v", e)
	}
	tb.Exclude(nil, ReasonImplausible, nil)
	checkCounts(t, tb)

	// All walks every row in file order.
	all := tb.All()
	if len(all) != tb.Total {
		t.Fatalf("All has %d records, want %d", len(all), tb.Total)
	}
	for i, r := range all {
		if r.Line != i+2 || (r.Row == nil) == (r.Excl == nil) {
			t.Fatalf("record %d = %+v", i, r)
		}
	}

	age, value, weight, stratum, subject := tb.Columns()
	if !equalFloats(age, []float64{1, 3, 5}) || !equalFloats(value, []float64{2, 4, 6}) ||
		!equalFloats(weight, []float64{1, 1, 1}) || strings.Join(stratum, "") != "mmm" || strings.Join(subject, "") != "146" {
		t.Fatalf("Columns: %v %v %v %v %v", age, value, weight, stratum, subject)
	}
	if s := tb.Strata(); len(s) != 1 || s[0] != "m" {
		t.Fatalf("Strata %v", s)
	}
}

func TestColumnsNilWithoutOptionalColumns(t *testing.T) {
	tb := readString(t, "age,v\n1,2\n", &Spec{Age: "age", Value: "v"})
	_, _, w, s, id := tb.Columns()
	if w != nil || s != nil || id != nil || tb.Strata() != nil {
		t.Fatalf("want nil optional columns, got %v %v %v", w, s, id)
	}
	if tb.Rows[0].Weight != 1 {
		t.Fatalf("default weight %g, want 1", tb.Rows[0].Weight)
	}
}

func TestExcludePanics(t *testing.T) {
	tb := readString(t, "age,v\n1,2\n2,3\n", &Spec{Age: "age", Value: "v"})
	for name, f := range map[string]func(){
		"range":  func() { tb.Exclude([]int{2}, ReasonImplausible, nil) },
		"reason": func() { tb.Exclude([]int{0}, 0, nil) },
		"detail": func() { tb.Exclude([]int{0}, ReasonImplausible, []string{}) },
	} {
		func() {
			defer func() {
				if r := recover(); r == nil || !strings.HasPrefix(r.(string), "intake: ") {
					t.Errorf("%s: recovered %v, want an intake panic", name, r)
				}
			}()
			f()
		}()
	}
	checkCounts(t, tb)
}

// TestExcludeRandom moves random subsets repeatedly and checks the
// invariant and that no row is lost or duplicated.
func TestExcludeRandom(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	var b strings.Builder
	b.WriteString("age,v\n")
	for i := range 200 {
		v := strconv.Itoa(i)
		if rng.IntN(10) == 0 {
			v = "NA"
		}
		b.WriteString(strconv.Itoa(i) + "," + v + "\n")
	}
	tb := readString(t, b.String(), &Spec{Age: "age", Value: "v"})
	for range 20 {
		var idx []int
		for i := range tb.Rows {
			if rng.IntN(8) == 0 {
				idx = append(idx, i)
			}
		}
		tb.Exclude(idx, ReasonImplausible, nil)
		checkCounts(t, tb)
	}
	seen := map[int]bool{}
	for _, r := range tb.All() {
		if seen[r.Line] {
			t.Fatalf("line %d twice", r.Line)
		}
		seen[r.Line] = true
	}
	if len(seen) != 200 {
		t.Fatalf("%d lines, want 200", len(seen))
	}
}

func TestWriteExcluded(t *testing.T) {
	in := "id;age;wt\n1;2,5;3,5\n2;x;4\n3;1\n4;1;\"bad\"q\n"
	tb := readString(t, in, &Spec{Age: "age", Value: "wt"})
	var buf bytes.Buffer
	if err := WriteExcluded(&buf, tb); err != nil {
		t.Fatal(err)
	}
	r := csv.NewReader(strings.NewReader(buf.String()))
	r.FieldsPerRecord = -1 // a row with the wrong field count keeps its own fields
	recs, err := r.ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	want := [][]string{
		{"line", "reason", "id", "age", "wt"},
		{"3", `not a number (age: "x")`, "2", "x", "4"},
		{"4", "wrong number of fields (2 fields, header has 3)", "3", "1"},
	}
	if len(recs) != 4 {
		t.Fatalf("excluded.csv:\n%s", buf.String())
	}
	for i, w := range want {
		if strings.Join(recs[i], "|") != strings.Join(w, "|") {
			t.Errorf("record %d = %q, want %q", i, recs[i], w)
		}
	}
	if recs[3][0] != "5" || !strings.HasPrefix(recs[3][1], "badly quoted field") || len(recs[3]) != 2 {
		t.Errorf("quote record %q", recs[3])
	}
}

func TestReasonText(t *testing.T) {
	seen := map[string]bool{}
	for r := Reason(1); r < numReasons; r++ {
		s := r.String()
		if s == "" || seen[s] || strings.HasPrefix(s, "Reason(") {
			t.Errorf("reason %d text %q", r, s)
		}
		seen[s] = true
	}
	if Reason(0).String() != "Reason(0)" {
		t.Errorf("zero reason %q", Reason(0).String())
	}
}

func equalFloats(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func equalInts(a, b []int) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}
