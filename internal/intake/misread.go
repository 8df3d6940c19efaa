package intake

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"growband/internal/ageunit"
)

// Misreadings looks at a table read for a build, before anything is
// fitted, for signs that the file was read with a wrong setting, and
// returns one error per sign (joined), each naming the fix:
//
//   - dates that read only with day and month swapped (Table.DateHint);
//   - ages whose measurements fit another age unit far better than the
//     plan's (years read as months, days read as months), judged against
//     rough typical values of weight, length and head circumference;
//   - a stratum with fewer used rows than MinStratumRows.
//
// plan gives the measure, its unit and age unit, the stratum column and
// the chart centiles.
func Misreadings(t *Table, plan *Plan) error {
	var errs []error
	if t.DateHint != "" {
		errs = append(errs, fmt.Errorf("%s: %s", t.Name, t.DateHint))
	}
	if plan.Input.Age != "" {
		if msg := ageUnitMisread(t, plan.Measure); msg != "" {
			errs = append(errs, fmt.Errorf("%s: %s", t.Name, msg))
		}
	}
	need := MinStratumRows(plan.Taus())
	n := map[string]int{}
	for i := range t.Rows {
		n[t.Rows[i].Stratum]++
	}
	names := make([]string, 0, len(n))
	for s := range n {
		names = append(names, s)
	}
	slices.Sort(names)
	for _, s := range names {
		if n[s] >= need {
			continue
		}
		what := "the data"
		if t.hasStratum {
			what = fmt.Sprintf("stratum %q", s)
		}
		errs = append(errs, fmt.Errorf("%s: %s has %d usable rows; fitting centiles down to %g needs at least %d: drop or merge the stratum (input.stratum_codes), or choose less extreme fit.centiles",
			t.Name, what, n[s], 100*minTail(plan.Taus()), need))
	}
	return errors.Join(errs...)
}

// minRowsBeyond is how many rows a stratum must expect beyond its most
// extreme chart centile, and minStratumFloor the fewest rows of any
// stratum: below them a centile rests on one or two measurements (common
// practice).
const (
	minRowsBeyond   = 2
	minStratumFloor = 30
)

// MinStratumRows is the fewest used rows a stratum needs to be fitted with
// the chart centiles taus (probabilities): minRowsBeyond expected beyond
// the most extreme, and at least minStratumFloor.
func MinStratumRows(taus []float64) int {
	return max(minStratumFloor, int(math.Ceil(minRowsBeyond/minTail(taus)-1e-9)))
}

func minTail(taus []float64) float64 {
	m := 0.5
	for _, t := range taus {
		m = min(m, t, 1-t)
	}
	return m
}

// typical holds rough median values by age in months of both sexes
// together, enough to tell years from months (from memory; they are a
// plausibility yardstick only, never used to score anyone).
var typical = map[string]struct{ age, value []float64 }{
	"mass": {
		[]float64{0, 3, 6, 12, 24, 36, 60, 96, 120, 144, 180, 216},
		[]float64{3.3, 6, 7.6, 9.6, 12.2, 14.3, 18.3, 25.5, 32, 40, 55, 63},
	},
	"length": {
		[]float64{0, 3, 6, 12, 24, 36, 60, 96, 120, 144, 180, 216},
		[]float64{50, 61, 67, 75, 87, 96, 110, 128, 138, 150, 168, 172},
	},
	"head": {
		[]float64{0, 3, 6, 12, 24, 36, 60, 120, 216},
		[]float64{34.5, 40.5, 43.3, 46, 48.3, 49.5, 50.7, 53, 56},
	},
}

// Thresholds of the age-unit check, as ratios of the measurements' median
// to the typical value at each row's age: the plan's unit is doubted only
// when it is off by more than unitDoubt while another unit is within
// unitFit (common practice: children's medians lie well within 25% of a
// yardstick, the error of a wrong unit is a factor of 2 or more).
const (
	unitDoubt = 1.6
	unitFit   = 1.25
	// unitSampleRows: the median ratio is taken over at most this many
	// evenly spaced rows, which place it to well under 1% (its standard
	// error is about 1.25 times the rows' spread of log ratios, some 15%,
	// over the square root of the rows: 0.06% here).
	unitSampleRows = 100000
)

// ageUnitMisread returns a message when the ages look like another unit.
func ageUnitMisread(t *Table, m Measure) string {
	ty, ok := typical[measureKind(m.Name)]
	if !ok || len(t.Rows) == 0 {
		return ""
	}
	base := map[string]string{"mass": "kg", "length": "cm", "head": "cm"}[measureKind(m.Name)]
	f, err := unitFactor(m.Unit, base)
	if err != nil || m.Unit == "" {
		return ""
	}
	declared, err := ageunit.Parse(m.AgeUnit)
	if err != nil {
		return ""
	}
	// The median is read off at most unitSampleRows evenly spaced rows.
	step := max(len(t.Rows)/unitSampleRows, 1)
	off := func(u ageunit.Unit) float64 {
		logs := make([]float64, 0, len(t.Rows)/step+1)
		for i := 0; i < len(t.Rows); i += step {
			r := &t.Rows[i]
			months := u.Convert(r.Age, ageunit.Months)
			if r.Value <= 0 || months < 0 {
				continue
			}
			logs = append(logs, math.Log(r.Value*f/interp(ty.age, ty.value, months)))
		}
		if len(logs) == 0 {
			return 0
		}
		slices.Sort(logs)
		return math.Exp(math.Abs(logs[len(logs)/2]))
	}
	have := off(declared)
	if have <= unitDoubt {
		return ""
	}
	best, bestOff := declared, have
	for _, u := range []ageunit.Unit{ageunit.Days, ageunit.Weeks, ageunit.Months, ageunit.Years} {
		if o := off(u); o < bestOff {
			best, bestOff = u, o
		}
	}
	if best == declared || bestOff > unitFit {
		return ""
	}
	return fmt.Sprintf("the ages look like %s, not %s: read as %s, the %s values are %.1f times off typical values for those ages, read as %s within %.0f%%; if the ages are in %s, set measure.age_unit = %q",
		best, declared, declared, strings.ToLower(m.Name), have, best, 100*(bestOff-1), best, best.String())
}

// interp interpolates linearly in the table (xs increasing), holding the
// end values beyond it.
func interp(xs, ys []float64, x float64) float64 {
	if x <= xs[0] {
		return ys[0]
	}
	for i := 1; i < len(xs); i++ {
		if x <= xs[i] {
			w := (x - xs[i-1]) / (xs[i] - xs[i-1])
			return ys[i-1] + w*(ys[i]-ys[i-1])
		}
	}
	return ys[len(ys)-1]
}
