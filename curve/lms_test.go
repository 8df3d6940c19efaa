package curve

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// round1 rounds to one decimal, as the WHO tables print weights.
func round1(v float64) float64 { return math.Round(v*10) / 10 }

// TestLMSValuePublishedTable checks LMSValue against the WHO Child Growth Standards
// (2006), weight-for-age, boys, LMS parameters and SD columns; all values
// from memory of those tables, which round to 0.1 kg.
func TestLMSValuePublishedTable(t *testing.T) {
	cases := []struct {
		age     string
		l, m, s float64
		z, kg   float64
	}{
		{"birth", 0.3487, 3.3464, 0.14602, -3, 2.1},
		{"birth", 0.3487, 3.3464, 0.14602, -2, 2.5},
		{"birth", 0.3487, 3.3464, 0.14602, 0, 3.3},
		{"birth", 0.3487, 3.3464, 0.14602, 2, 4.4},
		{"birth", 0.3487, 3.3464, 0.14602, 3, 5.0},
		{"12 months", 0.0644, 9.6479, 0.10925, -2, 7.7},
		{"12 months", 0.0644, 9.6479, 0.10925, 2, 12.0},
	}
	for _, c := range cases {
		if got := round1(LMSValue(c.l, c.m, c.s, c.z)); got != c.kg {
			t.Errorf("%s z %g: %.1f kg, table %.1f", c.age, c.z, got, c.kg)
		}
	}
}

func TestLMSIdentities(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	for range 5000 {
		l := rng.Float64()*4 - 2
		m := 1 + rng.Float64()*50
		s := 0.02 + rng.Float64()*0.2
		z := rng.Float64()*6 - 3
		y := LMSValue(l, m, s, z)
		if math.IsNaN(y) {
			if 1+l*s*z > 0 {
				t.Fatalf("NaN inside the domain: %g %g %g %g", l, m, s, z)
			}
			continue
		}
		// LMSZ inverts LMSValue (exact identity).
		if back := LMSZ(l, m, s, y); !near(back, z, 1e-10) {
			t.Fatalf("L %g M %g S %g: LMSZ(LMSValue(%g)) = %g", l, m, s, z, back)
		}
	}
	// z = 0 is the median M; L = 1 is the normal M(1 + S z) (exact identities).
	if v := LMSValue(0.3, 7, 0.1, 0); v != 7 {
		t.Errorf("median %g", v)
	}
	if v := LMSValue(1, 10, 0.1, 2); !near(v, 12, 1e-15) {
		t.Errorf("L = 1: %g, want 12", v)
	}
	// L -> 0: continuity with M exp(S z) and log(y/M)/S (the limit
	// (1+Lx)^(1/L) -> e^x, exact identity). The error is O(L).
	for _, l := range []float64{1e-6, -1e-6, 1e-12} {
		if a, b := LMSValue(l, 10, 0.12, 1.7), LMSValue(0, 10, 0.12, 1.7); !near(a, b, 10*math.Abs(l)+1e-15) {
			t.Errorf("L %g: %.15g vs L = 0 %.15g", l, a, b)
		}
		if a, b := LMSZ(l, 10, 0.12, 13), LMSZ(0, 10, 0.12, 13); !near(a, b, 10*math.Abs(l)+1e-15) {
			t.Errorf("L %g: z %.15g vs L = 0 %.15g", l, a, b)
		}
	}
	// Outside the Box–Cox domain: NaN, not a panic or a wrong number.
	if v := LMSValue(1, 10, 0.5, -3); !math.IsNaN(v) {
		t.Errorf("1 + LSz < 0 gave %g", v)
	}
	if v := LMSZ(0.5, 10, 0.1, -1); !math.IsNaN(v) {
		t.Errorf("y < 0 gave %g", v)
	}
}

// lmsStratum returns a degree-1 stratum on ages [0, 2] with knots at 0, 1, 2
// whose centiles at each knot age j are exactly Box–Cox normal with
// parameters p[j]: a degree-1 B-spline takes its coefficient's value at its
// knot (exact identity), and between knots it mixes two neighbouring
// distributions.
func lmsStratum(p [3]LMS) Stratum {
	taus := testTaus()
	coef := make([][]float64, len(taus))
	for k, tau := range taus {
		z := distuv.UnitNormal.Quantile(tau)
		coef[k] = []float64{LMSValue(p[0].L, p[0].M, p[0].S, z), LMSValue(p[1].L, p[1].M, p[1].S, z), LMSValue(p[2].L, p[2].M, p[2].S, z)}
	}
	return Stratum{AgeMin: 0, AgeMax: 2, Knots: []float64{0, 0, 1, 2, 2}, Taus: taus, Coef: coef, Chart: testChart}
}

func TestLMSRecovery(t *testing.T) {
	want := [3]LMS{
		{L: 0.3487, M: 3.3464, S: 0.14602}, // WHO weight-for-age boys, birth (from memory)
		{L: -1.2, M: 16, S: 0.09},          // arbitrary, strongly right-skewed in y^L
		{L: 0.0644, M: 9.6479, S: 0.10925}, // WHO weight-for-age boys, 12 months (from memory)
	}
	r := &Reference{Degree: 1, Strata: []Stratum{lmsStratum(want)}}
	for j, w := range want {
		got, err := r.LMS("", float64(j))
		if err != nil {
			t.Fatal(err)
		}
		// Exact Box–Cox centiles: recovered to the golden-section tolerance
		// (1e-9 on L) and rounding; 1e-8 is our margin.
		if !near(got.L, w.L, 1e-8) || !near(got.M, w.M, 1e-8) || !near(got.S, w.S, 1e-8) {
			t.Errorf("age %d: got %+v, want %+v", j, got, w)
		}
		if got.Misfit > 1e-9 {
			t.Errorf("age %d: misfit %g for exact Box–Cox centiles", j, got.Misfit)
		}
	}
	// Between knots the centiles mix two Box–Cox normals: not Box–Cox
	// normal, so some misfit, but a summary near both.
	mid, err := r.LMS("", 0.5)
	if err != nil {
		t.Fatal(err)
	}
	if mid.Misfit < 1e-4 || mid.M < want[0].M || mid.M > want[1].M {
		t.Errorf("mixture: %+v", mid)
	}
}

func TestLMSNormalReference(t *testing.T) {
	// N(mean, sd) is Box–Cox normal with L = 1, M = mean, S = sd/mean
	// (exact identity).
	r := normalRef(20, 3)
	got, err := r.LMS("", 4)
	if err != nil {
		t.Fatal(err)
	}
	if !near(got.L, 1, 1e-6) || !near(got.M, 20, 1e-9) || !near(got.S, 0.15, 1e-8) || got.Misfit > 1e-8 {
		t.Errorf("got %+v, want L 1, M 20, S 0.15", got)
	}
}

func TestLMSErrors(t *testing.T) {
	r := normalRef(1, 1) // centiles below 0 for tau < 0.16
	if _, err := r.LMS("", 3); !errors.Is(err, ErrDegenerate) {
		t.Errorf("non-positive centiles: %v", err)
	}
	r = normalRef(20, 3)
	if _, err := r.LMS("", 11); !errors.Is(err, ErrAgeRange) {
		t.Errorf("age: %v", err)
	}
	if _, err := r.LMS("X", 1); !errors.Is(err, ErrUnknownStratum) {
		t.Errorf("stratum: %v", err)
	}
	r.Strata[0].Taus = []float64{0.01, 0.5, 0.99}
	r.Strata[0].Coef = r.Strata[0].Coef[:3]
	r.Strata[0].Chart = nil
	r.Strata[0].Tail = nil
	if _, err := r.LMS("", 1); !errors.Is(err, ErrDegenerate) {
		t.Errorf("one tau in [0.03, 0.97]: %v", err)
	}
}
