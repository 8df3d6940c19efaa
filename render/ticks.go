package render

import (
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
)

// niceTicks places major ticks at multiples of 1, 2 or 5 times a power
// of ten, choosing the step that gives the count nearest target, with one
// unlabelled minor tick between majors. gonum's default ticker often gives
// only three labels on a chart this size.
type niceTicks struct {
	target int
}

// Tick targets.
const (
	xTickTarget = 9
	yTickTarget = 8
)

func (t niceTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) || math.IsInf(lo, 0) || math.IsInf(hi, 0) {
		return nil
	}
	step := niceStep(hi-lo, t.target)
	var out []plot.Tick
	first := math.Ceil(lo/step - 1e-9)
	for k := first; k*step <= hi+step*1e-9; k++ {
		v := k * step
		if math.Abs(v) < step*1e-9 {
			v = 0
		}
		out = append(out, plot.Tick{Value: v, Label: tickLabel(v, step)})
		if m := v + step/2; m <= hi {
			out = append(out, plot.Tick{Value: m})
		}
	}
	if m := first*step - step/2; m >= lo {
		out = append(out, plot.Tick{Value: m})
	}
	return out
}

// niceStep returns the tidy step nearest to span/target.
func niceStep(span float64, target int) float64 {
	if target < 2 {
		target = 2
	}
	raw := span / float64(target)
	mag := math.Pow(10, math.Floor(math.Log10(raw)))
	best, bestErr := mag, math.Inf(1)
	for _, m := range []float64{1, 2, 5, 10} {
		s := m * mag
		if e := math.Abs(math.Log(span/s) - math.Log(float64(target))); e < bestErr {
			best, bestErr = s, e
		}
	}
	return best
}

// tickLabel formats v with as many decimals as the step needs.
func tickLabel(v, step float64) string {
	dec := 0
	for d := step; math.Abs(d-math.Round(d)) > 1e-9*step && dec < 6; d *= 10 {
		dec++
	}
	return strconv.FormatFloat(v, 'f', dec, 64)
}

// ageSteps are the major tick steps, with their minor steps, that growth
// charts use in each age unit (common practice: months in quarters, halves
// and whole years, years whole). The ticker takes the first step that
// divides the range into at most ageMaxIntervals parts.
var ageSteps = map[string][][2]float64{
	"months": {{1, 0}, {3, 1}, {6, 3}, {12, 6}, {24, 12}, {60, 12}, {120, 60}},
	"years":  {{1, 0.5}, {2, 1}, {5, 1}, {10, 5}, {20, 10}},
	"weeks":  {{1, 0}, {2, 1}, {4, 2}, {13, 0}, {26, 13}, {52, 26}, {104, 52}},
	"days":   {{1, 0}, {7, 1}, {14, 7}, {28, 7}, {91, 0}, {182, 91}, {365, 0}},
}

// ageMaxIntervals is the most major intervals the age ticker allows: 0–60
// months (with room for curve labels) still ticks every 6.
const ageMaxIntervals = 11

// ageTicks ticks an age axis at the steps of its unit (ageSteps); an
// unknown unit, or a range too long for the steps, falls back to niceTicks.
type ageTicks struct {
	unit string
	max  int // most major intervals; 0 means ageMaxIntervals
}

// ageUnitKey maps "months", "month", "Months" to the key of ageSteps.
func ageUnitKey(unit string) string {
	u := strings.ToLower(strings.TrimSpace(unit))
	if !strings.HasSuffix(u, "s") {
		u += "s"
	}
	return u
}

func (t ageTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) || math.IsInf(lo, 0) || math.IsInf(hi, 0) {
		return nil
	}
	most := t.max
	if most <= 0 {
		most = ageMaxIntervals
	}
	for _, st := range ageSteps[ageUnitKey(t.unit)] {
		step, minor := st[0], st[1]
		if (hi-lo)/step > float64(most) {
			continue
		}
		var out []plot.Tick
		for k := math.Ceil(lo/step - 1e-9); k*step <= hi+step*1e-9; k++ {
			v := k*step + 0 // + 0 turns -0 into 0
			out = append(out, plot.Tick{Value: v, Label: strconv.FormatFloat(v, 'f', -1, 64)})
		}
		if minor > 0 {
			for k := math.Ceil(lo/minor - 1e-9); k*minor <= hi+minor*1e-9; k++ {
				if v := k * minor; math.Abs(math.Remainder(v, step)) > step*1e-9 {
					out = append(out, plot.Tick{Value: v})
				}
			}
		}
		if len(out) >= 2 {
			return out
		}
	}
	return niceTicks{target: xTickTarget}.Ticks(lo, hi)
}
