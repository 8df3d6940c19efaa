package render

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// detrend is a test fixture: the worm points of z with Blom's positions,
// as curve.Check computes them for the product.
func detrend(z []float64) WormGroup {
	s := append([]float64(nil), z...)
	sort.Float64s(s)
	n := len(s)
	g := WormGroup{Expected: make([]float64, n), Deviation: make([]float64, n)}
	for i, v := range s {
		g.Expected[i] = distuv.UnitNormal.Quantile((float64(i+1) - 3.0/8) / (float64(n) + 1.0/4))
		g.Deviation[i] = v - g.Expected[i]
	}
	return g
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

func TestWormChartCountsOutside(t *testing.T) {
	// A scale error of 1.6 pushes most tail points out of the band.
	r := rand.New(rand.NewPCG(13, 14))
	var z []float64
	for range 300 {
		z = append(z, 1.6*r.NormFloat64())
	}
	g := detrend(z)
	g.Label = "wide"
	f, err := WormChart(&Worm{Groups: []WormGroup{g}})
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
	return fmt.Sscanf(s, "%s n = %d, %d outside the band", label, n, out)
}

func TestWormChartThinsLargeGroups(t *testing.T) {
	// 100,000 points are drawn as every 251st (ceil(99998/399)), and the
	// panel says so; the outside count still covers every point.
	r := rand.New(rand.NewPCG(15, 16))
	z := make([]float64, 100000)
	for i := range z {
		z[i] = r.NormFloat64()
	}
	g := detrend(z)
	g.Label = "all"
	f, err := WormChart(&Worm{Groups: []WormGroup{g}})
	if err != nil {
		t.Fatal(err)
	}
	if title := f.Panels[0][0].Title.Text; !strings.Contains(title, "n = 100000") || !strings.Contains(title, "every 251st point drawn") {
		t.Errorf("title %q", title)
	}
	var buf bytes.Buffer
	if err := Write(&buf, f, "svg", 0, 0); err != nil {
		t.Fatal(err)
	}
	if buf.Len() > 400_000 { // an unthinned plot of 1e5 points is about 20 MB
		t.Errorf("svg of a thinned worm is %d bytes", buf.Len())
	}
	if thinStep(400) != 1 || thinStep(401) != 2 {
		t.Errorf("thinStep(400) %d, thinStep(401) %d", thinStep(400), thinStep(401))
	}
}
