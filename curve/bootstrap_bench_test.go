package curve

import (
	"testing"
	"time"
)

var benchBands []Band

// benchBootstrap times the bootstrap bands of one stratum of n rows of
// lmsTruth with reps replicates, at the smoothness the defaults choose,
// against the least-squares yardstick of the same design measured in the
// same run. The point fit is done once outside the timing.
func benchBootstrap(b *testing.B, reps, n int) {
	if testing.Short() {
		reps /= 10
	}
	d := lmsTruth{}.draw(n, 11)
	c, err := (&Settings{Bootstrap: reps, Penalty: PenaltyAuto}).resolve()
	if err != nil {
		b.Fatal(err)
	}
	groups, _, err := prepare(d, c)
	if err != nil {
		b.Fatal(err)
	}
	r := groups[0]
	pl := newPool(c.workers)
	c.boot = 0
	st, err := fitStratum(pl, r, c)
	if err != nil {
		b.Fatal(err)
	}
	c.boot = reps
	ch, err := chooseSmoothness(pl, r, c)
	if err != nil {
		b.Fatal(err)
	}
	ref := &Reference{AgeScale: c.scale, Degree: c.degree, Strata: []Stratum{*st}}
	var boot, lsq time.Duration
	const lsqRepeats = 5 // average the fast yardstick over a few runs
	for b.Loop() {
		t0 := time.Now()
		bands, err := bootstrapBands(pl, r, ch.model, st, c)
		if err != nil {
			b.Fatal(err)
		}
		boot += time.Since(t0)
		benchBands = bands
		t1 := time.Now()
		for range lsqRepeats {
			benchLSQ = lsqFit(b, d, ref)
		}
		lsq += time.Since(t1) / lsqRepeats
	}
	b.ReportMetric(float64(boot)/float64(lsq), "x-lsq")
	b.ReportMetric(float64(boot.Milliseconds())/float64(b.N), "boot-ms")
	b.ReportMetric(float64(lsq.Microseconds())/1000/float64(b.N), "lsq-ms")
}

func BenchmarkBootstrap200x2e4(b *testing.B) { benchBootstrap(b, 200, 20000) }
