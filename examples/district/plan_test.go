package district

import (
	"slices"
	"testing"

	"github.com/BurntSushi/toml"
)

// planFile mirrors the plan format agreed for the demo (project brief).
type planFile struct {
	Input struct {
		File, Age, Value, Stratum, Subject, Weight string
	}
	Measure struct {
		Name, Unit string
		AgeUnit    string `toml:"age_unit"`
	}
	Fit struct {
		Centiles       []float64
		Knots, Penalty string
		AgeScale       string `toml:"age_scale"`
		Bootstrap      int
		Seed           int
	}
}

// TestPlan decodes each plan with an independent TOML reader
// (github.com/BurntSushi/toml v1.6.0), insists every key is known, and checks
// that the columns it names are columns of CSV().
func TestPlan(t *testing.T) {
	units := map[Measure]string{Weight: "kg", Length: "cm"}
	for _, m := range measures {
		var p planFile
		md, err := toml.Decode(string(Plan(m)), &p)
		if err != nil {
			t.Fatalf("%s: %v", m, err)
		}
		if u := md.Undecoded(); len(u) > 0 {
			t.Errorf("%s: keys outside the agreed format: %v", m, u)
		}
		for _, col := range []string{p.Input.Age, p.Input.Value, p.Input.Stratum, p.Input.Subject, p.Input.Weight} {
			if !slices.Contains(header, col) {
				t.Errorf("%s: plan names column %q, not in the survey header %v", m, col, header)
			}
		}
		if p.Input.File != "survey.csv" || p.Measure.Name != string(m) || p.Measure.Unit != units[m] ||
			p.Measure.AgeUnit != "months" || p.Input.Value != map[Measure]string{Weight: "weight_kg", Length: "length_cm"}[m] {
			t.Errorf("%s: plan %+v", m, p)
		}
		// The demo's chart centiles (project brief).
		if !slices.Equal(p.Fit.Centiles, []float64{3, 10, 25, 50, 75, 90, 97}) {
			t.Errorf("%s: centiles %v", m, p.Fit.Centiles)
		}
	}
}
