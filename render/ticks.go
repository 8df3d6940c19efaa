package render

import (
	"math"
	"strconv"

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
