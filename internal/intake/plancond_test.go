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
