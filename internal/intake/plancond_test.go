package intake

import (
	"errors"
	"slices"
	"strings"
	"testing"
)

func TestPlanConditional(t *testing.T) {
	if p := parse(t, minimalPlan); p.Conditional != nil {
		t.Errorf("no [conditional] table: got %+v", p.Conditional)
	}
	withSubject := minimalPlan + "subject = \"child\"\n"
	p := parse(t, withSubject+"[conditional]\n")
	if c := p.Conditional; c == nil || c.GapMin != 0 || c.GapMax != 0 || c.AgeKnots != 0 || c.ZKnots != 0 || c.Centiles != nil {
		t.Errorf("empty [conditional]: got %+v", p.Conditional)
	}
	p = parse(t, withSubject+"[conditional]\ngap = [1, 6]\nage_knots = 0\nz_knots = 4\ncentiles = [5, 50, 95]\n")
	c := p.Conditional
	if c.GapMin != 1 || c.GapMax != 6 || c.AgeKnots != -1 || c.ZKnots != 4 || !slices.Equal(c.Centiles, []float64{5, 50, 95}) {
		t.Errorf("[conditional] read as %+v", c)
	}
	for _, tc := range []struct{ text, want string }{
		{minimalPlan + "[conditional]\n", "plan.toml:6: conditional: needs input.subject"},
		{withSubject + "[conditional]\ngap = [6, 1]\n", "plan.toml:8: conditional.gap: want"},
		{withSubject + "[conditional]\ngap = \"wide\"\n", "plan.toml:8: conditional.gap: want an array of numbers"},
		{withSubject + "[conditional]\ncentiles = [5, 95]\n", "plan.toml:8: conditional.centiles: must include 50"},
		{withSubject + "[conditional]\nz_knots = 99\n", "plan.toml:8: conditional.z_knots: 99 is outside [0, 20]"},
		{withSubject + "[conditional]\ngaps = [1, 2]\n", `plan.toml:8: unknown key "conditional.gaps" (did you mean "conditional.gap"?)`},
	} {
		_, err := ParsePlan([]byte(tc.text), "plan.toml", "/data")
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%q: got %v, want %q", tc.text, err, tc.want)
		}
		var pe *Error
		if err != nil && !errors.As(err, &pe) {
			t.Errorf("%q: %T is not *Error", tc.text, err)
		}
	}
}

func TestPlanCovariates(t *testing.T) {
	if p := parse(t, minimalPlan); p.Covariates != nil {
		t.Errorf("no [covariates] table: got %+v", p.Covariates)
	}
	p := parse(t, minimalPlan+"[covariates]\nnumeric = [\"mother_height\"]\ncategorical = [\"region\"]\nmethod = \"bootstrap\"\nreplicates = 50\n")
	c := p.Covariates
	if c == nil || !slices.Equal(c.Numeric, []string{"mother_height"}) || !slices.Equal(c.Categorical, []string{"region"}) ||
		c.Method != "bootstrap" || c.Replicates != 50 || c.AgeKnots != 0 {
		t.Errorf("[covariates] read as %+v", c)
	}
	if c := parse(t, minimalPlan+"[covariates]\nnumeric = [\"h\"]\n").Covariates; c.Method != "sandwich" {
		t.Errorf("default method %q", c.Method)
	}
	for _, tc := range []struct{ text, want string }{
		{minimalPlan + "[covariates]\n", "plan.toml:6: covariates: name at least one column"},
		{minimalPlan + "[covariates]\nnumeric = [\"age_months\"]\n", `plan.toml:7: covariates.numeric: column "age_months" is already used`},
		{minimalPlan + "[covariates]\nnumeric = [\"h\"]\ncategorical = [\"h\"]\n", `plan.toml:8: covariates.categorical: column "h" named twice`},
		{minimalPlan + "[covariates]\nnumeric = [\"h\"]\nmethod = \"jackknife\"\n", `plan.toml:8: covariates.method: "jackknife" is not one of`},
		{minimalPlan + "[covariates]\nnumeric = \"h\"\n", "plan.toml:7: covariates.numeric: want an array of strings"},
	} {
		_, err := ParsePlan([]byte(tc.text), "plan.toml", "/data")
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%q: got %v, want %q", tc.text, err, tc.want)
		}
	}
}
