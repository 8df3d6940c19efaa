package curve

import (
	"bytes"
	"errors"
	"math"
	"math/rand/v2"
	"strconv"
	"testing"

	"gonum.org/v1/gonum/stat"
)

// arTruth is a stated longitudinal model whose conditional distribution is
// known: each child's z-score follows a stationary Gaussian autoregression
// in continuous time (an Ornstein–Uhlenbeck process observed at visits),
//
//	z_t = rho(g) z_s + sqrt(1 - rho(g)^2) e,  rho(g) = exp(-g/arScale),  e ~ N(0,1),
//
// with z at the first visit N(0,1), so every visit is marginally N(0,1) and
// the measurement y = value(age, z) is Box–Cox normal by lmsTruth. The true
// conditional z of a later visit is e = (z_t - rho z_s)/sqrt(1 - rho^2).
type arTruth struct{ lmsTruth }

const (
	arScale        = 3.0  // years; the correlation halves in about two years
	arGapLo        = 0.25 // years between visits, uniform on [arGapLo, arGapHi]
	arGapHi        = 1.25
	arVisits       = 4 // visits per child
	arFirstVisitHi = ageMax - arVisits*arGapHi
)

func (arTruth) rho(g float64) float64 { return math.Exp(-g / arScale) }

// children draws n children with arVisits visits each; the returned true z
// of each row lets a test compute the true conditional z.
func (t arTruth) children(n int, seed uint64) (*Data, []float64) {
	rng := rand.New(rand.NewPCG(seed, 13))
	d := &Data{}
	var zs []float64
	for c := range n {
		a := arFirstVisitHi * rng.Float64()
		z := rng.NormFloat64()
		id := "c" + strconv.Itoa(c)
		for v := range arVisits {
			if v > 0 {
				g := arGapLo + (arGapHi-arGapLo)*rng.Float64()
				r := t.rho(g)
				a += g
				z = r*z + math.Sqrt(1-r*r)*rng.NormFloat64()
			}
			d.Age = append(d.Age, a)
			d.Value = append(d.Value, t.value(a, z))
			d.Subject = append(d.Subject, id)
			zs = append(zs, z)
		}
	}
	return d, zs
}

// TestConditionalRecoversAR fits a reference and its conditional model to
// children simulated from arTruth and scores the later visits of fresh
// children: their conditional z must agree with the true conditional z.
// The thresholds are those asked of the method (issue 13): correlation at
// least 0.97, mean absolute error at most 0.12, calibration (mean within
// 0.05 of 0, SD within 0.05 of 1).
func TestConditionalRecoversAR(t *testing.T) {
	// 3000 children (9000 pairs for 20 coefficients per tau) in -short too:
	// at 1500 the SD of the conditional z came out 1.11, the sampling noise
	// of the fitted outer conditional centiles.
	const n = 3000
	var truth arTruth
	d, _ := truth.children(n, 1)
	ref, err := Fit(d, &Settings{Knots: 4, Penalty: PenaltyNone})
	if err != nil {
		t.Fatal(err)
	}
	if err := FitConditional(ref, d, &ConditionalSettings{GapMin: arGapLo, GapMax: arGapHi}); err != nil {
		t.Fatal(err)
	}
	c := ref.Strata[0].Conditional
	t.Logf("conditional model: %d pairs of %d children, %d coefficients per tau", c.Pairs, c.Children, len(c.Coef[0]))

	fresh, z := truth.children(1000, 2)
	var got, want []float64
	skipped := 0
	for i := range fresh.Age {
		if i%arVisits == 0 {
			continue
		}
		sc, err := ref.ScoreChange("", fresh.Age[i-1], fresh.Value[i-1], fresh.Age[i], fresh.Value[i])
		if err != nil {
			if errors.Is(err, ErrPrevRange) || errors.Is(err, ErrAgeRange) {
				skipped++
				continue
			}
			t.Fatal(err)
		}
		r := truth.rho(fresh.Age[i] - fresh.Age[i-1])
		got = append(got, sc.Z)
		want = append(want, (z[i]-r*z[i-1])/math.Sqrt(1-r*r))
	}
	// A few fresh visits fall outside the fitted ranges (previous z beyond
	// the sample's extremes, ages beyond the later visits' range): at most
	// 2% (common practice for a sample of this size).
	if skipped > len(got)/50 {
		t.Errorf("%d of %d fresh visits not scored", skipped, skipped+len(got))
	}
	corr := stat.Correlation(got, want, nil)
	mae := 0.0
	for i := range got {
		mae += math.Abs(got[i] - want[i])
	}
	mae /= float64(len(got))
	mean, sd := stat.MeanStdDev(got, nil)
	t.Logf("%d later visits: correlation %.4f, mean abs error %.4f, mean %.4f, SD %.4f (%d skipped)", len(got), corr, mae, mean, sd, skipped)
	const (
		minCorr = 0.97 // issue 13
		maxMAE  = 0.12 // issue 13
		calTol  = 0.05 // issue 13: mean within 0.05 of 0, SD within 0.05 of 1
	)
	if corr < minCorr {
		t.Errorf("correlation %.4f below %v", corr, minCorr)
	}
	if mae > maxMAE {
		t.Errorf("mean absolute error %.4f above %v", mae, maxMAE)
	}
	if math.Abs(mean) > calTol || math.Abs(sd-1) > calTol {
		t.Errorf("conditional z mean %.4f, SD %.4f: not calibrated within %v", mean, sd, calTol)
	}

	// The conditional centiles in measurement units (NextCentiles) against
	// the truth: the next value of a child at z_s is value(age, rho z_s +
	// sqrt(1-rho^2) Phi^-1(tau)). The error, in true conditional z units,
	// must stay within a quarter of a conditional SD (common practice for a
	// chart's worst point).
	const maxCentileErr = 0.25
	taus := []float64{0.05, 0.25, 0.5, 0.75, 0.95}
	worst := 0.0
	for _, age := range []float64{4, 8, 12} {
		for _, gap := range []float64{0.5, 1} {
			for _, zs := range []float64{-1.5, 0, 1.5} {
				next, err := ref.NextCentiles("", age, truth.value(age, zs), gap, taus)
				if err != nil {
					t.Fatal(err)
				}
				rho := truth.rho(gap)
				for k, tau := range taus {
					e := (truth.z(age+gap, next[k]) - rho*zs) / math.Sqrt(1-rho*rho)
					worst = max(worst, math.Abs(e-normZ(tau)))
				}
			}
		}
	}
	t.Logf("conditional centiles: worst error %.3f conditional SD", worst)
	if worst > maxCentileErr {
		t.Errorf("conditional centiles: worst error %.3f conditional SD, above %v", worst, maxCentileErr)
	}
}

// TestConditionalFileAndErrors checks that the conditional model survives
// Save and Load, that its quantiles never cross on a grid of ages, gaps and
// earlier z-scores (exact: ordered coefficients and non-negative basis
// values), and the errors for visits the model does not cover.
func TestConditionalFileAndErrors(t *testing.T) {
	var truth arTruth
	d, _ := truth.children(600, 3)
	ref, err := Fit(d, &Settings{Knots: 2, Penalty: PenaltyNone})
	if err != nil {
		t.Fatal(err)
	}
	if err := FitConditional(ref, d, &ConditionalSettings{AgeKnots: NoKnots, ZKnots: 1}); err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := Save(&buf, ref); err != nil {
		t.Fatal(err)
	}
	back, err := Load(&buf, "test")
	if err != nil {
		t.Fatal(err)
	}
	c := back.Strata[0].Conditional
	if c == nil || c.Pairs != ref.Strata[0].Conditional.Pairs {
		t.Fatalf("conditional model lost in the file: %+v", c)
	}
	if !(c.GapMin >= arGapLo && c.GapMax <= arGapHi && c.GapMin < c.GapMax) {
		t.Errorf("default gap range [%g, %g] not inside the simulated gaps", c.GapMin, c.GapMax)
	}
	zlo, zhi := c.ZKnots[0], c.ZKnots[len(c.ZKnots)-1]
	var q []float64
	for _, age := range []float64{6, 9, 12, 15} {
		for _, gap := range []float64{c.GapMin, (c.GapMin + c.GapMax) / 2, c.GapMax} {
			for k := range 9 {
				zs := zlo + (zhi-zlo)*float64(k)/8
				if q, err = c.Quantiles(q, back.AgeScale, age, gap, zs); err != nil {
					t.Fatal(err)
				}
				for j := 1; j < len(q); j++ {
					if q[j] < q[j-1] {
						t.Fatalf("age %g gap %g z %g: conditional centiles cross at tau %g", age, gap, zs, c.Taus[j])
					}
				}
			}
		}
	}
	v := truth.value(10, 0)
	if _, err := back.ScoreChange("", 10-5*arGapHi, v, 10, v); !errors.Is(err, ErrGapRange) {
		t.Errorf("gap beyond the model: got %v, want ErrGapRange", err)
	}
	if _, err := back.ScoreChange("", 9.5, truth.value(9.5, zhi+1), 10, v); !errors.Is(err, ErrPrevRange) {
		t.Errorf("previous z beyond the model: got %v, want ErrPrevRange", err)
	}
	d.Subject = nil
	if err := FitConditional(ref, d, nil); !errors.Is(err, ErrData) {
		t.Errorf("no subjects: got %v, want ErrData", err)
	}
	if err := FitConditional(ref, &Data{Age: []float64{1, 2}, Value: []float64{20, 21}, Subject: []string{"a", "a"}}, nil); !errors.Is(err, ErrData) {
		t.Errorf("too few pairs: got %v, want ErrData", err)
	}
	bad := *c
	bad.Coef = [][]float64{c.Coef[1], c.Coef[0]}
	bad.Taus = c.Taus[:2]
	if err := bad.check("x"); !errors.Is(err, ErrInvalid) {
		t.Errorf("unordered coefficients: got %v, want ErrInvalid", err)
	}
}

// TestScoreChanges checks the pairing rules of ScoreChanges against
// ScoreChange on shuffled rows: the previous visit is the most recent
// earlier one at a modelled gap, a first visit has ErrNoPrevious, and a
// child whose only earlier visit is too far back has ErrGapRange.
func TestScoreChanges(t *testing.T) {
	var truth arTruth
	d, _ := truth.children(600, 4)
	ref, err := Fit(d, &Settings{Knots: 2, Penalty: PenaltyNone})
	if err != nil {
		t.Fatal(err)
	}
	if err := FitConditional(ref, d, &ConditionalSettings{GapMin: arGapLo, GapMax: arGapHi, AgeKnots: 1, ZKnots: 1}); err != nil {
		t.Fatal(err)
	}
	// Three children: visits in shuffled order; "far" has a gap of 3 years.
	v := func(a, z float64) float64 { return truth.value(a, z) }
	rows := &Data{
		Age:     []float64{6.5, 5, 9, 5.5, 12, 9},
		Value:   []float64{v(6.5, 0.2), v(5, 0), v(9, 1), v(5.5, 0.1), v(12, 1), v(9, -1)},
		Subject: []string{"a", "a", "far", "a", "far", "solo"},
	}
	got := ref.ScoreChanges(rows)
	// Row 0 (a at 6.5): previous visits at 5.5 (gap 1) and 5 (gap 1.5 >
	// arGapHi): 5.5 is used. Row 3 (a at 5.5): 5 (gap 0.5).
	for _, c := range []struct{ row, prev int }{{0, 3}, {3, 1}} {
		want, err := ref.ScoreChange("", rows.Age[c.prev], rows.Value[c.prev], rows.Age[c.row], rows.Value[c.row])
		if err != nil {
			t.Fatal(err)
		}
		if g := got[c.row]; g.Err != nil || g.Prev != c.prev || g.Z != want.Z {
			t.Errorf("row %d: got %+v, want previous row %d and z %g", c.row, g, c.prev, want.Z)
		}
	}
	for row, want := range map[int]error{1: ErrNoPrevious, 2: ErrNoPrevious, 5: ErrNoPrevious, 4: ErrGapRange} {
		if !errors.Is(got[row].Err, want) || !math.IsNaN(got[row].Z) && got[row].Z != 0 {
			t.Errorf("row %d: got %+v, want %v", row, got[row], want)
		}
	}
}
