package district

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

var (
	measures = []Measure{Weight, Length}
	sexes    = []string{"F", "M"}
)

// TestTrueQuantileIsBoxCox checks that TrueQuantile is the Box–Cox–normal
// quantile of TrueLMS, y = M (1 + L S z)^(1/L) (Cole 1990; exact identity),
// with z = Phi^-1(tau) taken from an independent library (gonum v0.17.0
// distuv.UnitNormal), and that the inverse transform
// z = ((y/M)^L - 1)/(L S) returns gonum's z.
func TestTrueQuantileIsBoxCox(t *testing.T) {
	// Relative tolerance for comparing two evaluations of the same formula
	// with z from two implementations of Phi^-1 (common practice: a few
	// hundred ulps).
	const tol = 1e-12
	for _, m := range measures {
		for _, sex := range sexes {
			for age := 0.0; age <= MaxAgeMonths; age += 2.5 {
				l, mu, s := TrueLMS(m, sex, age)
				for _, tau := range []float64{0.001, 0.03, 0.1, 0.25, 0.5, 0.75, 0.9, 0.97, 0.999} {
					z := distuv.UnitNormal.Quantile(tau)
					want := mu * math.Pow(1+l*s*z, 1/l)
					got := TrueQuantile(m, sex, age, tau)
					if math.Abs(got-want) > tol*want {
						t.Errorf("%s %s age %v tau %v: TrueQuantile %v, Box–Cox of TrueLMS %v", m, sex, age, tau, got, want)
					}
					back := (math.Pow(got/mu, l) - 1) / (l * s)
					if math.Abs(back-z) > 1e-9 { // 1e-9: common practice, round trip through Pow
						t.Errorf("%s %s age %v tau %v: z round trip %v, want %v", m, sex, age, tau, back, z)
					}
				}
			}
		}
	}
}

// TestBoxCoxLimit checks the L -> 0 branch against its limit M exp(S z)
// (exact identity) and its continuity with the L != 0 formula.
func TestBoxCoxLimit(t *testing.T) {
	const m, s, z = 10.0, 0.12, 1.7 // arbitrary
	want := m * math.Exp(s*z)
	if got := boxCoxValue(0, m, s, z); got != want {
		t.Errorf("L = 0: got %v, want %v", got, want)
	}
	// At L = 1e-7 the formula differs from the limit by about
	// M exp(Sz) L (Sz)^2 / 2 ~ 1e-7 relative (series expansion, exact
	// identity to first order); 1e-6 leaves room.
	if got := boxCoxValue(1e-7, m, s, z); math.Abs(got-want) > 1e-6*want {
		t.Errorf("L = 1e-7: got %v, want about %v", got, want)
	}
	if got := boxCoxValue(0.5, m, s, -100); got != 0 {
		t.Errorf("L > 0, far lower tail: got %v, want 0", got)
	}
	if got := boxCoxValue(-0.5, m, s, 100); !math.IsInf(got, 1) {
		t.Errorf("L < 0, far upper tail: got %v, want +Inf", got)
	}
}

// TestTrueCurvesPlausible checks the invented curves against the ranges the
// project brief asks for (median weight about 3.3 kg at birth and 18 kg at
// 60 months, length about 50 cm and 109 cm; S 0.08–0.14 for weight and
// 0.035–0.045 for length; |L| small), and that the medians rise and slow
// down with age, as children's growth does (common knowledge).
func TestTrueCurvesPlausible(t *testing.T) {
	type band struct{ lo, hi float64 }
	cases := []struct {
		m            Measure
		birth, end   band // median at 0 and 60 months
		sRange, lAbs band
	}{
		// Ranges: the project brief, with about ±3% slack on the medians.
		{Weight, band{3.2, 3.4}, band{17.5, 18.5}, band{0.08, 0.14}, band{0, 0.3}},
		{Length, band{49, 51}, band{107, 111}, band{0.035, 0.045}, band{0, 1}},
	}
	for _, c := range cases {
		for _, sex := range sexes {
			_, m0, _ := TrueLMS(c.m, sex, 0)
			_, m60, _ := TrueLMS(c.m, sex, MaxAgeMonths)
			if m0 < c.birth.lo || m0 > c.birth.hi || m60 < c.end.lo || m60 > c.end.hi {
				t.Errorf("%s %s: median %v at birth, %v at 60 months", c.m, sex, m0, m60)
			}
			prevM, prevGain := m0, math.Inf(1)
			for age := 1.0; age <= MaxAgeMonths; age++ {
				l, mu, s := TrueLMS(c.m, sex, age)
				if s < c.sRange.lo || s > c.sRange.hi+1e-12 || math.Abs(l) > c.lAbs.hi {
					t.Errorf("%s %s age %v: L %v, S %v out of range", c.m, sex, age, l, s)
				}
				gain := mu - prevM
				if gain <= 0 || gain > prevGain {
					t.Errorf("%s %s age %v: monthly gain %v after %v; want positive and slowing", c.m, sex, age, gain, prevGain)
				}
				prevM, prevGain = mu, gain
			}
		}
	}
	// Boys are a little heavier and longer than girls at every age (common
	// knowledge; a choice of the invented model).
	for age := 0.0; age <= MaxAgeMonths; age++ {
		for _, m := range measures {
			_, f, _ := TrueLMS(m, "F", age)
			_, b, _ := TrueLMS(m, "M", age)
			if b <= f {
				t.Errorf("%s age %v: boys' median %v not above girls' %v", m, age, b, f)
			}
		}
	}
}

func TestTruePanics(t *testing.T) {
	bad := map[string]func(){
		"measure": func() { TrueLMS("head", "F", 1) },
		"sex":     func() { TrueLMS(Weight, "1", 1) },
		"age<0":   func() { TrueLMS(Weight, "F", -0.5) },
		"age>60":  func() { TrueLMS(Weight, "F", 60.5) },
		"age NaN": func() { TrueLMS(Weight, "F", math.NaN()) },
		"tau 0":   func() { TrueQuantile(Weight, "F", 1, 0) },
		"tau 1":   func() { TrueQuantile(Weight, "F", 1, 1) },
		"plan":    func() { Plan("head") },
	}
	for name, f := range bad {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("%s: no panic", name)
				}
			}()
			f()
		}()
	}
}
