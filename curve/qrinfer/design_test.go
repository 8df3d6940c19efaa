package qrinfer

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// TestAgeDesignCohortShift simulates two cohorts from a stated model in
// which cohort "b" is shifted only in its lower half,
//
//	y = 10 + 2 sqrt(age) + e + d 1{cohort b} 1{e < 0},  e ~ N(0, 1),
//
// so the true difference between the cohorts' tau-quantiles is d below the
// median and 0 above it (exact). The cohort coefficient of the age-spline design
// must cover the true shift with its 95% interval at tau 0.25 and 0.75.
func TestAgeDesignCohortShift(t *testing.T) {
	const n, d = 4000, -0.6
	rng := rand.New(rand.NewPCG(8, 9))
	age := make([]float64, n)
	y := make([]float64, n)
	cohort := make([]string, n)
	for i := range n {
		age[i] = 60 * rng.Float64()
		e := rng.NormFloat64()
		y[i] = 10 + 2*math.Sqrt(age[i]) + e
		cohort[i] = "a"
		if i%2 == 1 {
			cohort[i] = "b"
			if e < 0 {
				y[i] += d
			}
		}
	}
	rows, names, err := AgeDesign(age, 3, []Covariate{{Name: "cohort", Levels: cohort}})
	if err != nil {
		t.Fatal(err)
	}
	if got := strings.Join(names, ","); got != "age:1,age:2,age:3,age:4,age:5,age:6,age:7,cohort=b" {
		t.Fatalf("names %s", got)
	}
	for _, tau := range []float64{0.25, 0.75} {
		// Cohort b's error is e + d 1{e<0}: for tau < 0.5 its quantile is
		// Phi^-1(tau) + d, above the median Phi^-1(tau) (exact).
		want := 0.0
		if tau < 0.5 {
			want = d
		}
		r, err := Fit(&Problem{Y: y, X: rows, Names: names}, tau, nil)
		if err != nil {
			t.Fatal(err)
		}
		c := r.Coef[len(r.Coef)-1]
		t.Logf("tau %g: cohort=b %.3f [%.3f, %.3f], p %.3g (true %g)", tau, c.Estimate, c.Lo, c.Hi, c.P, want)
		if !(c.Lo <= want && want <= c.Hi) {
			t.Errorf("tau %g: interval [%.3f, %.3f] misses the true shift %g", tau, c.Lo, c.Hi, want)
		}
	}
	if _, _, err := AgeDesign(age[:3], 0, []Covariate{{Name: "h", Values: []float64{1, math.NaN(), 2}}}); err == nil || !strings.Contains(err.Error(), `"h", row 2`) {
		t.Errorf("NaN covariate: got %v", err)
	}
	if _, _, err := AgeDesign(age[:3], 0, []Covariate{{Name: "g", Levels: []string{"x", "x", "x"}}}); err == nil {
		t.Error("a single level: no error")
	}
}
