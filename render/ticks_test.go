package render

import (
	"errors"
	"fmt"
	"math"
	"testing"
)

func majorLabels(t ageTicks, lo, hi float64) string {
	var s []string
	for _, tk := range t.Ticks(lo, hi) {
		if !tk.IsMinor() {
			s = append(s, tk.Label)
		}
	}
	return fmt.Sprint(s)
}

func TestAgeTicks(t *testing.T) {
	// The steps growth charts use (common practice): quarters of a year up
	// to two years, half years to five, whole years beyond; whole years in
	// years.
	cases := []struct {
		unit   string
		lo, hi float64
		want   string
	}{
		{"months", 0, 24, "[0 3 6 9 12 15 18 21 24]"},
		{"months", 0, 64.2, "[0 6 12 18 24 30 36 42 48 54 60]"},
		{"months", 0, 240, "[0 24 48 72 96 120 144 168 192 216 240]"},
		{"month", -0.3, 12, "[0 3 6 9 12]"},
		{"years", 0, 5, "[0 1 2 3 4 5]"},
		{"years", 2, 20, "[2 4 6 8 10 12 14 16 18 20]"},
		{"days", 0, 60, "[0 7 14 21 28 35 42 49 56]"},
	}
	for _, c := range cases {
		if got := majorLabels(ageTicks{unit: c.unit}, c.lo, c.hi); got != c.want {
			t.Errorf("%s %g–%g: %s, want %s", c.unit, c.lo, c.hi, got, c.want)
		}
	}
	// A chart drawn small asks for fewer labels (WithAgeIntervals).
	if got, want := majorLabels(ageTicks{unit: "months", max: 5}, 0, 60), "[0 12 24 36 48 60]"; got != want {
		t.Errorf("months 0–60 at most 5 intervals: %s, want %s", got, want)
	}
	if got, want := majorLabels(ageTicks{unit: "years", max: 5}, 0, 19), "[0 5 10 15]"; got != want {
		t.Errorf("years 0–19 at most 5 intervals: %s, want %s", got, want)
	}
	// An unknown unit falls back to tidy decimal steps.
	if got := (ageTicks{unit: "fortnights"}).Ticks(0, 10); len(got) == 0 {
		t.Error("no ticks for an unknown unit")
	}
	if got := (ageTicks{unit: "months"}).Ticks(1, 1); got != nil {
		t.Errorf("empty range: %v", got)
	}
}

func TestQQAndBandMeansInputErrors(t *testing.T) {
	if _, err := QQChart(&QQ{}); !errors.Is(err, ErrEmpty) {
		t.Errorf("QQ empty: %v", err)
	}
	if _, err := QQChart(&QQ{Series: []QQSeries{{Expected: []float64{0, 1}, Observed: []float64{0, 1}}}}); !errors.Is(err, ErrTooFew) {
		t.Errorf("QQ too few: %v", err)
	}
	if _, err := QQChart(&QQ{Series: []QQSeries{{Expected: []float64{0, 1, 2}, Observed: []float64{0, math.NaN(), 1}}}}); !errors.Is(err, ErrNaN) {
		t.Errorf("QQ NaN: %v", err)
	}
	if _, err := BandMeansChart(&BandMeans{}); !errors.Is(err, ErrEmpty) {
		t.Errorf("band means empty: %v", err)
	}
	bad := BandSeries{AgeLo: []float64{0}, AgeHi: []float64{6, 12}, Mean: []float64{0}, Lo: []float64{-1}, Hi: []float64{1}}
	if _, err := BandMeansChart(&BandMeans{Series: []BandSeries{bad}}); !errors.Is(err, ErrLength) {
		t.Errorf("band means lengths: %v", err)
	}
	// NaN interval ends (one subject in a band) are allowed and not drawn.
	ok := BandSeries{AgeLo: []float64{0}, AgeHi: []float64{6}, Mean: []float64{0.2}, Lo: []float64{math.NaN()}, Hi: []float64{math.NaN()}}
	if _, err := BandMeansChart(&BandMeans{Series: []BandSeries{ok}}); err != nil {
		t.Errorf("NaN interval: %v", err)
	}
}
