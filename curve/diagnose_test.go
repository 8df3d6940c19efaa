package curve

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

func TestWilson(t *testing.T) {
	// Newcombe (1998), Statistics in Medicine 17, 857–872, Table I, Wilson
	// score interval without continuity correction (from memory).
	for _, c := range []struct {
		k, n   int
		lo, hi float64
	}{
		{81, 263, 0.2553, 0.3662},
		{15, 148, 0.0624, 0.1605},
		{0, 20, 0.0000, 0.1611},
		{1, 29, 0.0061, 0.1718},
	} {
		lo, hi := wilson(c.k, c.n, 0.95)
		if math.Round(lo*1e4)/1e4 != c.lo || math.Round(hi*1e4)/1e4 != c.hi {
			t.Errorf("%d/%d: [%.4f, %.4f], table [%.4f, %.4f]", c.k, c.n, lo, hi, c.lo, c.hi)
		}
	}
	// Symmetry: the interval for n-k is the mirror of the one for k (exact
	// identity), and it always holds the observed share.
	for n := 1; n <= 60; n++ {
		for k := 0; k <= n; k++ {
			lo, hi := wilson(k, n, 0.95)
			mlo, mhi := wilson(n-k, n, 0.95)
			if !near(lo, 1-mhi, 1e-14) || !near(hi, 1-mlo, 1e-14) {
				t.Fatalf("%d/%d: [%g, %g] not the mirror of [%g, %g]", k, n, lo, hi, mlo, mhi)
			}
			p := float64(k) / float64(n)
			if p < lo-1e-15 || p > hi+1e-15 {
				t.Fatalf("%d/%d: share %g outside [%g, %g]", k, n, p, lo, hi)
			}
		}
	}
}

func TestMoments(t *testing.T) {
	// z = -1, 0, 1, 2: mean 1/2, variance 5/3, m3 = 0, b2 = 2.5625/1.5625
	// (exact arithmetic by hand).
	mean, sd, skew, kurt := moments([]float64{-1, 0, 1, 2})
	if mean != 0.5 || !near(sd, math.Sqrt(5.0/3), 1e-15) || skew != 0 || !near(kurt, 1.64, 1e-15) {
		t.Errorf("moments = %g %g %g %g", mean, sd, skew, kurt)
	}
}

// TestShapeTransforms checks that the Wilson–Hilferty, D'Agostino and
// Anscombe–Glynn transforms (recalled from memory) make roughly standard
// normal variates of normal samples: the property they are built for.
// Tolerances are ours: 4 standard errors of the replicate mean, and 0.08 on
// the SD.
func TestShapeTransforms(t *testing.T) {
	reps := 4000
	if testing.Short() {
		reps = 1000
	}
	rng := rand.New(rand.NewPCG(11, 12))
	for _, n := range []int{25, 100} {
		var v1, v2, s1, s2, k1, k2 float64
		x := make([]float64, n)
		for range reps {
			for i := range x {
				x[i] = rng.NormFloat64()
			}
			_, sd, sb1, b2 := moments(x)
			zv, zs, zk := varZ(sd, n), skewZ(sb1, n), kurtZ(b2, n)
			v1 += zv
			v2 += zv * zv
			s1 += zs
			s2 += zs * zs
			k1 += zk
			k2 += zk * zk
		}
		r := float64(reps)
		for _, c := range []struct {
			name    string
			sum, sq float64
		}{{"variance", v1, v2}, {"skewness", s1, s2}, {"kurtosis", k1, k2}} {
			m := c.sum / r
			sd := math.Sqrt(c.sq/r - m*m)
			if math.Abs(m) > 4/math.Sqrt(r) || math.Abs(sd-1) > 0.08 {
				t.Errorf("n %d %s transform: mean %.3f, SD %.3f over %d normal samples", n, c.name, m, sd, reps)
			}
		}
	}
	// Worked examples of the SciPy documentation of scipy.stats.skewtest
	// (data 2, 8, 0, 4, 1, 9, 9, 0: statistic 0.44626385374196975) and
	// scipy.stats.kurtosistest (data 0, 1, ..., 19: statistic
	// -1.7058104152122062), both from memory; SciPy implements the same
	// published transforms independently.
	_, _, sb1, _ := moments([]float64{2, 8, 0, 4, 1, 9, 9, 0})
	if z := skewZ(sb1, 8); !near(z, 0.44626385374196975, 1e-12) {
		t.Errorf("skewness example: %.17g", z)
	}
	ramp := make([]float64, 20)
	for i := range ramp {
		ramp[i] = float64(i)
	}
	_, _, _, b2 := moments(ramp)
	if z := kurtZ(b2, 20); !near(z, -1.7058104152122062, 1e-12) {
		t.Errorf("kurtosis example: %.17g", z)
	}
	// A symmetric sample has zero skewness and transform (exact identity).
	if z := skewZ(0, 30); z != 0 {
		t.Errorf("skewZ(0) = %g", z)
	}
	// Heavy tails raise b2 and the kurtosis variate; a flat sample lowers it.
	if kurtZ(6, 200) < 3 || kurtZ(1.8, 200) > -3 {
		t.Errorf("kurtosis transform has the wrong sign: %g %g", kurtZ(6, 200), kurtZ(1.8, 200))
	}
}

// sampleData draws n rows on ages [0, 10] with values 20 + 3*e, e from gen:
// for gen standard normal they follow normalRef(20, 3) exactly.
func sampleData(n int, seed uint64, gen func(*rand.Rand) float64) *Data {
	rng := rand.New(rand.NewPCG(seed, 99))
	d := &Data{Age: make([]float64, n), Value: make([]float64, n)}
	for i := range n {
		d.Age[i] = rng.Float64() * 10
		d.Value[i] = 20 + 3*gen(rng)
	}
	return d
}

func normal(rng *rand.Rand) float64 { return rng.NormFloat64() }

func TestCheckNull(t *testing.T) {
	reps := 40
	if testing.Short() {
		reps = 10
	}
	r := normalRef(20, 3)
	var sig [4]int
	off, shares := 0, 0
	for rep := range reps {
		d := sampleData(1000, uint64(rep), normal)
		dg, err := Check(r, d, nil)
		if err != nil {
			t.Fatal(err)
		}
		if len(dg.Groups) != 10 || len(dg.Q) != 1 || dg.Q[0].Groups != 10 || len(dg.Skipped) != 0 {
			t.Fatalf("shape: %d groups, %d Q, %d skipped", len(dg.Groups), len(dg.Q), len(dg.Skipped))
		}
		q := dg.Q[0]
		for i, s := range []QStat{q.Mean, q.Variance, q.Skewness, q.Kurtosis} {
			if s.DF != 10 || !(s.P >= 0 && s.P <= 1) {
				t.Fatalf("Q%d: %+v", i+1, s)
			}
			if s.P < 0.05 {
				sig[i]++
			}
		}
		for _, g := range dg.Groups {
			for _, s := range g.Shares {
				shares++
				if s.Off {
					off++
				}
			}
		}
	}
	// At the 5% level about 5% of null tests reject; a fifth is far beyond
	// chance for 40 replicates (binomial tail, our threshold).
	for i, n := range sig {
		if n > reps/5 {
			t.Errorf("Q%d significant in %d of %d null replicates", i+1, n, reps)
		}
	}
	if frac := float64(off) / float64(shares); frac > 0.1 {
		t.Errorf("%.1f%% of null centile shares flagged, want about 5%%", 100*frac)
	}
}

func TestCheckDetects(t *testing.T) {
	r := normalRef(20, 3)
	t5 := distuv.StudentsT{Mu: 0, Sigma: math.Sqrt(3.0 / 5), Nu: 5} // unit variance, kurtosis 9
	cases := []struct {
		name string
		gen  func(*rand.Rand) float64
		q    func(QTests) QStat
	}{
		{"shift", func(g *rand.Rand) float64 { return g.NormFloat64() + 0.3 }, func(q QTests) QStat { return q.Mean }},
		{"spread", func(g *rand.Rand) float64 { return 1.3 * g.NormFloat64() }, func(q QTests) QStat { return q.Variance }},
		{"skew", func(g *rand.Rand) float64 { return g.ExpFloat64() - 1 }, func(q QTests) QStat { return q.Skewness }},
		{"tails", func(g *rand.Rand) float64 {
			t5.Src = g
			return t5.Rand()
		}, func(q QTests) QStat { return q.Kurtosis }},
	}
	for _, c := range cases {
		d := sampleData(2000, 7, c.gen)
		dg, err := Check(r, d, nil)
		if err != nil {
			t.Fatal(err)
		}
		if s := c.q(dg.Q[0]); !(s.P < 1e-4) {
			t.Errorf("%s: %+v, want P < 1e-4", c.name, s)
		}
	}
	// z shifted by 0.6: the share below the median drops to Phi(-0.6) =
	// 0.274 in every group of 200, about 7 standard errors from 0.5.
	d := sampleData(2000, 8, func(g *rand.Rand) float64 { return g.NormFloat64() + 0.6 })
	dg, err := Check(r, d, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, g := range dg.Groups {
		med := g.Shares[3]
		if med.Tau != 0.5 || !med.Off || med.Observed > 0.4 {
			t.Errorf("shift, ages %g-%g: median share %+v", g.AgeLo, g.AgeHi, med)
		}
	}
}

func TestCheckCountsAndSkips(t *testing.T) {
	r := twoStrata()
	d := &Data{
		Age:     []float64{1, 2, 30, 3, 4, 5, 6, 0.2, 7},
		Value:   []float64{9, 10, 11, math.NaN(), 12, 13, 14, 9, 15},
		Stratum: []string{"F", "F", "F", "F", "X", "M", "M", "M", "M"},
		Weight:  []float64{1, 1, 1, 1, 1, 0, 1, 1, 2},
	}
	dg, err := Check(r, d, nil)
	if err != nil {
		t.Fatal(err)
	}
	want := map[int]string{2: "age", 3: "finite", 4: "unknown stratum", 5: "weight", 7: "age"}
	if len(dg.Skipped) != len(want) {
		t.Fatalf("skipped %+v", dg.Skipped)
	}
	for i, s := range dg.Skipped {
		if !strings.Contains(s.Reason, want[s.Row]) || (i > 0 && s.Row <= dg.Skipped[i-1].Row) {
			t.Errorf("skipped %+v, want reason with %q, rows in order", s, want[s.Row])
		}
	}
	used := 0
	for _, g := range dg.Groups {
		used += g.N
	}
	if used+len(dg.Skipped) != len(d.Age) || len(dg.Groups) != 2 {
		t.Errorf("%d rows used, %d skipped, %d groups", used, len(dg.Skipped), len(dg.Groups))
	}
	// Below counts are the rows under the fitted centile at their age.
	for _, g := range dg.Groups {
		for _, s := range g.Shares {
			below := 0
			for i := range d.Age {
				if _, skip := want[i]; skip || d.Stratum[i] != g.Stratum {
					continue
				}
				if d.Value[i] < mustQ(t, r, g.Stratum, d.Age[i], s.Tau) {
					below++
				}
			}
			if s.Below != below || s.Observed != float64(below)/float64(g.N) {
				t.Errorf("%s tau %g: below %d, want %d", g.Stratum, s.Tau, s.Below, below)
			}
		}
	}
}

func TestCheckBands(t *testing.T) {
	r := normalRef(20, 3)
	d := sampleData(500, 3, normal)
	d.Age = append(d.Age, 9.5)
	d.Value = append(d.Value, 20)
	dg, err := Check(r, d, []float64{0, 2, 2.5, 5})
	if err != nil {
		t.Fatal(err)
	}
	if len(dg.Groups) != 3 {
		t.Fatalf("%d groups", len(dg.Groups))
	}
	inBands := 0
	for i, g := range dg.Groups {
		lo, hi := []float64{0, 2, 2.5}[i], []float64{2, 2.5, 5}[i]
		n := 0
		for _, a := range d.Age {
			if a >= lo && (a < hi || (i == 2 && a == hi)) {
				n++
			}
		}
		if g.AgeLo != lo || g.AgeHi != hi || g.N != n {
			t.Errorf("group %d: [%g, %g] n %d, want [%g, %g] n %d", i, g.AgeLo, g.AgeHi, g.N, lo, hi, n)
		}
		inBands += n
	}
	if inBands+len(dg.Skipped) != len(d.Age) || !strings.Contains(dg.Skipped[len(dg.Skipped)-1].Reason, "bands") {
		t.Errorf("rows outside the bands not listed: %d + %d != %d", inBands, len(dg.Skipped), len(d.Age))
	}
	// A band with no rows is left out.
	dg, err = Check(r, &Data{Age: []float64{1, 6}, Value: []float64{20, 21}}, []float64{0, 2, 4, 8})
	if err != nil || len(dg.Groups) != 2 || dg.Groups[1].AgeLo != 4 {
		t.Errorf("empty band: %+v, %v", dg, err)
	}
	for _, b := range [][]float64{{1}, {0, 0}, {0, 2, 1}, {0, math.NaN()}} {
		if _, err := Check(r, d, b); !errors.Is(err, ErrData) {
			t.Errorf("bands %v: %v", b, err)
		}
	}
	if _, err := Check(r, &Data{Age: []float64{1}, Value: []float64{1, 2}}, nil); !errors.Is(err, ErrData) {
		t.Errorf("mismatched columns: %v", err)
	}
}

func TestWorm(t *testing.T) {
	// z at the plotting positions themselves: a flat worm (exact identity).
	n := 40
	z := make([]float64, n)
	for i := range z {
		z[n-1-i] = distuv.UnitNormal.Quantile((float64(i+1) - 3.0/8) / (float64(n) + 1.0/4)) // Blom; reversed: worm sorts
	}
	w := worm(z)
	for i := range n {
		if math.Abs(w.Deviation[i]) > 1e-15 || (i > 0 && w.Z[i] < w.Z[i-1]) || w.Lo[i] != -w.Hi[i] {
			t.Fatalf("point %d: %g %g %g %g", i, w.Z[i], w.Deviation[i], w.Lo[i], w.Hi[i])
		}
	}
	// Envelope at the middle point: 1.959964 * sqrt(p(1-p)/n)/phi(u), the
	// standard error of a sample quantile (from memory of van Buuren &
	// Fredriks 2001); 1.959964 = Phi^-1(0.975).
	i := n / 2
	p := (float64(i+1) - 3.0/8) / (float64(n) + 1.0/4)
	u := distuv.UnitNormal.Quantile(p)
	want := 1.959963984540054 * math.Sqrt(p*(1-p)/float64(n)) / (math.Exp(-u*u/2) / math.Sqrt(2*math.Pi))
	if !near(w.Hi[i], want, 1e-12) {
		t.Errorf("envelope %g, want %g", w.Hi[i], want)
	}
	// The envelope widens towards the tails.
	if !(w.Hi[0] > w.Hi[i]) {
		t.Errorf("envelope not wider in the tail: %g vs %g", w.Hi[0], w.Hi[i])
	}
}

func TestWormNearExpectedOrderStatistics(t *testing.T) {
	// Expected values of normal order statistics (Harter 1961, Biometrika
	// 48, 151–165; values from memory). Blom's positions approximate them,
	// worst at the extremes of small samples (0.017 at n = 5), so allow 0.02.
	cases := map[int][]float64{
		5:  {-1.16296, -0.49502, 0, 0.49502, 1.16296},
		10: {-1.53875, -1.00136, -0.65606, -0.37576, -0.12267, 0.12267, 0.37576, 0.65606, 1.00136, 1.53875},
	}
	for n, want := range cases {
		w := worm(make([]float64, n))
		for i := range w.Normal {
			if math.Abs(w.Normal[i]-want[i]) > 0.02 {
				t.Errorf("n=%d: Normal[%d] = %.5f, expected order statistic %.5f", n, i, w.Normal[i], want[i])
			}
		}
	}
}

func TestWormEnvelopeCoverage(t *testing.T) {
	// For samples truly from N(0, 1), a pointwise 95% band leaves about 5%
	// of points outside; the band is approximate (van Buuren & Fredriks
	// 2001), so accept 2–9% on average (common practice for a Monte Carlo
	// check of this size).
	r := rand.New(rand.NewPCG(11, 12))
	reps, n := 200, 200
	if testing.Short() {
		reps = 50
	}
	outside := 0
	for range reps {
		z := make([]float64, n)
		for i := range z {
			z[i] = r.NormFloat64()
		}
		w := worm(z)
		for i := range w.Deviation {
			if w.Deviation[i] < w.Lo[i] || w.Deviation[i] > w.Hi[i] {
				outside++
			}
		}
	}
	frac := float64(outside) / float64(reps*n)
	if frac < 0.02 || frac > 0.09 {
		t.Errorf("%.3f of points outside the envelope, want about 0.05", frac)
	}
}

// TestCheckBlocks repeats the rows of TestCheckCountsAndSkips until they
// are scored in several parallel blocks: the skipped rows come out in row
// order with the same reasons, and every stratum's rows below each chart
// centile add up to the count of rows under the fitted centile at their age
// (mustQ, one row at a time).
func TestCheckBlocks(t *testing.T) {
	r := twoStrata()
	base := &Data{
		Age:     []float64{1, 2, 30, 3, 4, 5, 6, 0.2, 7},
		Value:   []float64{9, 10, 11, math.NaN(), 12, 13, 14, 9, 15},
		Stratum: []string{"F", "F", "F", "F", "X", "M", "M", "M", "M"},
		Weight:  []float64{1, 1, 1, 1, 1, 0, 1, 1, 2},
	}
	skip := map[int]string{2: "age", 3: "finite", 4: "unknown stratum", 5: "weight", 7: "age"}
	const copies = 3 * checkBlockRows / 9
	d := &Data{}
	for k := range copies {
		for i := range base.Age {
			// Usable ages move a little from copy to copy, so that the groups
			// by age mix the copies.
			shift := float64(k%7) / 10
			if _, skipped := skip[i]; skipped {
				shift = 0
			}
			d.Age = append(d.Age, base.Age[i]+shift)
			d.Value = append(d.Value, base.Value[i])
			d.Stratum = append(d.Stratum, base.Stratum[i])
			d.Weight = append(d.Weight, base.Weight[i])
		}
	}
	dg, err := Check(r, d, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(dg.Skipped) != copies*len(skip) {
		t.Fatalf("%d rows skipped, want %d", len(dg.Skipped), copies*len(skip))
	}
	for i, s := range dg.Skipped {
		if !strings.Contains(s.Reason, skip[s.Row%9]) || (i > 0 && s.Row <= dg.Skipped[i-1].Row) {
			t.Fatalf("skipped %+v, want reason with %q, rows in order", s, skip[s.Row%9])
		}
	}
	for _, name := range []string{"F", "M"} {
		for _, tau := range r.Strata[0].Chart {
			want, got := 0, 0
			for i := range d.Age {
				if _, skipped := skip[i%9]; !skipped && d.Stratum[i] == name && d.Value[i] < mustQ(t, r, name, d.Age[i], tau) {
					want++
				}
			}
			for _, g := range dg.Groups {
				for _, s := range g.Shares {
					if g.Stratum == name && s.Tau == tau {
						got += s.Below
					}
				}
			}
			if got != want {
				t.Errorf("%s tau %g: %d rows below, want %d", name, tau, got, want)
			}
		}
	}
}
