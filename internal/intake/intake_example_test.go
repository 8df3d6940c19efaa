package intake_test

import (
	"fmt"
	"os"
	"strings"

	"growband/internal/intake"
)

func ExampleRead() {
	csv := "child;age_months;weight_lb;sex\n" +
		"a;3;13,2;M\n" +
		"b;4;NA;F\n" +
		"c;5;15,4;X\n" +
		"d;6;17,6;2\n"
	spec := &intake.Spec{
		Age: "age_months", Value: "weight_lb", Stratum: "sex", Subject: "child",
		InputUnit: "lb", Unit: "kg",
		StratumCodes: map[string]string{"M": "male", "1": "male", "F": "female", "2": "female"},
	}
	t, err := intake.Read(strings.NewReader(csv), "survey.csv", spec)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, r := range t.Rows {
		fmt.Printf("line %d: %s, %g months, %.4f kg\n", r.Line, r.Stratum, r.Age, r.Value)
	}
	fmt.Printf("%d used + %d excluded = %d read\n", len(t.Rows), len(t.Excluded), t.Total)
	intake.WriteExcluded(os.Stdout, t)
	// Output:
	// line 2: male, 3 months, 5.9874 kg
	// line 5: female, 6 months, 7.9832 kg
	// 2 used + 2 excluded = 4 read
	// line,reason,child,age_months,weight_lb,sex
	// 3,missing value (weight_lb),b,4,NA,F
	// 4,"unknown stratum code (sex: ""X"")",c,5,"15,4",X
}

func ExampleParsePlan() {
	plan := `
[input]
file = "survey.csv"
age = "age_months"
value = "weight_kg"
[measure]
name = "weight"
unit = "kg"
[fit]
knots = 5
penalty = "auto"
age_scale = 0.5
bootstrap = "many"
`
	_, err := intake.ParsePlan([]byte(plan), "weight.toml", ".")
	fmt.Println(err)

	p, err := intake.ParsePlan([]byte(strings.Replace(plan, `"many"`, "200", 1)), "weight.toml", "/data")
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(p.Input.File, p.Fit.Knots.Count, p.Fit.AgeScale.Kind, p.Fit.AgeScale.Power, p.Fit.Bootstrap)
	fmt.Println(p.Fit.Centiles, p.Plausible.Value, p.Plausible.Z)
	// Output:
	// weight.toml:13: fit.bootstrap: want a whole number, got the string "many"
	// /data/survey.csv 5 power 0.5 200
	// [3 10 25 50 75 90 97] {0.2 250} 5
}
