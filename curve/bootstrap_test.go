package curve

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"reflect"
	"testing"
)

func bootSettings(workers int, seed uint64) *Settings {
	return &Settings{Knots: 3, Bootstrap: MinReplicates, BandPoints: 11, Workers: workers, Seed: seed}
}

func TestBootstrapDeterministic(t *testing.T) {
	d := lineData(300, 41)
	b1 := mustFit(t, d, bootSettings(1, 7)).Strata[0].Bands
	b3 := mustFit(t, d, bootSettings(3, 7)).Strata[0].Bands
	if !reflect.DeepEqual(b1, b3) {
		t.Error("bands differ between 1 and 3 workers")
	}
	b8 := mustFit(t, d, bootSettings(2, 8)).Strata[0].Bands
	if reflect.DeepEqual(b1, b8) {
		t.Error("seeds 7 and 8 give the same bands")
	}
}

func TestBootstrapBands(t *testing.T) {
	d := lineData(600, 42)
	s := bootSettings(0, 1)
	s.Bootstrap = 50
	ref := mustFit(t, d, s)
	st := &ref.Strata[0]
	if len(st.Bands) != len(st.Chart) {
		t.Fatalf("%d bands for %d chart centiles", len(st.Bands), len(st.Chart))
	}
	b := basisOf(t, ref, st)
	for k, bd := range st.Bands {
		if bd.Tau != st.Chart[k] || len(bd.Ages) != 11 || len(bd.Lo) != 11 || len(bd.Hi) != 11 || len(bd.BiasToSE) != 11 {
			t.Fatalf("band %d malformed: tau %v, %d ages", k, bd.Tau, len(bd.Ages))
		}
		if bd.Ages[0] != st.AgeMin || bd.Ages[10] != st.AgeMax {
			t.Errorf("band ages [%v, %v], want the fitted range [%v, %v]", bd.Ages[0], bd.Ages[10], st.AgeMin, st.AgeMax)
		}
		ti := -1
		for i, tau := range st.Taus {
			if tau == bd.Tau {
				ti = i
			}
		}
		unstable := false
		for a, age := range bd.Ages {
			est := curvesAt(t, ref, st, b, age)[ti]
			if !(bd.Lo[a] <= est && est <= bd.Hi[a]) {
				t.Errorf("tau %v age %.2f: estimate %v outside [%v, %v]", bd.Tau, age, est, bd.Lo[a], bd.Hi[a])
			}
			if !(bd.BiasToSE[a] >= 0) || math.IsInf(bd.BiasToSE[a], 0) {
				t.Errorf("tau %v age %.2f: bias/SE %v", bd.Tau, age, bd.BiasToSE[a])
			}
			unstable = unstable || bd.BiasToSE[a] > BiasSELimit
		}
		if unstable != bd.Unstable {
			t.Errorf("tau %v: Unstable %v disagrees with the ratios", bd.Tau, bd.Unstable)
		}
	}
	// The reference with its bands is valid JSON for the file format
	// (no NaN or infinities) and survives a round trip.
	var buf bytes.Buffer
	if err := Save(&buf, ref); err != nil {
		t.Fatalf("Save: %v", err)
	}
	back, err := Load(&buf, "bands.json")
	if err != nil {
		t.Fatalf("Load: %v", err)
	}
	if !reflect.DeepEqual(back.Strata[0].Bands, st.Bands) {
		t.Error("bands changed in a Save/Load round trip")
	}
	// Bands of neighbouring centiles keep their order at the median age
	// loosely: the 3rd centile's upper limit lies below the 97th's lower one
	// (the curves are about 3.8 SD apart, the bands far narrower).
	lo, hi := st.Bands[0], st.Bands[len(st.Bands)-1]
	if !(lo.Hi[5] < hi.Lo[5]) {
		t.Errorf("3rd centile band [%v, %v] overlaps 97th [%v, %v]", lo.Lo[5], lo.Hi[5], hi.Lo[5], hi.Hi[5])
	}
}

// TestBootstrapSubjects checks that subjects, not rows, are resampled when
// ids are given. With m rows per subject whose indicators 1{y < median} have
// intra-class correlation rho, the variance of the median grows by the
// design effect 1 + (m-1) rho (Kish 1965). A subject effect of variance 9
// against noise 1 gives values with correlation 0.9 and, for normal values,
// indicators with correlation (2/pi) asin(0.9) = 0.713 (Sheppard's formula,
// exact identity), so with m = 8 the spread with ids should be about
// sqrt(1 + 7*0.713) = 2.45 times that without (required: > 1.6) at the
// middle age of a straight-line fit, where the intercept dominates (ages
// vary within subjects, so the slope hardly feels the subject effect).
func TestBootstrapSubjects(t *testing.T) {
	rng := rand.New(rand.NewPCG(43, 1))
	const subjects, m = 80, 8
	d := &Data{}
	for s := range subjects {
		u := 3 * rng.NormFloat64() // subject effect, variance 9 against noise 1
		for range m {
			a := 10 * rng.Float64()
			d.Age = append(d.Age, a)
			d.Value = append(d.Value, 5+a+u+rng.NormFloat64())
			d.Subject = append(d.Subject, fmt.Sprintf("s%02d", s))
		}
	}
	width := func(d *Data) float64 {
		s := &Settings{Degree: 1, Knots: NoKnots, Bootstrap: 60, BandPoints: 3, Centiles: []float64{50}}
		bd := mustFit(t, d, s).Strata[0].Bands[0]
		return bd.Hi[1] - bd.Lo[1]
	}
	withIDs := width(d)
	d.Subject = nil
	without := width(d)
	t.Logf("median band width with ids %.3g, without %.3g, ratio %.2f", withIDs, without, withIDs/without)
	if withIDs < 1.6*without {
		t.Errorf("subject resampling widens the band by %.2f, want > 1.6", withIDs/without)
	}
}

// TestBootstrapCoverage simulates data sets from the Box–Cox normal truth
// lmsTruth (recovery_test.go; ages 0–18), builds each with the default
// smoothness choice and bootstrap bands, and counts how often the true
// centile lies inside its band at the band ages: the share must be 95 ± 3%
// (the target of the bands; with 40 data sets of 1000 rows it measured
// 93.4%). -short uses fewer data sets.
func TestBootstrapCoverage(t *testing.T) {
	sets, n, reps := 40, 1000, 100
	if testing.Short() {
		sets = 12
	}
	var lt lmsTruth
	in, total := 0, 0
	for set := range sets {
		rng := rand.New(rand.NewPCG(uint64(set), 9))
		d := &Data{}
		for range n {
			a := ageMax * rng.Float64()
			d.Age = append(d.Age, a)
			d.Value = append(d.Value, lt.value(a, rng.NormFloat64()))
		}
		ref := mustFit(t, d, &Settings{Penalty: PenaltyAuto, Bootstrap: reps, BandPoints: 11, Seed: uint64(set)})
		for _, bd := range ref.Strata[0].Bands {
			for a, age := range bd.Ages {
				q := lt.value(age, normZ(bd.Tau))
				if bd.Lo[a] <= q && q <= bd.Hi[a] {
					in++
				}
				total++
			}
		}
	}
	cov := float64(in) / float64(total)
	t.Logf("coverage %.3f over %d band points of %d data sets", cov, total, sets)
	if math.Abs(cov-0.95) > 0.03 {
		t.Errorf("coverage %.3f, want 0.95 ± 0.03", cov)
	}
}
