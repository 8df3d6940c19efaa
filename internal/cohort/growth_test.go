package cohort

import (
	"errors"
	"math"
	"math/rand/v2"
	"strconv"
	"testing"

	"growband/curve"
)

// growthTruth is a stated model: weight-like values y = M(a) exp(S z) with
// M(a) = 3.3 + 0.45 a - 0.0025 a^2 and S = 0.12 (log-normal at each age,
// Box–Cox with L = 0), and each child's z a stationary autoregression over
// its visits, z_t = rho z_s + sqrt(1 - rho^2) e with rho = exp(-gap/24)
// (gap in months), z at the first visit and e standard normal. drift is
// added to z at every later visit: 0 reproduces the model.
func growthTruth(children int, drift float64, seed uint64) *curve.Data {
	rng := rand.New(rand.NewPCG(seed, 77))
	d := &curve.Data{}
	for c := range children {
		a := 30 * rng.Float64()
		z := rng.NormFloat64()
		for v := range 4 {
			if v > 0 {
				g := 2 + 6*rng.Float64()
				r := math.Exp(-g / 24)
				a += g
				z = r*z + math.Sqrt(1-r*r)*rng.NormFloat64() + drift
			}
			m := 3.3 + 0.45*a - 0.0025*a*a
			d.Age = append(d.Age, a)
			d.Value = append(d.Value, m*math.Exp(0.12*z))
			d.Subject = append(d.Subject, "k"+strconv.Itoa(c))
		}
	}
	return d
}

func growthRef(t *testing.T) *curve.Reference {
	t.Helper()
	d := growthTruth(2500, 0, 1)
	ref, err := curve.Fit(d, &curve.Settings{Knots: 3, Penalty: curve.PenaltyNone})
	if err != nil {
		t.Fatal(err)
	}
	if err := curve.FitConditional(ref, d, &curve.ConditionalSettings{GapMin: 2, GapMax: 8}); err != nil {
		t.Fatal(err)
	}
	return ref
}

// TestGrowthFaltering: a fresh cohort from the model has about 5% of later
// visits below the 5th conditional centile (its Wilson interval covers 5%),
// and a cohort whose z drifts down by 0.3 at every later visit has clearly
// more; without subject ids the function refuses.
func TestGrowthFaltering(t *testing.T) {
	ref := growthRef(t)
	same, err := GrowthFaltering(ref, growthTruth(800, 0, 2), 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(same) != 1 || same[0].Visits < 2000 || same[0].Children < 700 {
		t.Fatalf("got %+v", same)
	}
	b := same[0].Below
	t.Logf("same model: %.2f%% [%.2f, %.2f] of %d visits (deff %.2f)", 100*b.Value, 100*b.Lo, 100*b.Hi, same[0].Visits, b.DEff)
	if b.Off {
		t.Errorf("share %.4f with interval [%.4f, %.4f] excludes the 5%% of the model", b.Value, b.Lo, b.Hi)
	}
	// With drift -0.3 the true conditional z is shifted by -0.3/sqrt(1-rho^2),
	// at least -0.3/0.56 (rho = exp(-8/24)), so the share is at least
	// Phi(-1.645 + 0.53) = 13%.
	down, err := GrowthFaltering(ref, growthTruth(800, -0.3, 3), 0)
	if err != nil {
		t.Fatal(err)
	}
	if b := down[0].Below; !(b.Lo > 0.1) {
		t.Errorf("drifting cohort: share %.4f [%.4f, %.4f], want clearly above 10%%", b.Value, b.Lo, b.Hi)
	}
	d := growthTruth(10, 0, 4)
	d.Subject = nil
	if _, err := GrowthFaltering(ref, d, 0); !errors.Is(err, ErrNoSubjects) {
		t.Errorf("no subjects: got %v", err)
	}
}

// TestCompareCentiles draws two cohorts from a stated model with a normal
// spread that does not depend on age, y = M(a) + 0.4 z (M as growthTruth),
// cohort A with z moved by s = -0.5 where z < -0.4. So A's tau-centile lies
// 0.4 s = -0.2 below B's at every age for tau < Phi(-0.4) = 0.345 and
// equals it above (exact). The age-adjusted difference at each chart
// centile must be within four standard errors of that (4 SE: a false alarm
// about once in 16,000 per centile, common practice).
func TestCompareCentiles(t *testing.T) {
	ref := growthRef(t)
	const s, cut, sd = -0.5, -0.4, 0.4
	rng := rand.New(rand.NewPCG(9, 9))
	draw := func(n int, shift bool) *curve.Data {
		d := &curve.Data{}
		for range n {
			a := 1 + 28*rng.Float64()
			z := rng.NormFloat64()
			if shift && z < cut {
				z += s
			}
			d.Age = append(d.Age, a)
			d.Value = append(d.Value, 3.3+0.45*a-0.0025*a*a+sd*z)
		}
		return d
	}
	a, b := draw(3000, true), draw(3000, false)
	got, err := CompareCentiles(ref, a, b, 0, 1)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(ref.Strata[0].Chart) {
		t.Fatalf("%d centiles compared", len(got))
	}
	for _, g := range got {
		truth := 0.0
		if g.Centile/100 < normP(cut) {
			truth = sd * s
		}
		t.Logf("centile %g: %.3f [%.3f, %.3f] (truth %.3f), %s", g.Centile, g.Diff, g.Lo, g.Hi, truth, g.Method)
		if math.Abs(g.Diff-truth) > 4*g.SE {
			t.Errorf("centile %g: difference %.3f, truth %.3f, SE %.3f", g.Centile, g.Diff, truth, g.SE)
		}
	}
}
