package intake

import (
	"errors"
	"strings"
	"testing"
)

// TestLook checks that columns left unnamed are found by their usual names:
// ignoring case and spaces, the age column before date columns, the first
// of the value names present, the stratum optional.
func TestLook(t *testing.T) {
	look := UsualNames
	look.Value = append([]string{"weight"}, look.Value...)
	for _, c := range []struct {
		in                        string
		age, birth, meas, val, st string
	}{
		{"Age,Weight,Sex\n3,5,F\n", "Age", "", "", "Weight", "Sex"},
		{" DOB ; Visit ;value\n2024-01-01;2024-03-01;5\n", "", "DOB", "Visit", "value", ""},
		{"birth,measured,age,value,weight\n2024-01-01,2024-03-01,2,9,5\n", "age", "", "", "weight", ""},
	} {
		tb := readString(t, c.in, &Spec{Look: &look})
		if len(tb.Rows) != 1 {
			t.Fatalf("%q: %d rows, excluded %+v", c.in, len(tb.Rows), tb.Excluded)
		}
		if tb.Stratum != c.st {
			t.Errorf("%q: stratum column %q, want %q", c.in, tb.Stratum, c.st)
		}
		if r := tb.Rows[0]; r.Value != 5 {
			t.Errorf("%q: value %v, want 5 (column %s)", c.in, r.Value, c.val)
		}
	}
	// Dates 2024-01-01 to 2024-03-01 are 60 days (2024 is a leap year),
	// 60/30.4375 months (exact calendar arithmetic).
	tb := readString(t, "dob;visit;value\n2024-01-01;2024-03-01;5\n", &Spec{Look: &look})
	if !near(tb.Rows[0].Age, 60/30.4375) {
		t.Errorf("age from dates %v", tb.Rows[0].Age)
	}
	// A column named in the Spec wins over the usual names.
	tb = readString(t, "age,value,months\n2,5,7\n", &Spec{Age: "months", Look: &look})
	if tb.Rows[0].Age != 7 {
		t.Errorf("named age column ignored: %v", tb.Rows[0].Age)
	}
	for _, c := range []struct{ in, want string }{
		{"age,height\n3,5\n", "no value column: name it weight or value (have: age, height)"},
		{"dob,value\n2024-01-01,5\n", "no age: need a column named age"},
	} {
		_, err := Read(strings.NewReader(c.in), "t.csv", &Spec{Look: &look})
		var e *Error
		if !errors.As(err, &e) || !errors.Is(err, ErrColumn) || e.Line != 1 || !strings.Contains(e.Msg, c.want) {
			t.Errorf("%q: error %v, want line 1 and %q", c.in, err, c.want)
		}
	}
}
