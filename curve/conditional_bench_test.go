package curve

import (
	"testing"
	"time"

	"gonum.org/v1/gonum/mat"
)

// benchCond keeps the benchmarked conditional model alive.
var benchCond *Conditional

// condLSQ is the yardstick of the conditional fit: the least-squares fit of
// the same dense design (built from the fitted model's knots, as the fit
// builds it) through the normal equations and a Cholesky solve (gonum
// v0.17.0 mat).
func condLSQ(b *testing.B, ref *Reference, d *Data) []float64 {
	st := &ref.Strata[0]
	c := st.Conditional
	idx := visitsOf(d, st.Name)
	pairs, err := ref.pairsOf(st, d, idx, c.GapMin, c.GapMax)
	if err != nil {
		b.Fatal(err)
	}
	cb, err := newCondBasis(c)
	if err != nil {
		b.Fatal(err)
	}
	p := cb.cols()
	xtx := mat.NewSymDense(p, nil)
	xty := mat.NewVecDense(p, nil)
	row := make([]float64, p)
	rv := mat.NewVecDense(p, row)
	for _, pr := range pairs {
		t, err := ref.AgeScale.Apply(pr.t)
		if err != nil {
			b.Fatal(err)
		}
		if err := cb.row(row, t, pr.zs, (pr.gap-c.GapMin)/(c.GapMax-c.GapMin)); err != nil {
			b.Fatal(err)
		}
		xtx.SymRankOne(xtx, 1, rv)
		xty.AddScaledVec(xty, pr.zt, rv)
	}
	return solveNormal(b, xtx, xty)
}

// benchConditional fits the conditional model (the default 25-tau grid,
// 3 + 3 knots, non-crossing) to n visits of arTruth children (n/4 children,
// 3n/4 pairs) against a reference fitted outside the timer, and reports
// the time against the least-squares yardstick of the same design, both
// from the scoring of the visits to the coefficients.
func benchConditional(b *testing.B, n int) {
	if testing.Short() {
		n /= 5
	}
	d, _ := arTruth{}.children(n/arVisits, 5)
	ref, err := Fit(d, &Settings{Knots: 4, Penalty: PenaltyNone})
	if err != nil {
		b.Fatal(err)
	}
	s := &ConditionalSettings{GapMin: arGapLo, GapMax: arGapHi}
	var fit, lsq time.Duration
	const lsqRepeats = 3 // average the fast yardstick over a few runs
	for b.Loop() {
		t0 := time.Now()
		if err := FitConditional(ref, d, s); err != nil {
			b.Fatal(err)
		}
		fit += time.Since(t0)
		benchCond = ref.Strata[0].Conditional
		t1 := time.Now()
		for range lsqRepeats {
			benchLSQ = condLSQ(b, ref, d)
		}
		lsq += time.Since(t1) / lsqRepeats
	}
	b.ReportMetric(float64(fit)/float64(lsq), "x-lsq")
	b.ReportMetric(float64(lsq.Milliseconds())/float64(b.N), "lsq-ms")
	b.ReportMetric(float64(benchCond.Pairs), "pairs")
	b.ReportMetric(float64(len(benchCond.Taus)), "taus")
}

func BenchmarkConditional1e5(b *testing.B) { benchConditional(b, 100000) }
