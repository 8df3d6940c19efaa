package curve

import (
	"math"
	"slices"
)

// Sample-size guard.
//
// A fitted centile tau at some age rests on the observations beyond it
// nearby: in an age window holding n_w observations about
// n_w * min(tau, 1-tau) are expected below (or above) the curve. When that
// count is small the curve is set by a handful of points and its sampling
// error is large whatever the smoothing. The guard splits the stratum's
// range of transformed age T(age) into Settings.GuardWindows windows of
// equal width (10 by default), so that sparsely sampled ages stand out,
// takes n_w as Kish's effective sample size of the window's weights, and
// compares the expected count with Settings.GuardMin (default 5; common
// practice asks for 5–10 observations beyond an estimated quantile, the
// same rule of thumb as for expected cell counts):
//
//   - a chart centile with fewer in some window is kept but flagged
//     (Flag.Action "flagged", one flag per run of adjacent windows, with the
//     smallest expected count of the run);
//   - an extreme grid tau (0.001, 0.005, 0.995, 0.999) is fitted only when
//     the average window expects GuardMin beyond it, that is when
//     n * min(tau, 1-tau) >= GuardMin * GuardWindows on the whole stratum;
//     otherwise it is dropped (Flag.Action "dropped", spanning the whole
//     age range). A whole-sample count of GuardMin alone would keep tau =
//     0.001 at n = 5000, with its handful of points beyond it spread over
//     all ages.
//
// The grid taus 0.01, ..., 0.99 are always fitted, as the dense grid that
// scoring interpolates; only chart centiles carry flags.

// extremeTaus are the grid taus beyond 0.01 and 0.99 that are fitted only
// when the guard allows.
var extremeTaus = []float64{0.001, 0.005, 0.995, 0.999}

// tauTol is the distance below which two taus are the same grid point.
const tauTol = 1e-12

// window is an age window [lo, hi) of the guard; the last one includes hi.
type window struct {
	lo, hi float64
	neff   float64 // Kish effective sample size, 0 for an empty window
}

// guardWindows splits the range of the t-sorted rows into count windows of
// equal width in t, reported in age units.
func guardWindows(r *rows, count int, scale AgeScale) []window {
	n := len(r.t)
	count = max(count, 1)
	lo, hi := r.t[0], r.t[n-1]
	out := make([]window, count)
	i := 0
	for j := range out {
		edge := lo + (hi-lo)*float64(j+1)/float64(count)
		sum, sq := 0.0, 0.0
		for ; i < n && (r.t[i] < edge || j == count-1); i++ {
			sum += r.w[i]
			sq += r.w[i] * r.w[i]
		}
		out[j].hi = scale.invert(edge)
		if sq > 0 {
			out[j].neff = sum * sum / sq
		}
	}
	for j := range out {
		if j == 0 {
			out[j].lo = r.age[0]
		} else {
			out[j].lo = out[j-1].hi
		}
	}
	out[count-1].hi = r.age[n-1]
	return out
}

// expected is the expected count beyond tau in a window.
func (w window) expected(tau float64) float64 { return w.neff * min(tau, 1-tau) }

// chartFlags flags the chart taus with too few expected observations beyond
// them, merging adjacent windows.
func chartFlags(chart []float64, windows []window, guardMin float64) []Flag {
	var flags []Flag
	for _, tau := range chart {
		open := false
		for _, w := range windows {
			e := w.expected(tau)
			if e >= guardMin {
				open = false
				continue
			}
			if open {
				f := &flags[len(flags)-1]
				f.AgeHi = w.hi
				f.Expected = min(f.Expected, e)
				continue
			}
			flags = append(flags, Flag{Tau: tau, AgeLo: w.lo, AgeHi: w.hi, Expected: e, Action: "flagged"})
			open = true
		}
	}
	return flags
}

// tauGrid returns the sorted tau grid: chart taus, 0.01..0.99, and the
// extreme taus the guard keeps; and a "dropped" flag for each extreme tau it
// drops.
func tauGrid(chart []float64, windows []window, guardMin float64) ([]float64, []Flag) {
	taus := slices.Clone(chart)
	for k := 1; k <= 99; k++ {
		taus = append(taus, float64(k)/100)
	}
	total := 0.0
	for _, w := range windows {
		total += w.neff
	}
	average := total / float64(len(windows))
	var dropped []Flag
	for _, tau := range extremeTaus {
		if slices.Contains(chart, tau) {
			continue
		}
		e := average * min(tau, 1-tau)
		if e >= guardMin {
			taus = append(taus, tau)
			continue
		}
		dropped = append(dropped, Flag{Tau: tau, AgeLo: windows[0].lo, AgeHi: windows[len(windows)-1].hi, Expected: e, Action: "dropped"})
	}
	slices.Sort(taus)
	out := taus[:1]
	for _, t := range taus[1:] {
		switch {
		case t-out[len(out)-1] > tauTol:
			out = append(out, t)
		case slices.Contains(chart, t):
			out[len(out)-1] = t // a chart tau is stored exactly as given
		}
	}
	// The median must be exactly 0.5: the non-crossing chain starts there.
	for i, t := range out {
		if math.Abs(t-0.5) <= tauTol {
			out[i] = 0.5
		}
	}
	return out, dropped
}
