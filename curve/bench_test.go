package curve

import (
	"testing"
	"time"

	"gonum.org/v1/gonum/mat"

	"growband/spline"
)

// Package sinks keep the benchmarked results alive.
var (
	benchRef *Reference
	benchLSQ []float64
)

// lsqFit is the yardstick: the weighted least-squares fit of the same
// B-spline design (the fit's chosen knots), from evaluating the basis
// through the banded normal equations to a Cholesky solve (gonum v0.17.0
// mat).
func lsqFit(b testing.TB, d *Data, ref *Reference) []float64 {
	st := &ref.Strata[0]
	basis, err := spline.New(st.Knots, ref.Degree)
	if err != nil {
		b.Fatal(err)
	}
	p, k := basis.Len(), ref.Degree+1
	xtx := mat.NewSymDense(p, nil)
	xty := mat.NewVecDense(p, nil)
	row := make([]float64, k)
	for i, a := range d.Age {
		t, err := ref.AgeScale.Apply(a)
		if err != nil {
			b.Fatal(err)
		}
		f, err := basis.Eval(row, t)
		if err != nil {
			b.Fatal(err)
		}
		for r := range k {
			xty.SetVec(f+r, xty.AtVec(f+r)+row[r]*d.Value[i])
			for c := r; c < k; c++ {
				xtx.SetSym(f+r, f+c, xtx.At(f+r, f+c)+row[r]*row[c])
			}
		}
	}
	return solveNormal(b, xtx, xty)
}

// benchStratum fits one stratum of n LMS rows with the defaults — chart set,
// full tau grid, smoothness choice — and reports the time against the
// least-squares yardstick measured in the same run.
func benchStratum(b *testing.B, n int) {
	if testing.Short() {
		n /= 10
	}
	d := lmsTruth{}.draw(n, 7)
	var fit, lsq time.Duration
	const lsqRepeats = 5 // average the fast yardstick over a few runs
	for b.Loop() {
		t0 := time.Now()
		built, err := Build(d, commandDefaults())
		if err != nil {
			b.Fatal(err)
		}
		fit += time.Since(t0)
		ref := built.Reference
		benchRef = ref
		t1 := time.Now()
		for range lsqRepeats {
			benchLSQ = lsqFit(b, d, ref)
		}
		lsq += time.Since(t1) / lsqRepeats
	}
	b.ReportMetric(float64(fit)/float64(lsq), "x-lsq")
	b.ReportMetric(float64(len(benchRef.Strata[0].Taus)), "taus")
	b.ReportMetric(float64(benchRef.Strata[0].Smoothness.InteriorKnots), "knots")
}

func BenchmarkBuildStratum1e5(b *testing.B) { benchStratum(b, 100000) }
func BenchmarkBuildStratum1e6(b *testing.B) { benchStratum(b, 1000000) }

// commandDefaults are the settings `growband build` passes to Build for a
// plan that sets nothing (cmd/growband buildSettings on intake's defaults):
// knots, penalty and age scale chosen from the data, the screen at
// DefaultScreenZ, edge problems failing the build.
func commandDefaults() *BuildSettings {
	return &BuildSettings{Fit: Settings{AgeScale: AgeScale{Kind: ScaleAuto}, Penalty: PenaltyAuto}}
}

// solveNormal solves the least-squares normal equations xtx b = xty of a
// yardstick by Cholesky factorisation.
func solveNormal(b testing.TB, xtx *mat.SymDense, xty *mat.VecDense) []float64 {
	var ch mat.Cholesky
	if !ch.Factorize(xtx) {
		b.Fatal("least squares: normal equations not positive definite")
	}
	var coef mat.VecDense
	if err := ch.SolveVecTo(&coef, xty); err != nil {
		b.Fatal(err)
	}
	return coef.RawVector().Data
}
