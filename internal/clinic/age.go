package clinic

import (
	"fmt"
	"strings"
	"time"

	"growband/internal/ageunit"
)

// dateLayout is the accepted date form, ISO 8601 calendar dates (YYYY-MM-DD),
// which is also what an HTML date input submits.
const dateLayout = "2006-01-02"

// daysPer returns the number of days in one age unit (intake.ParseAgeUnit
// names), or 0 for a unit whose length is not known (ages from dates are
// then refused).
func daysPer(unit string) float64 {
	u, err := ageunit.Parse(unit)
	if err != nil {
		return 0
	}
	return u.Days()
}

// parseDate reads an ISO date, naming field in the error.
func parseDate(field, s string) (time.Time, error) {
	t, err := time.Parse(dateLayout, strings.TrimSpace(s))
	if err != nil {
		return time.Time{}, fieldErr(field, "%q is not a date of the form YYYY-MM-DD", s)
	}
	return t, nil
}

// ageFromDates returns the age at the visit in the given age unit from the
// exact number of calendar days between birth and visit. Errors name the
// field concerned.
func ageFromDates(birthField, birth, visitField, visit, unit string) (float64, error) {
	per := daysPer(unit)
	if per == 0 {
		return 0, fieldErr(birthField, "the reference's age unit %q cannot be computed from dates; enter the age instead", unit)
	}
	b, err := parseDate(birthField, birth)
	if err != nil {
		return 0, err
	}
	v, err := parseDate(visitField, visit)
	if err != nil {
		return 0, err
	}
	if v.Before(b) {
		return 0, fieldErr(visitField, "visit date %s is before the birth date %s", visit, birth)
	}
	// Both dates are UTC midnights, so the difference is a whole number of
	// days (no daylight-saving shifts).
	days := v.Sub(b).Hours() / 24
	return days / per, nil
}

// describeAgeUnit is the unit as shown to a user, "" becoming "age units".
func describeAgeUnit(unit string) string {
	if strings.TrimSpace(unit) == "" {
		return "age units"
	}
	return unit
}

// formatRange writes an age range for messages.
func formatRange(lo, hi float64, unit string) string {
	return fmt.Sprintf("%s to %s %s", trimNum(lo), trimNum(hi), describeAgeUnit(unit))
}
