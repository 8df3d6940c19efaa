package curve

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"slices"
	"testing"
	"time"
)

// TestBuildRowStore checks that Build's single row store (grouped and sorted
// once, compacted in place by the screen, T(age) recomputed for each
// candidate scale) fits exactly what Fit fits on the rows Build reports as
// used, on the age scale Build chose: the same reference file, byte for
// byte (exact identity; both are deterministic). The data have two strata,
// subject ids (cross-validation deals whole subjects to folds, so their
// numbering after the screen matters), sampling weights, a stated age range
// that excludes rows, and gross errors planted for the screen. Data: the LMS
// simulation of recovery_test.go with ages crowded into infancy (age =
// 18 u^2, u uniform) so that a scale other than the identity is chosen.
func TestBuildRowStore(t *testing.T) {
	n := 3000
	if testing.Short() {
		n = 1500
	}
	rng := rand.New(rand.NewPCG(5, 12))
	var truth lmsTruth
	d := &Data{Age: make([]float64, n), Value: make([]float64, n), Weight: make([]float64, n),
		Stratum: make([]string, n), Subject: make([]string, n)}
	for i := range n {
		u := rng.Float64()
		a := ageMax * u * u
		d.Age[i], d.Value[i] = a, truth.value(a, rng.NormFloat64())
		d.Weight[i] = 0.5 + rng.Float64()
		d.Stratum[i] = []string{"female", "male"}[i%2]
		d.Subject[i] = fmt.Sprint(rng.IntN(n / 3))
	}
	for i := 7; i < n; i += n / 10 {
		d.Value[i] *= 3 // gross errors, far beyond |z| = 5
	}
	fs := Settings{AgeScale: AgeScale{Kind: ScaleAuto}, Penalty: PenaltyAuto, Criterion: CriterionCV,
		AgeRange: [2]float64{0.05, 17}, Created: time.Unix(0, 0)}
	built, err := Build(d, &BuildSettings{Fit: fs})
	if err != nil {
		t.Fatal(err)
	}
	implausible, outside := 0, 0
	for _, e := range built.Excluded {
		switch e.Reason {
		case ExcludedImplausible:
			implausible++
		case ExcludedAgeRange:
			outside++
		}
	}
	t.Logf("age scale %s; %d rows used, %d outside the age range, %d implausible", built.Reference.AgeScale, len(built.Used), outside, implausible)
	if implausible == 0 || outside == 0 {
		t.Fatalf("the test needs rows excluded by both rules (%d implausible, %d outside)", implausible, outside)
	}
	if k := built.Reference.AgeScale.Kind; k == ScaleIdentity {
		t.Fatal("the identity scale was chosen: the test needs T(age) recomputed")
	}
	if len(built.Used)+len(built.Excluded) != n {
		t.Fatalf("%d used and %d excluded of %d rows", len(built.Used), len(built.Excluded), n)
	}

	fs.AgeScale = built.Reference.AgeScale
	ref, err := Fit(d.rows(built.Used), &fs)
	if err != nil {
		t.Fatal(err)
	}
	a, err := json.Marshal(built.Reference)
	if err != nil {
		t.Fatal(err)
	}
	b, err := json.Marshal(ref)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(a, b) {
		t.Errorf("Build's reference differs from Fit's on the rows used (%d and %d bytes of JSON)", len(a), len(b))
	}
}

// TestCompactRescale checks the row store's two operations against prepare
// run afresh (exact identity): rows removed in place (compact) and T(age)
// recomputed for another scale (rescale) must leave every group as
// prepare makes it from the remaining rows on that scale — the same rows in
// the same order, with subjects numbered by first appearance and the same
// ends of the range. Ages are rounded to whole days so that ties occur.
// Data: the LMS simulation of recovery_test.go with invented subject ids.
func TestCompactRescale(t *testing.T) {
	const n = 4000
	rng := rand.New(rand.NewPCG(8, 1))
	d := &Data{Age: make([]float64, n), Value: make([]float64, n), Weight: make([]float64, n),
		Stratum: make([]string, n), Subject: make([]string, n)}
	for i := range n {
		a := float64(int(ageMax*365*rng.Float64())) / 365
		d.Age[i], d.Value[i] = a, lmsTruth{}.value(a, rng.NormFloat64())
		d.Weight[i] = 1 + rng.Float64()
		d.Stratum[i] = []string{"a", "b", "c"}[rng.IntN(3)]
		d.Subject[i] = fmt.Sprint(rng.IntN(400))
	}
	identity, err := (&Settings{}).resolve()
	if err != nil {
		t.Fatal(err)
	}
	groups, err := groupRows(d, identity)
	if err != nil {
		t.Fatal(err)
	}
	drop := func(i int) bool { return i%7 == 3 || d.Subject[i] == "17" }
	if groups, err = compact(groups, drop, identity); err != nil {
		t.Fatal(err)
	}
	// Rows out of order, as rounding of T(age) could leave them: rescale
	// must sort them again.
	r := groups[0]
	for _, col := range [][]float64{r.age, r.y, r.w} {
		col[0], col[5] = col[5], col[0]
	}
	r.src[0], r.src[5] = r.src[5], r.src[0]
	r.subj[0], r.subj[5] = r.subj[5], r.subj[0]
	for _, scale := range []AgeScale{{Kind: ScaleLog, Shift: 1}, {Kind: ScalePower, Power: 0.5}, {}} {
		c, err := (&Settings{AgeScale: scale}).resolve()
		if err != nil {
			t.Fatal(err)
		}
		if err := rescale(groups, c); err != nil {
			t.Fatal(err)
		}
		var kept []int
		for i := range n {
			if !drop(i) {
				kept = append(kept, i)
			}
		}
		want, err := groupRows(d.rows(kept), c)
		if err != nil {
			t.Fatal(err)
		}
		if len(want) != len(groups) {
			t.Fatalf("%s: %d groups, want %d", scale, len(groups), len(want))
		}
		for g, w := range want {
			r := groups[g]
			src := make([]int, len(w.src))
			for k, i := range w.src {
				src[k] = kept[i]
			}
			same := r.name == w.name && r.nsubj == w.nsubj && r.lo == w.lo && r.hi == w.hi &&
				slices.Equal(r.src, src) && slices.Equal(r.age, w.age) && slices.Equal(r.t, w.t) &&
				slices.Equal(r.y, w.y) && slices.Equal(r.w, w.w) && slices.Equal(r.subj, w.subj)
			if !same {
				t.Errorf("%s: group %q differs from prepare's on the rows left", scale, w.name)
			}
		}
	}
}
