package cohort

import (
	"fmt"
	"math"
	"strings"

	"growband/curve"
)

// refGridPoints is the number of equally spaced ages CompareReferences uses
// when none are given: enough for a smooth chart line.
const refGridPoints = 61

// RefDiff is reference B's centiles placed in reference A's z units.
type RefDiff struct {
	Curves []RefCurve `json:"curves"`
	// Notes lists strata only in one reference and ages left out.
	Notes []string `json:"notes,omitempty"`
}

// RefCurve is one centile of B in one stratum: at Ages, B's quantile Value
// of level Tau scores Z under A; Diff = Z - Phi^-1(Tau) is how far B's
// centile lies from A's same centile in A's z units (0 when they agree).
type RefCurve struct {
	Stratum string    `json:"stratum"`
	Tau     float64   `json:"tau"`
	Ages    []float64 `json:"ages"`
	Value   []float64 `json:"value"`
	Z       []float64 `json:"z"`
	Diff    []float64 `json:"diff"`
}

// CompareReferences scores reference B's centiles of levels taus (nil means
// each stratum's chart centiles of B) at the given ages (nil means 61 equal
// steps over the age range the two share) under reference A, per stratum
// present in both (by name; two single-stratum references are paired
// whatever their names, and the result carries A's name). Ages outside the
// range shared by the two strata are left out and noted.
//
// Errors wrap ErrNoCommon when the references differ in age unit or unit or
// have no stratum in common, and the curve errors of Quantile (a tau outside
// B's grid) and Score.
func CompareReferences(a, b *curve.Reference, ages, taus []float64) (*RefDiff, error) {
	if a.AgeUnit != "" && b.AgeUnit != "" && !strings.EqualFold(a.AgeUnit, b.AgeUnit) {
		return nil, fmt.Errorf("%w: age units %q and %q differ", ErrNoCommon, a.AgeUnit, b.AgeUnit)
	}
	if a.Unit != "" && b.Unit != "" && !strings.EqualFold(a.Unit, b.Unit) {
		return nil, fmt.Errorf("%w: units %q and %q differ", ErrNoCommon, a.Unit, b.Unit)
	}
	type pair struct{ sa, sb *curve.Stratum }
	var pairs []pair
	if len(a.Strata) == 1 && len(b.Strata) == 1 {
		pairs = append(pairs, pair{&a.Strata[0], &b.Strata[0]})
	} else {
		for i := range a.Strata {
			sb, err := b.Stratum(a.Strata[i].Name)
			if err != nil {
				continue
			}
			pairs = append(pairs, pair{&a.Strata[i], sb})
		}
	}
	out := &RefDiff{}
	if !(len(a.Strata) == 1 && len(b.Strata) == 1) {
		for i := range a.Strata {
			if _, err := b.Stratum(a.Strata[i].Name); err != nil {
				out.Notes = append(out.Notes, fmt.Sprintf("stratum %q is only in the first reference", a.Strata[i].Name))
			}
		}
		for i := range b.Strata {
			if _, err := a.Stratum(b.Strata[i].Name); err != nil {
				out.Notes = append(out.Notes, fmt.Sprintf("stratum %q is only in the second reference", b.Strata[i].Name))
			}
		}
	}
	if len(pairs) == 0 {
		return nil, fmt.Errorf("%w: no stratum in common", ErrNoCommon)
	}
	for _, p := range pairs {
		lo, hi := max(p.sa.AgeMin, p.sb.AgeMin), min(p.sa.AgeMax, p.sb.AgeMax)
		if !(lo < hi) {
			out.Notes = append(out.Notes, fmt.Sprintf("stratum %q: the age ranges do not overlap", p.sa.Name))
			continue
		}
		grid := ages
		if grid == nil {
			grid = make([]float64, refGridPoints)
			for k := range grid {
				grid[k] = lo + (hi-lo)*float64(k)/float64(refGridPoints-1)
			}
			grid[refGridPoints-1] = hi
		}
		var in []float64
		left := 0
		for _, x := range grid {
			if x >= lo && x <= hi {
				in = append(in, x)
			} else {
				left++
			}
		}
		if left > 0 {
			out.Notes = append(out.Notes, fmt.Sprintf("stratum %q: %d ages outside the shared range [%g, %g] left out", p.sa.Name, left, lo, hi))
		}
		if len(in) == 0 {
			continue
		}
		ts := taus
		if ts == nil {
			ts = p.sb.Chart
		}
		for _, tau := range ts {
			c := RefCurve{Stratum: p.sa.Name, Tau: tau, Ages: in}
			zt := normQ(tau)
			for _, x := range in {
				q, err := b.Quantile(p.sb.Name, x, tau)
				if err != nil {
					return nil, fmt.Errorf("second reference, stratum %q: %w", p.sb.Name, err)
				}
				s, err := a.Score(p.sa.Name, x, q)
				z := s.Z
				if err != nil {
					z = math.NaN() // e.g. a quantile an LMS table cannot score
				}
				c.Value = append(c.Value, q)
				c.Z = append(c.Z, z)
				c.Diff = append(c.Diff, z-zt)
			}
			out.Curves = append(out.Curves, c)
		}
	}
	if len(out.Curves) == 0 {
		return nil, fmt.Errorf("%w: no age shared by a common stratum", ErrNoCommon)
	}
	return out, nil
}
