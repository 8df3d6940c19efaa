package curve

import (
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

func TestScoreNormal(t *testing.T) {
	const mean, sd = 20, 3 // arbitrary test values
	r := normalRef(mean, sd)
	st := r.Strata[0]
	zLo, zHi := distuv.UnitNormal.Quantile(st.Tail.Lo), distuv.UnitNormal.Quantile(st.Tail.Hi)
	rng := rand.New(rand.NewPCG(1, 2))
	for range 2000 {
		z0 := rng.Float64()*4.6 - 2.3 // inside the grid's z range (|z| < 2.576)
		age := rng.Float64() * 10
		s, err := r.Score("", age, mean+sd*z0)
		if err != nil {
			t.Fatal(err)
		}
		// In the body the normal quantile is linear in z, so linear
		// interpolation in z is exact: the bound is rounding (1e-12, our
		// tolerance). Beyond it the Box–Cox tail fitted to normal centiles
		// is that normal (L = 1, exact identity) up to the fit's rounding
		// and the golden-section tolerance on L (1e-8).
		tol := 1e-12
		if z0 < zLo || z0 > zHi {
			tol = 1e-8
		}
		if !near(s.Z, z0, tol) {
			t.Fatalf("z0 %g: got z %.15g", z0, s.Z)
		}
		if !near(s.Centile, 100*distuv.UnitNormal.CDF(z0), 1e-6) || s.Flags != 0 {
			t.Fatalf("z0 %g: %+v", z0, s)
		}
	}
}

func TestScoreAtGridTaus(t *testing.T) {
	r := twoStrata()
	for _, name := range []string{"F", "M"} {
		for _, age := range []float64{0.5, 2, 24} {
			q, err := r.Curve(nil, name, age)
			if err != nil {
				t.Fatal(err)
			}
			st, _ := r.Stratum(name)
			for k, tau := range st.Taus {
				s, err := r.Score(name, age, q[k])
				if err != nil {
					t.Fatal(err)
				}
				// Exact in the body: a value equal to a fitted quantile
				// scores its level. Beyond it the level goes through the
				// tail model and back (rounding, 1e-13).
				if lo, hi := st.body(); (k >= lo && k <= hi && s.Z != distuv.UnitNormal.Quantile(tau)) ||
					!near(s.Z, distuv.UnitNormal.Quantile(tau), 1e-13) {
					t.Errorf("%s age %g tau %g: z %.17g, want %.17g", name, age, tau, s.Z, distuv.UnitNormal.Quantile(tau))
				}
				if !near(s.Centile, 100*tau, 1e-12) {
					t.Errorf("%s age %g tau %g: centile %.15g", name, age, tau, s.Centile)
				}
			}
		}
	}
}

// TestScoreInterpolationBound scores log-normal quantiles exp(mu + s z0):
// with f(z) = exp(mu + s z) interpolated linearly on [z0, z1] (h = z1-z0),
// the value error is at most h^2/8 max f” and f' >= s exp(mu + s z0), so
// the z error is at most h^2/8 s exp(s h) (interpolation error bound and
// the mean value theorem, exact identities).
func TestScoreInterpolationBound(t *testing.T) {
	const mu, s = 1.2, 0.4 // arbitrary test values
	st := linearStratum("", AgeScale{}, 1, 0, 1, nil, testTaus(), 0, 0,
		func(tau float64) float64 { return math.Exp(mu + s*distuv.UnitNormal.Quantile(tau)) })
	r := &Reference{Degree: 1, Strata: []Stratum{st}}
	for k := 0; k+1 < len(st.Taus); k++ {
		z0, z1 := distuv.UnitNormal.Quantile(st.Taus[k]), distuv.UnitNormal.Quantile(st.Taus[k+1])
		h := z1 - z0
		bound := h*h/8*s*math.Exp(s*h) + 1e-12
		for _, u := range []float64{0.25, 0.5, 0.75} {
			zt := z0 + u*h
			sc, err := r.Score("", 0.3, math.Exp(mu+s*zt))
			if err != nil {
				t.Fatal(err)
			}
			if e := math.Abs(sc.Z - zt); e > bound {
				t.Errorf("z %g: error %g > bound %g", zt, e, bound)
			}
		}
	}
}

func TestScoreMonotone(t *testing.T) {
	r := twoStrata()
	// Add ties: three coincident curves in the middle of F and at its low end.
	st := &r.Strata[0]
	for _, k := range []int{42, 41, 2, 1} { // copy downwards so three coincide
		copy(st.Coef[k], st.Coef[k+1])
	}
	rng := rand.New(rand.NewPCG(3, 4))
	for _, name := range []string{"F", "M"} {
		for _, age := range []float64{0.5, 1.3, 11, 24} {
			q, err := r.Curve(nil, name, age)
			if err != nil {
				t.Fatal(err)
			}
			// Far beyond the grid on both sides, but positive: the Box–Cox
			// tail describes positive measurements.
			lo, hi := q[0]/3, q[len(q)-1]+2*(q[len(q)-1]-q[0])
			var vals []float64
			for range 3000 {
				vals = append(vals, lo+rng.Float64()*(hi-lo))
			}
			vals = append(vals, q...) // every knot and tie exactly
			for _, v := range q {
				vals = append(vals, math.Nextafter(v, math.Inf(-1)), math.Nextafter(v, math.Inf(1)))
			}
			slices.Sort(vals)
			prev := math.Inf(-1)
			for _, v := range vals {
				s, err := r.Score(name, age, v)
				if err != nil {
					t.Fatal(err)
				}
				if s.Z < prev {
					t.Fatalf("%s age %g: z decreases at value %.17g (%.17g < %.17g)", name, age, v, s.Z, prev)
				}
				prev = s.Z
			}
		}
	}
	// A value on three tied curves scores the middle of their levels.
	q, _ := r.Curve(nil, "F", 5)
	s, err := r.Score("F", 5, q[41])
	if err != nil {
		t.Fatal(err)
	}
	// Taus 41..43 coincide (indices into testTaus: 0.41, 0.42, 0.43).
	want := (distuv.UnitNormal.Quantile(st.Taus[41]) + distuv.UnitNormal.Quantile(st.Taus[43])) / 2
	if s.Z != want {
		t.Errorf("tie: z %.17g, want %.17g", s.Z, want)
	}
}

func TestScoreTailRule(t *testing.T) {
	// A stratum whose centiles are exactly Box–Cox normal at every age: the
	// tail model fitted to its body is that Box–Cox normal (exact identity),
	// so values far beyond every fitted curve score their true z.
	const l, m, sc = -0.6, 12.0, 0.14 // a skewed, weight-like distribution (invented)
	st := linearStratum("", AgeScale{}, 1, 0, 1, nil, testTaus(), 0, 0,
		func(tau float64) float64 { return LMSValue(l, m, sc, distuv.UnitNormal.Quantile(tau)) })
	r := (&Reference{Degree: 1, Strata: []Stratum{st}}).withTails()
	for _, z := range []float64{-6, -4.9, -3.5, -3, -2.6, 2.6, 3, 3.5, 4.9, 6} {
		s, err := r.Score("", 0.5, LMSValue(l, m, sc, z))
		if err != nil {
			t.Fatal(err)
		}
		// 1e-7: the Box–Cox fit recovers L to the golden-section
		// tolerance and M, S to rounding.
		if !near(s.Z, z, 1e-7) || !s.Flags.Has(FlagBeyondTail) {
			t.Errorf("z %g: %+v, want z %g, beyond-tail", z, s, z)
		}
		q, err := r.Quantile("", 0.5, distuv.UnitNormal.CDF(z))
		if err != nil || !near(q, LMSValue(l, m, sc, z), 1e-7) {
			t.Errorf("z %g: quantile %g, %v; want %g", z, q, err, LMSValue(l, m, sc, z))
		}
	}
	// Between the body's edge and the grid's end the tail decides too, and
	// the join is continuous: just inside and just outside the edge agree.
	q, _ := r.Curve(nil, "", 0.5)
	lo, _ := r.Strata[0].body()
	in, _ := r.Score("", 0.5, math.Nextafter(q[lo], math.Inf(1)))
	out, _ := r.Score("", 0.5, math.Nextafter(q[lo], math.Inf(-1)))
	if !near(in.Z, out.Z, 1e-9) || in.Z < out.Z {
		t.Errorf("join at the body's edge: %g inside, %g outside", in.Z, out.Z)
	}
	// The rule written out (Tail's doc) on a distribution that is not
	// Box–Cox normal: z = z_lo + Zbc(v) - Zbc(q_lo).
	f := twoStrata()
	fs, _ := f.Stratum("M")
	q, _ = f.Curve(q, "M", 3)
	flo, _ := fs.body()
	v := q[0] * 0.7
	lt, mt, stt := fs.Tail.at(3)
	want := distuv.UnitNormal.Quantile(fs.Taus[flo]) + LMSZ(lt, mt, stt, v) - LMSZ(lt, mt, stt, q[flo])
	if s, err := f.Score("M", 3, v); err != nil || !near(s.Z, want, 1e-12) {
		t.Errorf("written-out rule: %+v %v, want z %g", s, err, want)
	}
}

func TestScoreImplausible(t *testing.T) {
	const mean, sd = 20, 3
	r := normalRef(mean, sd)
	for _, c := range []struct {
		z    float64
		want ScoreFlags
	}{
		{4.99, FlagBeyondTail}, {5.01, FlagBeyondTail | FlagImplausible},
		{-5.01, FlagBeyondTail | FlagImplausible}, {-6, FlagBeyondTail | FlagImplausible},
	} {
		s, err := r.Score("", 1, mean+sd*c.z)
		if err != nil {
			t.Fatal(err)
		}
		if s.Flags != c.want {
			t.Errorf("z %g: flags %v, want %v", c.z, s.Flags, c.want)
		}
	}
	if got := (FlagBeyondTail | FlagImplausible).String(); got != "beyond-tail;implausible" {
		t.Errorf("String = %q", got)
	}
	if got := ScoreFlags(0).String(); got != "" {
		t.Errorf("no flags String = %q", got)
	}
}

func TestScoreSparse(t *testing.T) {
	r := normalRef(20, 3)
	r.Strata[0].Flags = []Flag{
		{Tau: 0.03, AgeLo: 2, AgeHi: 4, Expected: 3, Action: "flagged"},
		{Tau: 0.97, AgeLo: 0, AgeHi: 10, Expected: 3, Action: "dropped"},
	}
	z97 := distuv.UnitNormal.Quantile(0.97)
	for _, c := range []struct {
		age, z float64
		sparse bool
	}{
		{3, -2.5, true},       // below the flagged 3rd centile inside the window
		{3, -1, false},        // above it
		{4, -2.5, false},      // window is [2, 4)
		{1, -2.5, false},      // outside the window
		{3, z97 + 0.1, false}, // "dropped" is not a scoring remark
	} {
		s, err := r.Score("", c.age, 20+3*c.z)
		if err != nil {
			t.Fatal(err)
		}
		if s.Flags.Has(FlagSparse) != c.sparse {
			t.Errorf("age %g z %g: flags %v", c.age, c.z, s.Flags)
		}
	}
}

func TestScoreErrors(t *testing.T) {
	r := twoStrata()
	for _, c := range []struct {
		name       string
		stratum    string
		age, value float64
		want       error
	}{
		{"age low", "F", -1, 10, ErrAgeRange},
		{"age high", "M", 36.5, 10, ErrAgeRange},
		{"age NaN", "M", math.NaN(), 10, ErrAgeRange},
		{"age Inf", "M", math.Inf(1), 10, ErrAgeRange},
		{"unknown stratum", "Z", 5, 10, ErrUnknownStratum},
		{"value NaN", "F", 5, math.NaN(), ErrValue},
		{"value Inf", "F", 5, math.Inf(-1), ErrValue},
	} {
		if _, err := r.Score(c.stratum, c.age, c.value); !errors.Is(err, c.want) {
			t.Errorf("%s: %v, want %v", c.name, err, c.want)
		}
	}
	// All curves equal at an age: nothing to place a value among.
	d := normalRef(1, 1)
	for k := range d.Strata[0].Coef {
		for j := range d.Strata[0].Coef[k] {
			d.Strata[0].Coef[k][j] = 7
		}
	}
	if _, err := d.Score("", 1, 7); !errors.Is(err, ErrDegenerate) {
		t.Errorf("degenerate: %v", err)
	}
}

func TestScoreAllMatchesScore(t *testing.T) {
	n := 100000
	if testing.Short() {
		n = 10000
	}
	r := twoStrata()
	if err := r.ready(); err != nil {
		t.Fatal(err)
	}
	plain := twoStrata() // Score on an unprepared copy: same answers
	rng := rand.New(rand.NewPCG(5, 6))
	d := &Data{Age: make([]float64, n), Value: make([]float64, n), Stratum: make([]string, n)}
	for i := range n {
		d.Stratum[i] = []string{"F", "M"}[rng.IntN(2)]
		d.Age[i] = 0.5 + rng.Float64()*23.5 // inside both strata's ranges
		// Spread far into both tails, but positive: the Box–Cox tail model
		// describes positive measurements.
		d.Value[i] = (4 + 2.2*math.Log(d.Age[i]+1)) * math.Exp(0.4*rng.NormFloat64())
	}
	// A few rows that cannot be scored.
	bad := map[int]error{7: ErrUnknownStratum, 99: ErrValue, 1234: ErrAgeRange}
	d.Stratum[7] = "X"
	d.Value[99] = math.NaN()
	d.Stratum[1234], d.Age[1234] = "F", 30
	got, err := r.ScoreAll(nil, d)
	var rows RowErrors
	if !errors.As(err, &rows) || len(rows) != len(bad) {
		t.Fatalf("ScoreAll error %v, want %d row errors", err, len(bad))
	}
	for _, re := range rows {
		if !errors.Is(re, bad[re.Row]) {
			t.Errorf("row %d: %v, want %v", re.Row, re.Err, bad[re.Row])
		}
	}
	if !errors.Is(err, ErrAgeRange) {
		t.Errorf("errors.Is through RowErrors failed")
	}
	if len(got) != n {
		t.Fatalf("%d scores for %d rows", len(got), n)
	}
	for i := range n {
		want, err := plain.Score(d.Stratum[i], d.Age[i], d.Value[i])
		if err != nil {
			if !got[i].Flags.Has(FlagUnscored) || !math.IsNaN(got[i].Z) {
				t.Fatalf("row %d: unscored row got %+v", i, got[i])
			}
			continue
		}
		if got[i] != want {
			t.Fatalf("row %d: ScoreAll %+v, Score %+v", i, got[i], want)
		}
	}
	// dst is reused.
	again, err := r.ScoreAll(got[:0], d)
	if &again[0] != &got[0] || err == nil {
		t.Errorf("dst not reused or error lost")
	}
	if _, err := r.ScoreAll(nil, &Data{Age: []float64{1}, Value: nil}); !errors.Is(err, ErrData) {
		t.Errorf("mismatched columns: %v", err)
	}
	// No stratum column: the single stratum.
	one := normalRef(20, 3)
	s, err := one.ScoreAll(nil, &Data{Age: []float64{1, 2}, Value: []float64{20, 23}})
	if err != nil || !near(s[0].Z, 0, 1e-12) || !near(s[1].Z, 1, 1e-12) {
		t.Errorf("single stratum: %+v, %v", s, err)
	}
}
