package refchart

import (
	"errors"
	"math"
	"strings"
	"testing"

	"growband/curve"
)

// table is an invented LMS table of a plausible shape (growband ships no
// third-party tables).
const table = "# age_unit = months\n# measure = weight\n# unit = kg\nage,L,M,S\n0,0.3,3.3,0.14\n24,0,12,0.11\n60,-0.2,18,0.12\n"

func ref(t *testing.T) *curve.Reference {
	t.Helper()
	r, err := curve.LoadLMSTable(strings.NewReader(table), "t.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

func TestCentilesSDCurvesAndAgeRange(t *testing.T) {
	r := ref(t)
	st := &r.Strata[0]
	c, notes, err := Centiles(r, st, &Options{AgeLo: 0, AgeHi: 24, SDCurves: true, Points: 25})
	if err != nil || len(notes) != 0 {
		t.Fatalf("%v %v", err, notes)
	}
	if len(c.Curves) != len(st.Chart)+4 {
		t.Fatalf("%d curves, want %d chart centiles + 4 SD", len(c.Curves), len(st.Chart))
	}
	for _, cv := range c.Curves {
		if cv.Ages[0] != 0 || cv.Ages[len(cv.Ages)-1] != 24 {
			t.Fatalf("ages %v–%v, want 0–24", cv.Ages[0], cv.Ages[len(cv.Ages)-1])
		}
		if !cv.Dashed {
			continue
		}
		// At 24 months L = 0: the curve at z SD is M exp(S z) (exact identity
		// of the LMS method, Cole 1990).
		var z float64
		switch cv.Label {
		case "−3 SD":
			z = -3
		case "−2 SD":
			z = -2
		case "+2 SD":
			z = 2
		case "+3 SD":
			z = 3
		default:
			t.Fatalf("label %q", cv.Label)
		}
		want := 12 * math.Exp(0.11*z)
		if got := cv.Values[len(cv.Values)-1]; math.Abs(got-want) > 1e-9*want { // rounding of Phi and its inverse
			t.Errorf("%s at 24 months: %g, want %g", cv.Label, got, want)
		}
	}
	// A range beyond the fitted one is clipped with a note; one outside it
	// is an error.
	if _, notes, err := Centiles(r, st, &Options{AgeLo: 24, AgeHi: 80}); err != nil || len(notes) != 1 {
		t.Errorf("clipped: %v %v", notes, err)
	}
	if _, _, err := Centiles(r, st, &Options{AgeLo: 70, AgeHi: 80}); !errors.Is(err, ErrAges) {
		t.Errorf("outside: %v", err)
	}
}
