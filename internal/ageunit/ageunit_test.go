package ageunit

import "testing"

func TestParse(t *testing.T) {
	for _, c := range []struct {
		in   string
		want Unit
	}{
		{"months", Months}, {"month", Months}, {"Mo", Months}, {" MONTHS ", Months},
		{"day", Days}, {"d", Days}, {"wk", Weeks}, {"weeks", Weeks}, {"yr", Years}, {"years", Years},
	} {
		u, err := Parse(c.in)
		if err != nil || u != c.want {
			t.Errorf("Parse(%q) = %v, %v; want %v", c.in, u, err, c.want)
		}
	}
	for _, bad := range []string{"", "fortnights", "monts", "mon"} {
		if _, err := Parse(bad); err == nil {
			t.Errorf("Parse(%q) accepted", bad)
		}
	}
}

// The lengths are the Julian year of 365.25 days and its twelfth (exact
// identities), so a year is exactly 12 months and 52.17857... weeks.
func TestConvert(t *testing.T) {
	if Years.Convert(1, Months) != 12 || Months.Convert(12, Years) != 1 {
		t.Errorf("a year is %v months", Years.Convert(1, Months))
	}
	if d := Months.Days(); d != 30.4375 {
		t.Errorf("a month is %v days, want 30.4375", d)
	}
	if w := Years.Convert(1, Weeks); w != 365.25/7 {
		t.Errorf("a year is %v weeks", w)
	}
	if s, err := Canonical("mo"); err != nil || s != "months" {
		t.Errorf("Canonical(mo) = %q, %v", s, err)
	}
}
