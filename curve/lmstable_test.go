package curve

import (
	"bytes"
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// publishedBirthLMS is WHO Child Growth Standards 2006, weight-for-age, boys: L, M, S
// at birth (from memory: 0.3487, 3.3464, 0.14602) and at day 1 (only used to
// make a two-row table; its values do not enter any expected number).
const publishedBirthLMS = "# age_unit = days\n# measure = weight\n# unit = kg\nage,L,M,S\n0,0.3487,3.3464,0.14602\n1,0.3127,3.3174,0.14600\n"

func mustTable(t testing.TB, text string, opt *LMSTableOptions) *Reference {
	t.Helper()
	r, err := LoadLMSTable(strings.NewReader(text), "t.csv", opt)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

func TestLMSTablePublishedBirthRows(t *testing.T) {
	// Expected z: computed by hand from the triple above with the formulae of
	// Cole (1990) and the WHO (2006) restricted rule, rounded to 3 decimals.
	cases := []struct {
		y                 float64
		plain, restricted float64
	}{
		{3.0, -0.734, -0.734},
		{5.5, 3.715, 3.768},
		{1.8, -3.819, -3.740},
	}
	for _, tails := range []string{"", TailsPlain, TailsRestricted} {
		r := mustTable(t, publishedBirthLMS, &LMSTableOptions{Tails: tails})
		if r.Measure != "weight" || r.Unit != "kg" || r.AgeUnit != "days" {
			t.Errorf("header keys: %q %q %q", r.Measure, r.Unit, r.AgeUnit)
		}
		for _, c := range cases {
			s, err := r.Score("", 0, c.y)
			if err != nil {
				t.Fatal(err)
			}
			want := c.plain
			if tails == TailsRestricted {
				want = c.restricted
			}
			if math.Abs(s.Z-want) > 0.0005 { // 3-decimal rounding of want
				t.Errorf("tails %q, y %g: z %.4f, want %.3f", tails, c.y, s.Z, want)
			}
			// Centile is 100 Phi(z), Phi from gonum v0.17.0.
			if p := 100 * distuv.UnitNormal.CDF(s.Z); math.Abs(s.Centile-p) > 1e-12 {
				t.Errorf("centile %g, want %g", s.Centile, p)
			}
			beyond := tails == TailsRestricted && math.Abs(want) > 3
			if s.Flags.Has(FlagBeyondTail) != beyond {
				t.Errorf("tails %q, y %g: flags %v", tails, c.y, s.Flags)
			}
		}
	}
	// The tails line of the file is read; the caller's option wins.
	r := mustTable(t, "# tails = restricted\n"+publishedBirthLMS, nil)
	if r.Tails != TailsRestricted {
		t.Fatalf("tails %q", r.Tails)
	}
	if r := mustTable(t, "# tails = restricted\n"+publishedBirthLMS, &LMSTableOptions{Tails: TailsPlain}); r.Tails != TailsPlain {
		t.Fatalf("tails %q after option", r.Tails)
	}
}

func TestLMSTableInterpolation(t *testing.T) {
	// Dyadic values so that the midpoint is exact in binary (exact identity).
	r := mustTable(t, "# age_unit = months\nage,L,M,S\n0,-0.5,3,0.125\n2,1.5,5,0.25\n", nil)
	l, m, s := 0.5, 4.0, 0.1875 // midpoint triple at age 1, exact identity
	for _, tau := range []float64{0.01, 0.1, 0.5, 0.9, 0.99} {
		q, err := r.Quantile("", 1, tau)
		if err != nil {
			t.Fatal(err)
		}
		if want := LMSValue(l, m, s, distuv.UnitNormal.Quantile(tau)); q != want {
			t.Errorf("tau %g: quantile %v, want %v", tau, q, want)
		}
		sc, err := r.Score("", 1, q)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(sc.Centile/100-tau) > 1e-12 { // inverse functions, rounding only
			t.Errorf("tau %g: round trip gives %g", tau, sc.Centile/100)
		}
	}
	if q, _ := r.Quantile("", 1, 0.5); q != m {
		t.Errorf("median %v, want M = %v", q, m)
	}
	// The LMS summary of a table stratum recovers the triple: the centiles
	// are exactly Box–Cox normal, so the profile fit is exact up to its
	// L tolerance (1e-9, lmsTolL).
	got, err := r.LMS("", 1)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(got.L-l) > 1e-6 || math.Abs(got.M-m) > 1e-6 || math.Abs(got.S-s) > 1e-6 || got.Misfit > 1e-6 {
		t.Errorf("LMS %+v, want %g %g %g", got, l, m, s)
	}
	// Tabulated ages give the tabulated triple exactly.
	if q, _ := r.Quantile("", 2, 0.5); q != 5 {
		t.Errorf("median at the last age %v, want 5", q)
	}
	// Curve and Table agree with Quantile at the chart taus.
	cv, err := r.Curve(nil, "", 0.75)
	if err != nil {
		t.Fatal(err)
	}
	tab, err := r.Table("", []float64{0.75}, nil)
	if err != nil {
		t.Fatal(err)
	}
	st, _ := r.Stratum("")
	for k, tau := range st.Taus {
		q, _ := r.Quantile("", 0.75, tau)
		if cv[k] != q || tab.Values[0][k] != q {
			t.Errorf("tau %g: curve %v, table %v, quantile %v", tau, cv[k], tab.Values[0][k], q)
		}
	}
}

func TestLMSTableAgeRange(t *testing.T) {
	r := mustTable(t, publishedBirthLMS, nil)
	for _, age := range []float64{-0.5, 1.5, math.NaN()} {
		_, e1 := r.Score("", age, 3)
		_, e2 := r.Quantile("", age, 0.5)
		_, e3 := r.Velocity("", age, 0.5)
		_, e4 := r.Curve(nil, "", age)
		_, e5 := r.Table("", []float64{0, age}, nil)
		_, e6 := r.LMS("", age)
		for i, err := range []error{e1, e2, e3, e4, e5, e6} {
			if !errors.Is(err, ErrAgeRange) {
				t.Errorf("age %g, call %d: %v, want ErrAgeRange", age, i, err)
			}
		}
	}
	if _, err := r.Score("", 0, -1); !errors.Is(err, ErrValue) {
		t.Errorf("negative value: %v", err)
	}
	if _, err := r.Quantile("", 0, 1); !errors.Is(err, ErrTauRange) {
		t.Errorf("tau 1: %v", err)
	}
}

func TestLMSTableVelocity(t *testing.T) {
	// Second segment crosses L = 0, where the series branch is used.
	r := mustTable(t, "# age_unit = years\nage,L,M,S\n0,-1.2,10,0.08\n1,0.3,12,0.1\n3,-0.0004,15,0.12\n", &LMSTableOptions{Tails: TailsRestricted})
	for _, age := range []float64{0.3, 0.7, 1.2, 2.5, 2.9993} {
		for _, tau := range []float64{0.001, 0.05, 0.5, 0.95, 0.9995} {
			v, err := r.Velocity("", age, tau)
			if err != nil {
				t.Fatal(err)
			}
			const h = 1e-5 // central difference inside one span: error O(h^2)
			a, _ := r.Quantile("", age+h, tau)
			b, _ := r.Quantile("", age-h, tau)
			if fd := (a - b) / (2 * h); math.Abs(v-fd) > 1e-6*(1+math.Abs(fd)) {
				t.Errorf("age %g tau %g: velocity %g, difference quotient %g", age, tau, v, fd)
			}
		}
	}
	// At a tabulated age the span to the right is used.
	v, _ := r.Velocity("", 1, 0.5)
	if want := (15.0 - 12) / 2; math.Abs(v-want) > 1e-12 { // median M is linear, exact
		t.Errorf("median velocity at age 1: %g, want %g", v, want)
	}
}

func TestLMSTableRestrictedRoundTrip(t *testing.T) {
	r := mustTable(t, publishedBirthLMS, &LMSTableOptions{Tails: TailsRestricted})
	for _, z := range []float64{-4.5, -3.2, -3, 0.4, 3, 3.6, 5} {
		q, err := r.Quantile("", 0.5, distuv.UnitNormal.CDF(z))
		if err != nil {
			t.Fatal(err)
		}
		s, err := r.Score("", 0.5, q)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(s.Z-z) > 1e-9 { // inverse rules; Phi^-1(Phi(z)) rounding
			t.Errorf("z %g: quantile %g scores %g", z, q, s.Z)
		}
	}
}

func TestLMSTableStrataAndFiles(t *testing.T) {
	text := "# age_unit = months\nsex;age;L;M;S;note\nmale;0;0.35;3.3;0.146;x\nfemale;0;0.38;3.2;0.141;y\nmale;1;0.23;4.5;0.135;\nfemale;1;0.17;4.2;0.138;\n"
	r := mustTable(t, text, nil)
	if len(r.Strata) != 2 || r.Strata[0].Name != "female" || r.Strata[1].Name != "male" {
		t.Fatalf("strata %+v", r.Strata)
	}
	if m, _ := r.Quantile("male", 1, 0.5); m != 4.5 {
		t.Errorf("male median at 1: %g", m)
	}
	if _, err := r.Score("other", 0, 3); !errors.Is(err, ErrUnknownStratum) {
		t.Errorf("unknown stratum: %v", err)
	}

	// Save and Load give identical scores and keep the tail rule.
	r.Tails = TailsRestricted
	data := saved(t, r)
	back, err := Load(bytes.NewReader(data), "ref.json")
	if err != nil {
		t.Fatal(err)
	}
	if back.Tails != TailsRestricted || back.Strata[1].LMS == nil {
		t.Fatalf("loaded %q %+v", back.Tails, back.Strata[1])
	}
	rng := rand.New(rand.NewPCG(1, 2))
	for range 2000 {
		name := []string{"female", "male"}[rng.IntN(2)]
		age, y := rng.Float64(), 1+rng.Float64()*6
		a, e1 := r.Score(name, age, y)
		b, e2 := back.Score(name, age, y)
		if a != b || e1 != nil || e2 != nil {
			t.Fatalf("%s %g %g: %+v %v vs %+v %v", name, age, y, a, e1, b, e2)
		}
	}

	// LoadFile reads *.csv as a table; Load recognises a table by content.
	dir := t.TempDir()
	csvPath := filepath.Join(dir, "lms-birth.csv")
	txtPath := filepath.Join(dir, "lms-birth.txt")
	for _, p := range []string{csvPath, txtPath} {
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	for _, p := range []string{csvPath, txtPath} {
		got, err := LoadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		if s, _ := got.Score("female", 0, 3.2); s.Z != 0 { // y = M gives z = 0 exactly
			t.Errorf("%s: z of the median %g", p, s.Z)
		}
	}
	// A stratum column given by name.
	if _, err := LoadLMSTable(strings.NewReader(text), "t.csv", &LMSTableOptions{StratumColumn: "Note"}); err == nil {
		t.Error("stratum column note: single rows per stratum accepted")
	}
}

func TestLMSTableCheck(t *testing.T) {
	// Rows drawn from the table itself: Check's shares below the chart
	// centiles fall within their Wilson intervals nearly always; with 7
	// centiles and 2 groups at 95%, 14 intervals, allow 3 misses.
	r := mustTable(t, "# age_unit = months\nage,L,M,S\n0,0.35,3.3,0.146\n12,0.05,9.6,0.11\n24,-0.1,12.2,0.108\n", nil)
	rng := rand.New(rand.NewPCG(5, 6))
	var d Data
	for range 2000 {
		age := rng.Float64() * 24
		l, m, s, _, _, _, _ := lmsAt(&r.Strata[0], age)
		d.Age = append(d.Age, age)
		d.Value = append(d.Value, LMSValue(l, m, s, rng.NormFloat64()))
	}
	diag, err := Check(r, &d, []float64{0, 12, 24})
	if err != nil {
		t.Fatal(err)
	}
	miss := 0
	for _, g := range diag.Groups {
		for _, sh := range g.Shares {
			if sh.Off {
				miss++
			}
		}
	}
	if len(diag.Groups) != 2 || miss > 3 || len(diag.Skipped) != 0 {
		t.Errorf("%d groups, %d shares off, %d skipped", len(diag.Groups), miss, len(diag.Skipped))
	}
}

func TestLMSTableErrors(t *testing.T) {
	const h = "# age_unit = months\n"
	cases := []struct {
		name, text string
		opt        *LMSTableOptions
		want       error
		where      string
	}{
		{"missing column", h + "age,L,M\n0,1,2\n", nil, ErrMalformed, "t.csv:2:"},
		{"not a number", h + "age,L,M,S\n0,1,3,0.1\n1,1,x,0.1\n", nil, ErrMalformed, "t.csv:4:3:"},
		{"S zero", h + "age,L,M,S\n0,1,3,0.1\n1,1,3,0\n", nil, ErrInvalid, "t.csv:4:4:"},
		{"S negative", h + "age,L,M,S\n0,1,3,-0.1\n1,1,3,0.1\n", nil, ErrInvalid, "t.csv:3:4:"},
		{"M negative", h + "age,L,M,S\n0,1,-3,0.1\n1,1,3,0.1\n", nil, ErrInvalid, "t.csv:3:3:"},
		{"ages repeat", h + "age,L,M,S\n0,1,3,0.1\n1,1,3,0.1\n1,1,3,0.1\n", nil, ErrInvalid, "t.csv:5:1:"},
		{"ages decrease", h + "age,L,M,S\n0,1,3,0.1\n2,1,3,0.1\n1,1,3,0.1\n", nil, ErrInvalid, "t.csv:5:"},
		{"short row", h + "age,L,M,S\n0,1,3,0.1\n1,1,3\n", nil, ErrMalformed, "t.csv:4:"},
		{"one row", h + "age,L,M,S\n0,1,3,0.1\n", nil, ErrInvalid, "t.csv:3:"},
		{"no rows", h + "age,L,M,S\n", nil, ErrMalformed, "t.csv:"},
		{"no age unit", "age,L,M,S\n0,1,3,0.1\n1,1,3,0.1\n", nil, ErrInvalid, "age_unit"},
		{"age unit conflict", h + "age,L,M,S\n0,1,3,0.1\n1,1,3,0.1\n", &LMSTableOptions{AgeUnit: "days"}, ErrInvalid, "t.csv:1:"},
		{"bad tails", "# tails = wide\n" + h + "age,L,M,S\n0,1,3,0.1\n1,1,3,0.1\n", nil, ErrInvalid, "t.csv:1:"},
		{"infinite L", h + "age,L,M,S\n0,Inf,3,0.1\n1,1,3,0.1\n", nil, ErrInvalid, "t.csv:3:2:"},
		{"bad centiles", h + "age,L,M,S\n0,1,3,0.1\n1,1,3,0.1\n", &LMSTableOptions{Centiles: []float64{50, 10}}, ErrInvalid, "t.csv:"},
		{"empty", "", nil, ErrMalformed, "t.csv:"},
	}
	for _, c := range cases {
		_, err := LoadLMSTable(strings.NewReader(c.text), "t.csv", c.opt)
		if !errors.Is(err, c.want) || !strings.Contains(err.Error(), c.where) {
			t.Errorf("%s: %v, want %v at %q", c.name, err, c.want, c.where)
		}
	}
	// Not a table and not JSON: still ErrNotReference from Load.
	if _, err := Load(strings.NewReader("a,b\n1,2\n"), "x"); !errors.Is(err, ErrNotReference) {
		t.Errorf("Load of other CSV: %v", err)
	}
}

func FuzzLoadLMSTable(f *testing.F) {
	f.Add([]byte(publishedBirthLMS))
	f.Add([]byte("# age_unit = months\nsex;age;L;M;S\nm;0;0.3;3;0.1\nm;1;0.3;3;0.1\n"))
	f.Add([]byte("# tails = restricted\n# age_unit = d\nage,L,M,S\n0,0,1e-300,1e300\n1,-1e300,1,1\n"))
	f.Add([]byte("age,L,M,S\n\"0,1,2,3\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		r, err := LoadLMSTable(bytes.NewReader(data), "fuzz.csv", nil)
		if err != nil {
			return
		}
		if err := r.Validate(); err != nil {
			t.Fatalf("loaded table fails Validate: %v", err)
		}
		st := &r.Strata[0]
		_, _ = r.Score(st.Name, st.AgeMin, 1)
		_, _ = r.Quantile(st.Name, st.AgeMax, 0.97)
		_, _ = r.Velocity(st.Name, (st.AgeMin+st.AgeMax)/2, 0.5)
		_, _ = r.LMS(st.Name, st.AgeMin)
	})
}
