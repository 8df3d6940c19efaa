package district

import (
	"fmt"
	"strings"
)

// planText is the demo plan; {{...}} fields are filled per measure.
const planText = `# growband plan for the Tarnwick District demo: {{name}}.
# The survey is district.CSV(), saved as survey.csv.
# Note: the sex column is coded "F"/"M" at three clinics and "1" (male) /
# "2" (female) at Highmoor Mobile Team; the codes must be mapped to one
# coding before the sexes can be fitted as separate strata.

[input]
file = "survey.csv"
age = "age_months"
value = "{{column}}"
stratum = "sex"
subject = "child_id"
weight = "survey_weight"

[measure]
name = "{{name}}"
unit = "{{unit}}"
age_unit = "months"

[fit]
centiles = [3, 10, 25, 50, 75, 90, 97]
knots = "auto"
penalty = "auto"
age_scale = "identity"
bootstrap = 0
seed = 1
`

// Plan returns the TOML plan for the demo build of measure, reading the
// survey from "survey.csv". It panics on a measure other than Weight or
// Length.
func Plan(measure Measure) []byte {
	var column, unit string
	switch measure {
	case Weight:
		column, unit = "weight_kg", "kg"
	case Length:
		column, unit = "length_cm", "cm"
	default:
		panic(fmt.Sprintf("district: unknown measure %q", measure))
	}
	return []byte(strings.NewReplacer(
		"{{name}}", string(measure),
		"{{column}}", column,
		"{{unit}}", unit,
	).Replace(planText))
}
