package render

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

func TestWormPointsOfExactQuantilesAreZero(t *testing.T) {
	// z equal to the Blom quantiles themselves lie on the line: d = 0
	// (exact identity), whatever their input order.
	const n = 25
	z := make([]float64, n)
	for i := range z {
		p := (float64(n-i) - 3.0/8) / (n + 1.0/4)
		z[i] = distuv.UnitNormal.Quantile(p)
	}
	q, d := wormPoints(z)
	for i := range d {
		if math.Abs(d[i]) > 1e-12 {
			t.Errorf("d[%d] = %g, want 0", i, d[i])
		}
		if i > 0 && !(q[i] > q[i-1]) {
			t.Errorf("q not increasing at %d", i)
		}
	}
	if z[0] < z[1] {
		t.Error("wormPoints sorted its input in place")
	}
}

func TestWormPointsNearExpectedOrderStatistics(t *testing.T) {
	// Expected values of normal order statistics (Harter 1961, Biometrika
	// 48, 151–165; values from memory). Blom's positions approximate them,
	// worst at the extremes of small samples (0.017 at n = 5), so allow 0.02.
	cases := map[int][]float64{
		5:  {-1.16296, -0.49502, 0, 0.49502, 1.16296},
		10: {-1.53875, -1.00136, -0.65606, -0.37576, -0.12267, 0.12267, 0.37576, 0.65606, 1.00136, 1.53875},
	}
	for n, want := range cases {
		q, _ := wormPoints(make([]float64, n))
		for i := range q {
			if math.Abs(q[i]-want[i]) > 0.02 {
				t.Errorf("n=%d: q[%d] = %.5f, expected order statistic %.5f", n, i, q[i], want[i])
			}
		}
	}
}

func TestWormEnvelope(t *testing.T) {
	// At q = 0: p = 1/2 and φ(0) = 1/√(2π), so the half-width is
	// 1.96·(1/2)/√n·√(2π) (exact identity).
	for _, n := range []int{10, 100, 1000} {
		want := 1.96 * 0.5 / math.Sqrt(float64(n)) * math.Sqrt(2*math.Pi)
		if got := wormEnvelope(0, n); math.Abs(got-want) > 1e-12 {
			t.Errorf("n=%d: envelope(0) = %g, want %g", n, got, want)
		}
	}
	for _, q := range []float64{0.3, 1, 2.5} {
		if a, b := wormEnvelope(q, 50), wormEnvelope(-q, 50); math.Abs(a-b) > 1e-12 {
			t.Errorf("envelope not symmetric at %g: %g vs %g", q, a, b)
		}
		if !(wormEnvelope(q, 50) > wormEnvelope(q/2, 50)) {
			t.Errorf("envelope does not widen outward at %g", q)
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
		q, d := wormPoints(z)
		for i := range q {
			if math.Abs(d[i]) > wormEnvelope(q[i], n) {
				outside++
			}
		}
	}
	frac := float64(outside) / float64(reps*n)
	if frac < 0.02 || frac > 0.09 {
		t.Errorf("%.3f of points outside the envelope, want about 0.05", frac)
	}
	t.Logf("fraction outside: %.4f", frac)
}

func TestWormChartCountsOutside(t *testing.T) {
	// A scale error of 1.6 pushes most tail points out of the band.
	r := rand.New(rand.NewPCG(13, 14))
	var z []float64
	for range 300 {
		z = append(z, 1.6*r.NormFloat64())
	}
	f, err := WormChart(&Worm{Groups: []WormGroup{{Label: "wide", Z: z}}})
	if err != nil {
		t.Fatal(err)
	}
	title := f.Panels[0][0].Title.Text
	var n, out int
	var label string
	if _, err := fmtSscanf(title, &label, &n, &out); err != nil {
		t.Fatalf("title %q: %v", title, err)
	}
	if n != 300 || out < 30 {
		t.Errorf("title %q: n %d, outside %d", title, n, out)
	}
}

func fmtSscanf(s string, label *string, n, out *int) (int, error) {
	return fmt.Sscanf(s, "%s  (n = %d, %d outside)", label, n, out)
}
