// Package ageunit is the one place growband knows age units: plans,
// reading options, LMS tables, references, the command line and the clinic
// all parse unit names with Parse and convert with Days and Convert.
package ageunit

import (
	"fmt"
	"strings"
)

// Unit is a unit ages are counted in.
type Unit int

// The age units, shortest first.
const (
	Days Unit = iota + 1
	Weeks
	Months
	Years
)

// Days per unit: a week is 7 days, a year the Julian year of 365.25 days
// (the average over the four-year leap cycle) and a month a twelfth of it,
// 30.4375 days (common practice).
var daysPerUnit = [...]float64{Days: 1, Weeks: 7, Months: 365.25 / 12, Years: 365.25}

var unitNames = [...]string{Days: "days", Weeks: "weeks", Months: "months", Years: "years"}

// unitAliases are the spellings Parse accepts, compared ignoring case.
var unitAliases = map[string]Unit{
	"day": Days, "days": Days, "d": Days,
	"week": Weeks, "weeks": Weeks, "wk": Weeks, "wks": Weeks, "w": Weeks,
	"month": Months, "months": Months, "mo": Months, "mos": Months, "m": Months,
	"year": Years, "years": Years, "yr": Years, "yrs": Years, "y": Years,
}

// Parse reads an age unit name: days, weeks, months or years, in the
// singular or plural or abbreviated (d, wk, mo, yr), in any case. "" is an
// error: callers choose their own default.
func Parse(s string) (Unit, error) {
	if u, ok := unitAliases[strings.ToLower(strings.TrimSpace(s))]; ok {
		return u, nil
	}
	return 0, fmt.Errorf("age unit %q is not one of days, weeks, months, years", s)
}

// Canonical returns the canonical name of an age unit name ("month"
// gives "months"), or an error naming the accepted units.
func Canonical(s string) (string, error) {
	u, err := Parse(s)
	if err != nil {
		return "", err
	}
	return u.String(), nil
}

// Days returns the number of days in one unit.
func (u Unit) Days() float64 {
	if !u.valid() {
		panic("ageunit: Days of an invalid Unit")
	}
	return daysPerUnit[u]
}

// String returns the canonical, plural name: "days", "weeks", "months" or
// "years".
func (u Unit) String() string {
	if !u.valid() {
		return fmt.Sprintf("ageunit.Unit(%d)", int(u))
	}
	return unitNames[u]
}

// Convert returns age, in unit u, in unit to.
func (u Unit) Convert(age float64, to Unit) float64 {
	if u == to {
		return age
	}
	return age * u.Days() / to.Days()
}

func (u Unit) valid() bool { return u >= Days && u <= Years }
