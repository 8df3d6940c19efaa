package render

import (
	"bytes"
	"errors"
	"math"
	"math/rand/v2"
	"sort"
	"strings"
	"testing"
)

func TestDensityBinsAreaOne(t *testing.T) {
	r := rand.New(rand.NewPCG(21, 22))
	for _, n := range []int{2, 17, 1000} {
		z := make([]float64, n)
		for i := range z {
			z[i] = r.NormFloat64() * 2
		}
		sort.Float64s(z)
		for _, w := range []float64{0.1, 0.25, 1} {
			bins, got := densityBins(z, nil, w, math.Inf(1), math.Inf(-1))
			if got != w {
				t.Errorf("width changed from %g to %g", w, got)
			}
			area := 0.0
			for _, b := range bins {
				area += b.Weight * (b.Max - b.Min)
				// Bins are aligned to multiples of the width.
				if k := b.Min / w; math.Abs(k-math.Round(k)) > 1e-9 {
					t.Errorf("bin edge %g not a multiple of %g", b.Min, w)
				}
			}
			// The bars of a density histogram have total area one (exact
			// identity).
			if math.Abs(area-1) > 1e-12 {
				t.Errorf("n=%d w=%g: area %g, want 1", n, w, area)
			}
		}
	}
}

func TestDensityBinsBoundaries(t *testing.T) {
	// 0 and 0.5 sit on bin boundaries and go to the bin above; counts by
	// hand: [-0.5,0): 1, [0,0.5): 2, [0.5,1): 1.
	bins, _ := densityBins([]float64{-0.25, 0, 0.25, 0.5}, nil, 0.5, math.Inf(1), math.Inf(-1))
	want := []float64{1, 2, 1}
	if len(bins) != len(want) {
		t.Fatalf("%d bins, want %d", len(bins), len(want))
	}
	for k, b := range bins {
		if c := b.Weight * 4 * 0.5; math.Abs(c-want[k]) > 1e-12 {
			t.Errorf("bin %d [%g,%g): count %g, want %g", k, b.Min, b.Max, c, want[k])
		}
	}
}

func TestDensityBinsCap(t *testing.T) {
	// An absurd outlier must not make millions of bins.
	bins, w := densityBins([]float64{0, 0.1, 1e6}, nil, 0.1, math.Inf(1), math.Inf(-1))
	if len(bins) > maxBins || w <= 0.1 {
		t.Errorf("%d bins of width %g", len(bins), w)
	}
}

func TestBinWidthFD(t *testing.T) {
	// For N(0,1) the IQR is 1.349 (2·Φ⁻¹(0.75), from memory), so
	// 2·IQR·n^(−1/3) is 0.27 at n = 1000, rounded to the tidy 0.25.
	r := rand.New(rand.NewPCG(23, 24))
	z := make([]float64, 1000)
	for i := range z {
		z[i] = r.NormFloat64()
	}
	sort.Float64s(z)
	if w := binWidthFD(z); w != 0.25 {
		t.Errorf("binWidthFD = %g, want 0.25", w)
	}
	if w := binWidthFD([]float64{1, 1, 1, 1}); w != 0.25 {
		t.Errorf("zero IQR: %g, want fallback 0.25", w)
	}
}

func TestZDistBinWidthOption(t *testing.T) {
	f, err := ZDistChart(sampleZDist(), WithBinWidth(0.5))
	if err != nil {
		t.Fatal(err)
	}
	texts := svgTexts(render(t, f, "svg"))
	if !hasText(texts, "cohort, bins of 0.5") {
		t.Errorf("legend lacks the chosen bin width: %q", texts)
	}
}

func TestZDistWeighted(t *testing.T) {
	// Weights 3 and 1 on z = 0 and 2: weighted mean 0.5 (exact), and the
	// chart says the estimates are weighted.
	z := &ZDist{Z: []float64{0, 2}, Weights: []float64{3, 1}, Vs: &ZSample{Cohort: "b.csv", Z: []float64{-1, 1, 3}}}
	f, err := ZDistChart(z)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := Write(&buf, f, "svg", 0, 0); err != nil {
		t.Fatal(err)
	}
	texts := strings.Join(svgTexts(buf.Bytes()), "|")
	for _, want := range []string{"weighted by survey weights", "mean = 0.50", "b.csv: n = 3", "mean of b.csv"} {
		if !strings.Contains(texts, want) {
			t.Errorf("SVG lacks %q: %s", want, texts)
		}
	}
	if _, err := ZDistChart(&ZDist{Z: []float64{0, 1}, Weights: []float64{1}}); !errors.Is(err, ErrLength) {
		t.Errorf("short weights: %v", err)
	}
	// Weighted bins: densities integrate to one with weights (exact).
	bins, _ := densityBins([]float64{0, 0.5, 1}, []float64{1, 2, 5}, 0.5, math.Inf(1), math.Inf(-1))
	area := 0.0
	for _, b := range bins {
		area += b.Weight * (b.Max - b.Min)
	}
	if math.Abs(area-1) > 1e-12 {
		t.Errorf("weighted histogram area %g", area)
	}
}
