package spline

import (
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

func TestClamped(t *testing.T) {
	got, err := Clamped(0, 1, []float64{0.5}, 2)
	if err != nil {
		t.Fatal(err)
	}
	want := []float64{0, 0, 0, 0.5, 1, 1, 1} // definition of a clamped vector
	if !slices.Equal(got, want) {
		t.Errorf("Clamped = %v, want %v", got, want)
	}
	if got, _ := Clamped(-1, 2, nil, 0); !slices.Equal(got, []float64{-1, 2}) {
		t.Errorf("Clamped degree 0, no interior = %v", got)
	}
	nan := math.NaN()
	bad := []struct {
		name     string
		lo, hi   float64
		interior []float64
		degree   int
		want     error
	}{
		{"negative degree", 0, 1, nil, -1, ErrDegree},
		{"lo == hi", 1, 1, nil, 3, ErrKnots},
		{"lo > hi", 2, 1, nil, 3, ErrKnots},
		{"NaN lo", nan, 1, nil, 3, ErrKnots},
		{"Inf hi", 0, math.Inf(1), nil, 3, ErrKnots},
		{"interior at lo", 0, 1, []float64{0, 0.5}, 3, ErrKnots},
		{"interior at hi", 0, 1, []float64{0.5, 1}, 3, ErrKnots},
		{"interior outside", 0, 1, []float64{0.5, 1.5}, 3, ErrKnots},
		{"interior repeated", 0, 1, []float64{0.3, 0.3}, 3, ErrKnots},
		{"interior decreasing", 0, 1, []float64{0.6, 0.3}, 3, ErrKnots},
		{"interior NaN", 0, 1, []float64{nan}, 3, ErrKnots},
	}
	for _, tc := range bad {
		if _, err := Clamped(tc.lo, tc.hi, tc.interior, tc.degree); !errors.Is(err, tc.want) {
			t.Errorf("%s: err = %v, want %v", tc.name, err, tc.want)
		}
	}
}

func TestUniformKnots(t *testing.T) {
	// Exact: dyadic fractions of [0, 1].
	if got := UniformKnots(0, 1, 3); !slices.Equal(got, []float64{0.25, 0.5, 0.75}) {
		t.Errorf("UniformKnots(0, 1, 3) = %v", got)
	}
	if got := UniformKnots(0, 1, 0); got != nil {
		t.Errorf("UniformKnots count 0 = %v, want nil", got)
	}
	got := UniformKnots(-3, 7, 9) // spacing 1: -2, ..., 6
	for k, v := range got {
		if !near(v, float64(k-2), identityTol) {
			t.Errorf("UniformKnots(-3, 7, 9)[%d] = %g, want %d", k, v, k-2)
		}
	}
	if _, err := Clamped(-3, 7, got, 3); err != nil {
		t.Errorf("Clamped rejects UniformKnots: %v", err)
	}
}

func TestQuantileKnots(t *testing.T) {
	tests := []struct {
		name  string
		x     []float64
		count int
		want  []float64
	}{
		// R quantile(1:10, c(.25, .5, .75)) (type 7, R's default) is
		// 3.25, 5.5, 7.75 (from memory; also by hand from Hyndman & Fan
		// 1996, definition 7: position 9p).
		{"1..10", []float64{10, 9, 8, 7, 6, 5, 4, 3, 2, 1}, 3, []float64{3.25, 5.5, 7.75}},
		// Ties at the minimum: levels .2, .4 fall on the tied 1s (not
		// strictly inside), .6 and .8 give 2.4 and 4.2 (by hand, definition 7).
		{"ties at min", []float64{1, 1, 1, 1, 1, 2, 3, 4, 5, 6}, 4, []float64{2.4, 4.2}},
		// Ties in the middle: all three levels give 2; duplicates removed
		// (by hand, definition 7).
		{"ties in middle", []float64{0, 1, 2, 2, 2, 2, 2, 2, 3, 4}, 3, []float64{2}},
		// Two distinct values: positions 0.5k for k = 1..5 give 0, 0, 0.5,
		// 1, 1; only the median is inside (by hand, definition 7).
		{"two values", []float64{0, 0, 1, 1}, 5, []float64{0.5}},
		{"count 0", []float64{0, 1, 2}, 0, []float64{}},
	}
	for _, tc := range tests {
		in := slices.Clone(tc.x)
		got, err := QuantileKnots(tc.x, tc.count)
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		if !slices.Equal(in, tc.x) {
			t.Errorf("%s: input modified", tc.name)
		}
		if len(got) != len(tc.want) {
			t.Errorf("%s: got %v, want %v", tc.name, got, tc.want)
			continue
		}
		for i := range got {
			if !near(got[i], tc.want[i], identityTol) {
				t.Errorf("%s: knot %d = %.17g, want %g", tc.name, i, got[i], tc.want[i])
			}
		}
	}
	for _, bad := range []struct {
		name  string
		x     []float64
		count int
	}{
		{"empty", nil, 3},
		{"one value", []float64{2}, 3},
		{"all tied", []float64{2, 2, 2, 2}, 3},
		{"NaN", []float64{1, math.NaN(), 3}, 3},
		{"Inf", []float64{1, math.Inf(-1), 3}, 3},
		{"negative count", []float64{1, 2, 3}, -1},
	} {
		if _, err := QuantileKnots(bad.x, bad.count); !errors.Is(err, ErrData) {
			t.Errorf("%s: err = %v, want ErrData", bad.name, err)
		}
	}
}

// TestQuantileKnotsProperty: for seeded random, heavily tied data the knots
// are strictly increasing, strictly inside the data range and accepted by
// Clamped and New.
func TestQuantileKnotsProperty(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 14)) // seeded for reproducibility
	for trial := range 200 {
		n := 2 + rng.IntN(60)
		x := make([]float64, n)
		for i := range x {
			x[i] = math.Round(rng.NormFloat64()*2) / 2 // coarse rounding makes ties
		}
		x[0], x[1] = -10, 10 // ensure two distinct values
		count := rng.IntN(15)
		knots, err := QuantileKnots(x, count)
		if err != nil {
			t.Fatalf("trial %d: %v", trial, err)
		}
		if len(knots) > count {
			t.Fatalf("trial %d: %d knots for count %d", trial, len(knots), count)
		}
		lo, hi := slices.Min(x), slices.Max(x)
		prev := lo
		for _, v := range knots {
			if !(v > prev && v < hi) {
				t.Fatalf("trial %d: knots %v not strictly increasing inside (%g, %g)", trial, knots, lo, hi)
			}
			prev = v
		}
		full, err := Clamped(lo, hi, knots, 3)
		if err != nil {
			t.Fatalf("trial %d: Clamped: %v", trial, err)
		}
		if _, err := New(full, 3); err != nil {
			t.Fatalf("trial %d: New: %v", trial, err)
		}
	}
}
