package cohort

import (
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"

	"growband/curve"
)

// testTable is a small LMS table written for the tests (invented numbers of
// a plausible shape; growband ships no third-party tables), shared with the
// command's tests.
var testTable = func() string {
	b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "invented-weight-lms.csv"))
	if err != nil {
		panic(err)
	}
	return string(b)
}()

func testRef(t testing.TB) *curve.Reference {
	t.Helper()
	r, err := curve.LoadLMSTable(strings.NewReader(testTable), "test.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

// valueAt is the measurement of z-score z under ref: its quantile of level
// Phi(z), which for an LMS table is LMSValue(L, M, S, z).
func valueAt(t testing.TB, ref *curve.Reference, stratum string, age, z float64) float64 {
	y, err := ref.Quantile(stratum, age, distuv.UnitNormal.CDF(z))
	if err != nil {
		t.Fatal(err)
	}
	return y
}

// simulate draws children x visits rows from ref with z = shift + a child
// effect (correlation rho between a child's visits) + noise, marginally
// N(shift, 1). visits = 1 gives independent rows.
func simulate(t testing.TB, ref *curve.Reference, rng *rand.Rand, children, visits int, rho, shift float64, ids bool) *curve.Data {
	d := &curve.Data{}
	for c := range children {
		sex := []string{"boys", "girls"}[c%2]
		u := rng.NormFloat64()
		for range visits {
			age := rng.Float64() * 60
			z := shift + math.Sqrt(rho)*u + math.Sqrt(1-rho)*rng.NormFloat64()
			d.Age = append(d.Age, age)
			d.Value = append(d.Value, valueAt(t, ref, sex, age, z))
			d.Stratum = append(d.Stratum, sex)
			if ids {
				d.Subject = append(d.Subject, string(rune('A'+c%26))+itoa(c))
			}
		}
	}
	return d
}

func itoa(i int) string {
	if i == 0 {
		return "0"
	}
	var b []byte
	for ; i > 0; i /= 10 {
		b = append([]byte{byte('0' + i%10)}, b...)
	}
	return string(b)
}

func overall(t testing.TB, r *Result) Summary {
	t.Helper()
	g := r.Groups[len(r.Groups)-1]
	if g.Kind != KindAll {
		t.Fatalf("last group is %q", g.Kind)
	}
	return g
}

func TestCompareRecoversShift(t *testing.T) {
	ref := testRef(t)
	rng := rand.New(rand.NewPCG(1, 1))
	const shift = -0.5
	d := simulate(t, ref, rng, 3000, 1, 0, shift, false)
	res, err := Compare(ref, d, &Options{Bands: []float64{0, 12, 24, 60}})
	if err != nil {
		t.Fatal(err)
	}
	g := overall(t, res)
	if g.N != 3000 || res.Scored != 3000 || len(res.Unscored) != 0 {
		t.Fatalf("n %d scored %d unscored %v", g.N, res.Scored, res.Unscored)
	}
	if !(g.Mean.Lo <= shift && shift <= g.Mean.Hi) {
		t.Errorf("mean z %+v does not cover %g", g.Mean, shift)
	}
	want := distuv.UnitNormal.CDF(-2 - shift) // share below -2 under N(shift,1)
	if !(g.Below2.Lo <= want && want <= g.Below2.Hi) {
		t.Errorf("share below -2 %+v does not cover %g", g.Below2, want)
	}
	if math.Abs(g.SD-1) > 0.05 { // SE of an SD of 3000 normals is 0.013: ~4 SE
		t.Errorf("SD %g", g.SD)
	}
	// Expected shares are the exact normal values: Phi(-2) = 0.0227501319,
	// Phi(-3) = 0.0013498980 (normal tables, from memory).
	if math.Abs(g.Below2.Expected-0.0227501319) > 1e-9 || math.Abs(g.Below3.Expected-0.0013498980) > 1e-9 ||
		math.Abs(g.Above2.Expected-0.0227501319) > 1e-9 {
		t.Errorf("expected shares %g %g %g", g.Below2.Expected, g.Below3.Expected, g.Above2.Expected)
	}
	// 3 bands x 2 strata + 2 strata + overall; band counts add up.
	if len(res.Groups) != 9 {
		t.Fatalf("%d groups", len(res.Groups))
	}
	sum := 0
	for _, gr := range res.Groups {
		if gr.Kind == KindBand {
			sum += gr.N
		}
		if !plainWilson(gr) {
			t.Errorf("plain rows: design effects %g %g %g", gr.Below2.DEff, gr.Below3.DEff, gr.Above2.DEff)
		}
	}
	if sum != 3000 {
		t.Errorf("bands hold %d rows", sum)
	}
	if res.Clustered || res.Weighted || !strings.Contains(res.Method, "independent") {
		t.Errorf("method %q", res.Method)
	}
}

// plainWilson reports that every share used the plain Wilson interval.
func plainWilson(s Summary) bool {
	return s.Below2.DEff == 1 && s.Below3.DEff == 1 && s.Above2.DEff == 1
}

func TestCompareCoverage(t *testing.T) {
	sims := 400
	if testing.Short() {
		sims = 150
	}
	// Tolerance: 4 binomial standard errors of a coverage of 0.95 over sims
	// simulations (common practice for Monte Carlo checks).
	tol := 4 * math.Sqrt(0.95*0.05/float64(sims))
	ref := testRef(t)
	const shift, rho = -0.7, 0.7 // share below -2 is Phi(-1.3), about 0.097
	wantP := distuv.UnitNormal.CDF(-2 - shift)
	cases := []struct {
		name             string
		children, visits int
		ids              bool
		under            bool // intervals expected to under-cover
	}{
		{"independent rows", 600, 1, false, false},
		{"3 visits, naive", 200, 3, false, true},
		{"3 visits, clustered", 200, 3, true, false},
	}
	rng := rand.New(rand.NewPCG(7, 8))
	for _, c := range cases {
		var covMean, covShare int
		for range sims {
			r := rho
			if c.visits == 1 {
				r = 0
			}
			d := simulate(t, ref, rng, c.children, c.visits, r, shift, c.ids)
			res, err := Compare(ref, d, nil)
			if err != nil {
				t.Fatal(err)
			}
			g := overall(t, res)
			if g.Mean.Lo <= shift && shift <= g.Mean.Hi {
				covMean++
			}
			if g.Below2.Lo <= wantP && wantP <= g.Below2.Hi {
				covShare++
			}
		}
		cm, cs := float64(covMean)/float64(sims), float64(covShare)/float64(sims)
		t.Logf("%s: coverage mean %.3f, share %.3f (tolerance %.3f)", c.name, cm, cs, tol)
		if c.under {
			if cm > 0.95-tol || cs > 0.95-tol {
				t.Errorf("%s: naive intervals should under-cover: %.3f %.3f", c.name, cm, cs)
			}
		} else if math.Abs(cm-0.95) > tol || math.Abs(cs-0.95) > tol {
			t.Errorf("%s: coverage %.3f %.3f, want 0.95 ± %.3f", c.name, cm, cs, tol)
		}
	}
}

func TestCompareUnscoredAndWeights(t *testing.T) {
	ref := testRef(t)
	d := &curve.Data{
		Age:     []float64{6, 70, 6, 6, 6, 30},
		Value:   []float64{7, 20, math.NaN(), 7, 7, 13},
		Stratum: []string{"boys", "boys", "boys", "other", "girls", "girls"},
		Weight:  []float64{1, 1, 1, 1, 0, 2},
	}
	res, err := Compare(ref, d, nil)
	if err != nil {
		t.Fatal(err)
	}
	if res.Scored != 2 || len(res.Unscored) != 4 {
		t.Fatalf("scored %d, unscored %+v", res.Scored, res.Unscored)
	}
	wantRows := []int{1, 2, 3, 4}
	wantText := []string{"outside", "not a finite", "unknown stratum", "weight 0"}
	for k, u := range res.Unscored {
		if u.Row != wantRows[k] || !strings.Contains(u.Reason, wantText[k]) {
			t.Errorf("unscored %d: %+v, want row %d with %q", k, u, wantRows[k], wantText[k])
		}
	}
	if !math.IsNaN(res.Z[1]) || math.IsNaN(res.Z[0]) {
		t.Errorf("z %v", res.Z)
	}

	// Weight 2 on a row is the same estimate as the row twice (exact
	// identity for ratio estimates).
	rng := rand.New(rand.NewPCG(3, 4))
	base := simulate(t, ref, rng, 300, 1, 0, 0.3, false)
	w := &curve.Data{Age: base.Age, Value: base.Value, Stratum: base.Stratum, Weight: make([]float64, len(base.Age))}
	dup := &curve.Data{}
	for i := range base.Age {
		w.Weight[i] = float64(1 + i%2)
		for range 1 + i%2 {
			dup.Age = append(dup.Age, base.Age[i])
			dup.Value = append(dup.Value, base.Value[i])
			dup.Stratum = append(dup.Stratum, base.Stratum[i])
		}
	}
	rw, err := Compare(ref, w, nil)
	if err != nil {
		t.Fatal(err)
	}
	rd, err := Compare(ref, dup, nil)
	if err != nil {
		t.Fatal(err)
	}
	gw, gd := overall(t, rw), overall(t, rd)
	if math.Abs(gw.Mean.Value-gd.Mean.Value) > 1e-12 || math.Abs(gw.Below2.Value-gd.Below2.Value) > 1e-12 || gw.SumW != float64(gd.N) {
		t.Errorf("weighted %+v vs duplicated %+v", gw.Mean, gd.Mean)
	}
	if !rw.Weighted || !strings.Contains(rw.Method, "weighted") {
		t.Errorf("method %q", rw.Method)
	}

	if _, err := Compare(ref, d, &Options{Bands: []float64{5, 1}}); !errors.Is(err, ErrOptions) {
		t.Errorf("bad bands: %v", err)
	}
	if _, err := Compare(ref, &curve.Data{Age: []float64{1}}, nil); !errors.Is(err, ErrData) {
		t.Errorf("ragged data: %v", err)
	}
	if _, err := Compare(ref, &curve.Data{Age: []float64{100}, Value: []float64{3}}, nil); !errors.Is(err, ErrData) {
		t.Errorf("nothing scored: %v", err)
	}
}

func TestBandsEdges(t *testing.T) {
	ref := testRef(t)
	d := &curve.Data{
		Age:     []float64{0, 5.9, 6, 12, 13},
		Value:   []float64{3.3, 7, 7.5, 9.6, 10},
		Stratum: []string{"boys", "boys", "boys", "boys", "boys"},
	}
	res, err := Compare(ref, d, &Options{Bands: []float64{0, 6, 12}})
	if err != nil {
		t.Fatal(err)
	}
	// [0,6) holds 2 rows, [6,12] (last band closed) 2, age 13 none.
	if res.Groups[0].N != 2 || res.Groups[1].N != 2 || res.OutsideBands != 1 || res.Groups[2].Kind != KindStratum || res.Groups[2].N != 5 {
		t.Errorf("groups %+v, outside %d", res.Groups, res.OutsideBands)
	}
}

func TestWilsonPublished(t *testing.T) {
	// Newcombe R G (1998), Statistics in Medicine 17, 857–872, Table II,
	// score method (from memory): 81/263 gives 0.2553–0.3662 and 15/148
	// gives 0.0624–0.1605; 4 decimals published.
	c := distuv.UnitNormal.Quantile(0.975)
	for _, x := range []struct{ k, n, lo, hi float64 }{{81, 263, 0.2553, 0.3662}, {15, 148, 0.0624, 0.1605}} {
		lo, hi := wilson(x.k/x.n, x.n, c)
		if math.Abs(lo-x.lo) > 5e-5 || math.Abs(hi-x.hi) > 5e-5 {
			t.Errorf("%g/%g: [%.4f, %.4f], want [%.4f, %.4f]", x.k, x.n, lo, hi, x.lo, x.hi)
		}
	}
	// Newcombe R G (1998), Statistics in Medicine 17, 873–890, method 10
	// (from memory): 56/70 - 48/80 gives 0.0524 to 0.3339.
	mk := func(k, n float64) Share {
		lo, hi := wilson(k/n, n, c)
		return Share{Estimate: Estimate{Value: k / n, Lo: lo, Hi: hi}}
	}
	d := shareDiff(mk(56, 70), mk(48, 80))
	if math.Abs(d.Lo-0.0524) > 5e-5 || math.Abs(d.Hi-0.3339) > 5e-5 {
		t.Errorf("difference interval [%.4f, %.4f], want [0.0524, 0.3339]", d.Lo, d.Hi)
	}
}

func TestCompareTwo(t *testing.T) {
	ref := testRef(t)
	rng := rand.New(rand.NewPCG(11, 12))
	a := simulate(t, ref, rng, 1500, 1, 0, 0, false)
	b := simulate(t, ref, rng, 1500, 1, 0, -0.5, false)
	res, err := CompareTwo(ref, a, b, &Options{Name: "A", VsName: "B"})
	if err != nil {
		t.Fatal(err)
	}
	last := res.Diffs[len(res.Diffs)-1]
	if last.Kind != KindAll || !(last.Mean.Lo <= 0.5 && 0.5 <= last.Mean.Hi) {
		t.Errorf("mean difference %+v, want to cover 0.5", last.Mean)
	}
	wantD := distuv.UnitNormal.CDF(-2) - distuv.UnitNormal.CDF(-1.5)
	if !(last.Below2.Lo <= wantD && wantD <= last.Below2.Hi) {
		t.Errorf("share difference %+v, want to cover %g", last.Below2, wantD)
	}
	if res.A.Cohort != "A" || res.B.Cohort != "B" || len(res.Diffs) != 3 {
		t.Errorf("names %q %q, %d diffs", res.A.Cohort, res.B.Cohort, len(res.Diffs))
	}
}

func TestCompareReferences(t *testing.T) {
	// With L = 0 in both tables and M_B = M_A exp(S delta), B's centile of
	// level tau lies exactly delta above A's in A's z units (exact identity;
	// linear interpolation keeps the ratio M_B/M_A constant).
	const delta = 0.25
	ta := "# age_unit = months\nage,L,M,S\n0,0,3.3,0.12\n24,0,12,0.12\n"
	ma, mb := 3.3*math.Exp(0.12*delta), 12*math.Exp(0.12*delta)
	tb := "# age_unit = months\nage,L,M,S\n0,0," + ftoa(ma) + ",0.12\n24,0," + ftoa(mb) + ",0.12\n"
	a, err := curve.LoadLMSTable(strings.NewReader(ta), "a.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	b, err := curve.LoadLMSTable(strings.NewReader(tb), "b.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	rd, err := CompareReferences(a, b, []float64{0, 5, 12.5, 24, 30}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(rd.Curves) != 7 || len(rd.Notes) != 1 {
		t.Fatalf("%d curves, notes %v", len(rd.Curves), rd.Notes)
	}
	for _, c := range rd.Curves {
		for k, v := range c.Diff {
			if math.Abs(v-delta) > 1e-9 { // rounding of exp/log and M's decimal text
				t.Errorf("tau %g age %g: diff %g, want %g", c.Tau, c.Ages[k], v, delta)
			}
		}
	}
	self, err := CompareReferences(a, a, nil, []float64{0.1, 0.5})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range self.Curves {
		for _, v := range c.Diff {
			if math.Abs(v) > 1e-9 {
				t.Errorf("self comparison: diff %g", v)
			}
		}
	}
	b.AgeUnit = "years"
	if _, err := CompareReferences(a, b, nil, nil); !errors.Is(err, ErrNoCommon) {
		t.Errorf("age units: %v", err)
	}
}

func ftoa(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }

func TestSandwichIdentities(t *testing.T) {
	ref := testRef(t)
	rng := rand.New(rand.NewPCG(21, 22))
	d := simulate(t, ref, rng, 400, 1, 0, 0.2, false)
	res, err := Compare(ref, d, nil)
	if err != nil {
		t.Fatal(err)
	}
	g := overall(t, res)
	z := finite(res.Z)
	n := float64(len(z))
	// Unweighted rows without ids: the sandwich SE is s/sqrt(n) and the
	// interval the Student t one (exact identity; s and t from gonum v0.17.0).
	s := stat.StdDev(z, nil)
	tq := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: n - 1}.Quantile(0.975)
	if math.Abs(g.Mean.SE-s/math.Sqrt(n)) > 1e-12 || math.Abs(g.Mean.Lo-(stat.Mean(z, nil)-tq*s/math.Sqrt(n))) > 1e-12 || math.Abs(g.SD-s) > 1e-12 {
		t.Errorf("SE %g, want %g; lo %g; sd %g vs %g", g.Mean.SE, s/math.Sqrt(n), g.Mean.Lo, g.SD, s)
	}
	// Every row visited twice under one id: the clustered SE is that of the
	// rows once, and the share's Wilson interval the one of n rows (exact
	// identity: a repeated visit carries no new information).
	twice := &curve.Data{}
	for i := range d.Age {
		for range 2 {
			twice.Age = append(twice.Age, d.Age[i])
			twice.Value = append(twice.Value, d.Value[i])
			twice.Stratum = append(twice.Stratum, d.Stratum[i])
			twice.Subject = append(twice.Subject, itoa(i))
		}
	}
	rt, err := Compare(ref, twice, nil)
	if err != nil {
		t.Fatal(err)
	}
	gt := overall(t, rt)
	if math.Abs(gt.Mean.SE-g.Mean.SE) > 1e-12 || math.Abs(gt.Mean.Lo-g.Mean.Lo) > 1e-12 || gt.Subjects != 400 {
		t.Errorf("twice: SE %g lo %g, want %g %g", gt.Mean.SE, gt.Mean.Lo, g.Mean.SE, g.Mean.Lo)
	}
	// deff = V/(p(1-p)/2n) with V = p(1-p)/(n-1): deff = 2n/(n-1), so
	// n_eff = (n-1) rows, within rounding.
	if math.Abs(gt.Below2.NEff-(n-1)) > 1e-9 || !rt.Clustered || !strings.Contains(rt.Method, "cluster-robust") {
		t.Errorf("twice: n_eff %g, want %g; method %q", gt.Below2.NEff, n-1, rt.Method)
	}
}

// finite returns the finite values of z.
func finite(z []float64) []float64 {
	var out []float64
	for _, v := range z {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			out = append(out, v)
		}
	}
	return out
}
