package main

import (
	"math"
	"strconv"
	"testing"

	"growband/curve"
)

// TestTableValuesScoreBack scores every printed centile value of a table
// (tail centiles included) and gets its centile back within
// centileRoundTrip, except where two centiles coincide and no value can
// tell them apart.
func TestTableValuesScoreBack(t *testing.T) {
	f := builtFixture(t)
	ref, err := curve.LoadFile(f.ref())
	if err != nil {
		t.Fatal(err)
	}
	stdout, stderr, err := runIn("table", "--ref", f.ref(), "--ages", "0:60:3", "--centiles", "1,3,10,50,90,97,99")
	if err != nil {
		t.Fatalf("%v: %s", err, stderr)
	}
	head, recs := readCSV(t, stdout)
	checked, longer := 0, 0
	for _, r := range recs {
		age, _ := strconv.ParseFloat(r[1], 64)
		for j := 2; j < 9; j++ {
			c, _ := strconv.ParseFloat(head[j], 64)
			v, err := strconv.ParseFloat(r[j], 64)
			if err != nil {
				t.Fatalf("%v: %v", r, err)
			}
			if r[j] == r[j-1] || (j < 8 && r[j] == r[j+1]) {
				continue // centiles coinciding at this age
			}
			s, err := ref.Score(r[0], age, v)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(s.Centile-c) > centileRoundTrip {
				t.Errorf("%s at %g: printed %s scores centile %.6f, not %g", r[0], age, r[j], s.Centile, c)
			}
			checked++
			if len(r[j]) > 8 {
				longer++
			}
		}
	}
	if checked < 100 {
		t.Errorf("only %d values checked", checked)
	}
	t.Logf("%d values score back; %d needed more than six digits", checked, longer)
}
