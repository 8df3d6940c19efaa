package curve

import (
	"math"
	"slices"
	"testing"
)

// evenRows returns n rows with ages (and t) 0..n-1 and unit weights.
func evenRows(n int) *rows {
	r := &rows{}
	for i := range n {
		r.age = append(r.age, float64(i))
		r.t = append(r.t, float64(i))
		r.w = append(r.w, 1)
	}
	return r
}

var identity = AgeScale{}

func TestGuardWindows(t *testing.T) {
	// Ages 0..999 in 10 windows of width 99.9: 100 rows each (exact count).
	w := guardWindows(evenRows(1000), 10, identity)
	if len(w) != 10 {
		t.Fatalf("%d windows", len(w))
	}
	for j, x := range w {
		if x.neff != 100 || math.Abs(x.lo-99.9*float64(j)) > 1e-12 {
			t.Errorf("window %d = %+v", j, x)
		}
	}
	if w[0].lo != 0 || w[9].hi != 999 {
		t.Errorf("windows span [%v, %v], want [0, 999]", w[0].lo, w[9].hi)
	}
	// Kish's effective size: weights 1,1,2,2 give 36/10 = 3.6 (exact).
	r := &rows{age: []float64{1, 2, 3, 4}, t: []float64{1, 2, 3, 4}, w: []float64{1, 1, 2, 2}}
	if w := guardWindows(r, 1, identity); len(w) != 1 || math.Abs(w[0].neff-3.6) > 1e-15 {
		t.Errorf("weighted window %+v, want neff 3.6", w)
	}
	// Bounds come back in age units: on the log scale the windows are equal
	// in log(age), so with ages 1..e^2 and 2 windows the edge is age e.
	r = &rows{age: []float64{1, 2, math.E * math.E}, t: []float64{0, math.Log(2), 2}, w: []float64{1, 1, 1}}
	w = guardWindows(r, 2, AgeScale{Kind: ScaleLog})
	if math.Abs(w[0].hi-math.E) > 1e-15 || w[1].lo != w[0].hi || w[0].neff != 2 || w[1].neff != 1 {
		t.Errorf("log windows %+v, want edge at e", w)
	}
}

func TestGuardSmallSample(t *testing.T) {
	// 300 rows in 10 windows of 30: expected counts 30*min(tau,1-tau) are
	// 0.9 (3rd, 97th), 3 (10th, 90th), 7.5 (25th, 75th), 15 (50th) against
	// the default minimum 5.
	chart := []float64{0.03, 0.10, 0.25, 0.5, 0.75, 0.90, 0.97}
	w := guardWindows(evenRows(300), DefaultGuardWindows, identity)
	flags := chartFlags(chart, w, DefaultGuardMin)
	flagged := map[float64]bool{}
	for _, f := range flags {
		flagged[f.Tau] = true
		if f.Action != "flagged" || f.AgeLo != 0 || f.AgeHi != 299 {
			t.Errorf("flag %+v: want one flag spanning all ages", f)
		}
	}
	for _, tau := range chart {
		want := tau < 0.25 || tau > 0.75
		if flagged[tau] != want {
			t.Errorf("tau %v flagged %v, want %v", tau, flagged[tau], want)
		}
	}
	taus, dropped := tauGrid(chart, w, DefaultGuardMin)
	if len(dropped) != 4 {
		t.Errorf("dropped %v, want the four extreme taus", dropped)
	}
	if len(taus) != 99 || taus[0] != 0.01 || taus[98] != 0.99 {
		t.Errorf("grid of %d taus from %v to %v, want 0.01..0.99", len(taus), taus[0], taus[len(taus)-1])
	}
	for _, f := range dropped {
		if f.Action != "dropped" || slices.Contains(taus, f.Tau) {
			t.Errorf("dropped flag %+v", f)
		}
	}
}

func TestGuardLargeSample(t *testing.T) {
	// 20,000 rows: windows of 2000 expect 2 beyond 0.001 (dropped) and 10
	// beyond 0.005 (kept); no chart centile is flagged.
	chart := []float64{0.03, 0.10, 0.25, 0.5, 0.75, 0.90, 0.97}
	w := guardWindows(evenRows(20000), DefaultGuardWindows, identity)
	if f := chartFlags(chart, w, DefaultGuardMin); len(f) != 0 {
		t.Errorf("flags %v", f)
	}
	taus, dropped := tauGrid(chart, w, DefaultGuardMin)
	if len(taus) != 101 || taus[0] != 0.005 || taus[100] != 0.995 {
		t.Errorf("grid of %d taus from %v to %v", len(taus), taus[0], taus[len(taus)-1])
	}
	if len(dropped) != 2 || dropped[0].Tau != 0.001 || dropped[1].Tau != 0.999 || math.Abs(dropped[0].Expected-2) > 1e-12 {
		t.Errorf("dropped %+v", dropped)
	}
	// A chart centile outside 0.01..0.99 joins the grid, even when flagged.
	chart = []float64{0.001, 0.025, 0.5}
	taus, _ = tauGrid(chart, w, DefaultGuardMin)
	for _, tau := range chart {
		if !slices.Contains(taus, tau) {
			t.Errorf("chart tau %v missing from %v", tau, taus)
		}
	}
	if f := chartFlags(chart, w, DefaultGuardMin); len(f) != 1 || f[0].Tau != 0.001 || math.Abs(f[0].Expected-2) > 1e-12 {
		t.Errorf("flags %+v, want 0.001 flagged with 2 expected", f)
	}
}

func TestGuardSparseAges(t *testing.T) {
	// 1000 rows at ages [0, 9), 30 at [9, 10): only the last window (30 rows,
	// 1.5 expected beyond the 5th centile) is flagged, and an empty window
	// (no rows at all) is flagged with 0 expected.
	r := &rows{}
	add := func(a float64) {
		r.age = append(r.age, a)
		r.t = append(r.t, a)
		r.w = append(r.w, 1)
	}
	for i := range 1000 {
		add(9 * float64(i) / 1000)
	}
	for i := range 30 {
		add(9 + float64(i)/29)
	}
	flags := chartFlags([]float64{0.05}, guardWindows(r, 10, identity), DefaultGuardMin)
	if len(flags) != 1 || math.Abs(flags[0].AgeLo-9) > 1e-12 || flags[0].AgeHi != 10 || flags[0].Expected != 1.5 {
		t.Errorf("flags %+v, want one for [9, 10] expecting 1.5", flags)
	}
	r = &rows{}
	for i := range 200 {
		add(float64(i) / 100) // ages 0..1.99
	}
	for i := range 200 {
		add(3 + float64(i)/100) // ages 3..4.99
	}
	flags = chartFlags([]float64{0.5}, guardWindows(r, 5, identity), DefaultGuardMin)
	if len(flags) != 1 || flags[0].Expected != 0 || flags[0].AgeLo > 2 || flags[0].AgeHi < 2.9 {
		t.Errorf("flags %+v, want the empty window [1.998, 2.996) flagged", flags)
	}
}

func TestGuardThroughFit(t *testing.T) {
	st := mustFit(t, lineData(120, 31), &Settings{Knots: 2}).Strata[0]
	got := map[string]int{}
	for _, f := range st.Flags {
		got[f.Action]++
	}
	if got["flagged"] == 0 || got["dropped"] != 4 {
		t.Errorf("flags on 120 rows: %+v", st.Flags)
	}
	for _, f := range st.Flags {
		if f.Action == "flagged" && !slices.Contains(st.Chart, f.Tau) {
			t.Errorf("flag for a non-chart tau: %+v", f)
		}
	}
}
