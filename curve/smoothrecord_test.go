package curve

import (
	"math"
	"testing"
)

// TestSmoothnessRecord checks what a fit records of its smoothness choice:
// the criterion in words, every candidate tried with its score, the chosen
// one among them with the same score, and the effective degrees of freedom
// of the median, which for a cubic spline with k interior knots is at most
// its k+4 coefficients (an interpolating fit of p coefficients passes
// through at most p rows at a vertex, Koenker, Ng & Portnoy 1994).
func TestSmoothnessRecord(t *testing.T) {
	d := sampleData(600, 5, normal)
	sm := mustFit(t, d, nil).Strata[0].Smoothness
	if sm.ChosenBy != "Schwarz criterion" || sm.Criterion != CriterionSIC {
		t.Errorf("chosen by %q (%q)", sm.ChosenBy, sm.Criterion)
	}
	if len(sm.Candidates) < 2 {
		t.Fatalf("%d candidates recorded", len(sm.Candidates))
	}
	found := false
	for _, c := range sm.Candidates {
		if c.InteriorKnots == sm.InteriorKnots && c.Lambda == sm.Lambda {
			found = found || c.Score == sm.Score
		}
		if c.Score < sm.Score {
			t.Errorf("candidate %+v scores below the choice %g", c, sm.Score)
		}
		if c.EDF < 1 || (c.Lambda == 0 && c.EDF > c.InteriorKnots+4) {
			t.Errorf("candidate %+v: effective df out of range", c)
		}
	}
	if !found {
		t.Errorf("the choice (%d knots, lambda %g) is not among the candidates %+v", sm.InteriorKnots, sm.Lambda, sm.Candidates)
	}
	if sm.EDF < 1 || math.IsNaN(sm.Score) {
		t.Errorf("edf %d, score %g", sm.EDF, sm.Score)
	}
	// Fixed smoothness: nothing was chosen, and the record says so in words.
	fixed := mustFit(t, d, &Settings{Knots: 3, Penalty: PenaltyNone}).Strata[0].Smoothness
	if fixed.ChosenBy != "fixed in the settings" {
		t.Errorf("fixed: chosen by %q", fixed.ChosenBy)
	}
}
