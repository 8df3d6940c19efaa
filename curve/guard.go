package curve

import (
	"fmt"
	"math"
	"slices"
	"sort"

	"growband/curve/solver"
)

// Flag records a sample-size guard decision: too few observations beyond the
// centile Tau in the age window [AgeLo, AgeHi).
//
// The sample-size guard: a fitted centile tau at some age rests on the observations beyond it
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
type Flag struct {
	Tau      float64 `json:"tau"`
	AgeLo    float64 `json:"age_lo"`
	AgeHi    float64 `json:"age_hi"`
	Expected float64 `json:"expected"` // expected count beyond the centile
	Action   string  `json:"action"`   // "flagged" or "dropped"
}

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

// Thresholds of the edge checks.
const (
	// MinGapShare: a gap between neighbouring centiles below a quarter of
	// its normal-theory size is a tie. Sampling noise in the outer centiles
	// of a few hundred rows moves a gap by well under half (measured on the
	// demo survey's smallest age windows), a real tie makes it zero.
	MinGapShare = 0.25
	// EdgeSlopeZ: standard errors by which the curve's mean slope across an
	// end window may differ from the data's straight-line slope (4: a
	// departure that chance alone gives about once in 16,000 per check under
	// normality, so a build of two strata and seven centiles, 28 checks,
	// fails by chance about once in 600 builds).
	EdgeSlopeZ = 4
	// HookZ: standard errors by which the data slope must differ from zero
	// before a curve turning the other way counts as a hook (common
	// practice for a clearly signed effect).
	HookZ = 3
	// EdgeMinSD: the least departure, in local SDs (sigma, as in the tie
	// check), that a bend or a hook must reach to count. With hundreds of
	// thousands of rows in an end window the standard errors shrink until
	// departures no chart can show, and no scoring notices, are
	// "significant"; a tenth of an SD is half the accuracy asked of the
	// centiles at the ends of the range (0.2 z), so a smaller departure is
	// not a problem worth stopping a build for.
	EdgeMinSD = 0.1
	// edgeHookPoints: ages at which the curve is read across an end window
	// to measure how far it turns back.
	edgeHookPoints = 21
	// EdgeMinRows: fewest rows of an end window (common practice: about
	// ten observations per parameter of a straight line, times the tail
	// fraction; 40 rows put 1.2 rows beyond the 3rd centile).
	EdgeMinRows = 40
	// EdgeGridPoints: ages of the tie check.
	EdgeGridPoints = 101
)

// normIQR is the interquartile range of the standard normal, 2*Phi^-1(0.75).
const normIQR = 1.3489795003921634

// EdgeProblem is one failed edge check.
type EdgeProblem struct {
	Stratum string
	Kind    string  // "tie", "bend" or "hook"
	Tau     float64 // the centile concerned (the lower of a tied pair)
	Tau2    float64 // the upper centile of a tied pair; 0 otherwise
	Age     float64 // where: the worst age of a tie, the end age otherwise
	Detail  string
}

func (p EdgeProblem) String() string {
	name := p.Stratum
	if name == "" {
		name = "(all)"
	}
	what := fmt.Sprintf("centile %.4g", 100*p.Tau)
	if p.Kind == "tie" {
		what = fmt.Sprintf("centiles %.4g and %.4g", 100*p.Tau, 100*p.Tau2)
	}
	return fmt.Sprintf("stratum %s, %s, age %.4g: %s: %s", name, what, p.Age, p.Kind, p.Detail)
}

// CheckEdges runs the edge checks on a fitted reference r against the
// rows d it was fitted on and returns the problems found (nil when none).
//
// CheckEdges looks for what a smooth fit can do wrong where data thin out,
// above all at the two ends of the age range, with three measurable tests
// per stratum and chart centile:
//
//   - tie: at EdgeGridPoints equally spaced ages over the whole range, the
//     gap between neighbouring chart centiles tau < tau' must be at least
//     MinGapShare of the gap a normal distribution with the local spread
//     would give, (Phi^-1(tau') - Phi^-1(tau)) * sigma(age), with sigma the
//     fitted interquartile range over 1.349 (the normal IQR in SD units).
//     Distinct centiles that (nearly) coincide fail it.
//   - bend: in each end window (the rows in the outer tenth of the range of
//     T(age), at least EdgeMinRows rows), the curve's mean slope across the
//     window, Q(a_inner) - Q(a_end) over a_inner - a_end, must agree with
//     the slope of a straight-line quantile regression of the window's rows
//     on age at the same tau within EdgeSlopeZ standard errors. The
//     standard error is Koenker's (2005) asymptotic one for iid errors,
//     sqrt(tau(1-tau)) / f(Q_tau) / (sqrt(n_w) sd(age in window)), with the
//     density at the quantile f = phi(Phi^-1(tau)) / sigma.
//   - hook: the curve's slope at the end age itself has the opposite sign to
//     the window's straight-line slope while that slope differs from zero by
//     more than HookZ standard errors: the curve turns back where the data
//     keep their direction.
//
// The checks are conservative on purpose: a problem fails a build unless
// the user accepts it, so only gross departures count.
// Strata of LMS tables are skipped. Errors wrap ErrData for data that do not
// fit the reference.
//
// References:
//   - Koenker R (2005). Quantile Regression. Cambridge University Press.
func CheckEdges(r *Reference, d *Data) ([]EdgeProblem, error) {
	groups, err := groupRows(d, &config{scale: r.AgeScale})
	if err != nil {
		return nil, err
	}
	return checkEdgesRows(r, groups)
}

// checkEdgesRows is CheckEdges on rows already grouped and sorted (prepare)
// on the reference's age scale.
func checkEdgesRows(r *Reference, groups []*rows) ([]EdgeProblem, error) {
	var out []EdgeProblem
	for _, g := range groups {
		st, err := r.Stratum(g.name)
		if err != nil {
			return nil, fmt.Errorf("%w: %w", ErrData, err)
		}
		if st.LMS != nil {
			continue
		}
		p, err := checkStratumEdges(r, st, g)
		if err != nil {
			return nil, fmt.Errorf("stratum %q: %w", g.name, err)
		}
		out = append(out, p...)
	}
	return out, nil
}

func checkStratumEdges(r *Reference, st *Stratum, g *rows) ([]EdgeProblem, error) {
	var out []EdgeProblem
	ages := make([]float64, EdgeGridPoints)
	for i := range ages {
		ages[i] = st.AgeMin + (st.AgeMax-st.AgeMin)*float64(i)/float64(EdgeGridPoints-1)
	}
	ages[len(ages)-1] = st.AgeMax
	taus := append(slices.Clone(st.Chart), 0.25, 0.75)
	tab, err := r.Table(st.Name, ages, taus)
	if err != nil {
		return nil, err
	}
	nc := len(st.Chart)
	sigma := func(row []float64) float64 { return (row[nc+1] - row[nc]) / normIQR }
	for k := 0; k+1 < nc; k++ {
		lo, hi := st.Chart[k], st.Chart[k+1]
		want := normZ(hi) - normZ(lo)
		worst, at := math.Inf(1), 0.0
		for i, row := range tab.Values {
			share := (row[k+1] - row[k]) / (want * sigma(row))
			if !(share >= worst) { // NaN (no spread) counts as worst
				worst, at = share, ages[i]
			}
		}
		if !(worst >= MinGapShare) {
			out = append(out, EdgeProblem{Stratum: st.Name, Kind: "tie", Tau: lo, Tau2: hi, Age: at,
				Detail: fmt.Sprintf("gap %.2g of the normal-theory gap (at least %g wanted)", worst, MinGapShare)})
		}
	}

	n := len(g.t)
	if n < 2*EdgeMinRows {
		return out, nil
	}
	tlo, thi := g.t[0], g.t[n-1]
	span := (thi - tlo) / DefaultGuardWindows
	lower := max(sort.SearchFloat64s(g.t, tlo+span), EdgeMinRows)
	upper := min(sort.SearchFloat64s(g.t, thi-span), n-EdgeMinRows)
	for _, w := range []struct {
		from, to int
		end      float64
	}{{0, lower, st.AgeMin}, {upper, n, st.AgeMax}} {
		p, err := checkEnd(r, st, g, w.from, w.to, w.end)
		if err != nil {
			return nil, err
		}
		out = append(out, p...)
	}
	return out, nil
}

// checkEnd runs the bend and hook checks of one end window, rows from..to-1
// of g, whose end of the range is the age end.
func checkEnd(r *Reference, st *Stratum, g *rows, from, to int, end float64) ([]EdgeProblem, error) {
	age, y, w := g.age[from:to], g.y[from:to], g.w[from:to]
	mean, sd := meanSD(age)
	if !(sd > 0) {
		return nil, nil
	}
	x := &solver.Design{Cols: 2, Width: 2, First: make([]int, len(age)), Val: make([]float64, 0, 2*len(age))}
	for _, a := range age {
		x.Val = append(x.Val, 1, a-mean)
	}
	inner := age[len(age)-1]
	if end > mean {
		inner = age[0]
	}
	q, err := r.Table(st.Name, []float64{mean, inner, end}, []float64{0.25, 0.75})
	if err != nil {
		return nil, err
	}
	sigma := (q.Values[0][1] - q.Values[0][0]) / normIQR
	_, neff := (&rows{w: w}).weight()
	var out []EdgeProblem
	for _, tau := range st.Chart {
		sol, err := solver.Solve(&solver.Problem{Y: y, X: x, W: w, Tau: tau}, nil)
		if err != nil {
			return nil, fmt.Errorf("edge slope at centile %g: %w", 100*tau, err)
		}
		dataSlope := sol.Coef[1]
		zt := normZ(tau)
		se := sigma * math.Sqrt(tau*(1-tau)) / normalPDF(zt) / (math.Sqrt(neff) * sd)
		qi, err := r.Quantile(st.Name, inner, tau)
		if err != nil {
			return nil, err
		}
		qe, err := r.Quantile(st.Name, end, tau)
		if err != nil {
			return nil, err
		}
		curveSlope := (qi - qe) / (inner - end)
		if d := math.Abs(curveSlope - dataSlope); d > EdgeSlopeZ*se && d*math.Abs(inner-end) > EdgeMinSD*sigma {
			out = append(out, EdgeProblem{Stratum: st.Name, Kind: "bend", Tau: tau, Age: end,
				Detail: fmt.Sprintf("the curve's mean slope %.3g per age unit over ages %.4g–%.4g against %.3g ± %.2g (1 SE) in the data",
					curveSlope, min(inner, end), max(inner, end), dataSlope, se)})
		}
		v, err := r.Velocity(st.Name, end, tau)
		if err != nil {
			return nil, err
		}
		if v*dataSlope < 0 && math.Abs(dataSlope) > HookZ*se {
			back, err := turnBack(r, st.Name, tau, end, inner, dataSlope)
			if err != nil {
				return nil, err
			}
			if back > EdgeMinSD*sigma {
				out = append(out, EdgeProblem{Stratum: st.Name, Kind: "hook", Tau: tau, Age: end,
					Detail: fmt.Sprintf("the curve's slope at the end is %.3g per age unit, turning back by %.2g SD, while the data near the end rise at %.3g ± %.2g (1 SE)",
						v, back/sigma, dataSlope, se)})
			}
		}
	}
	return out, nil
}

// turnBack returns how far the curve of tau runs against the data's
// direction (the sign of dataSlope) between the end age and the inner age
// of an end window: the largest amount by which it lies beyond its own end
// value on the side the data say it should not (above it at the upper end
// of the range when the data rise, and so on), 0 when it never does.
func turnBack(r *Reference, stratum string, tau, end, inner, dataSlope float64) (float64, error) {
	qe, err := r.Quantile(stratum, end, tau)
	if err != nil {
		return 0, err
	}
	// Moving from the end into the range, rising data (with the end below
	// the range) should make the curve rise: sign +1; the other cases follow.
	dir := math.Copysign(1, dataSlope) * math.Copysign(1, inner-end)
	back := 0.0
	for k := 1; k < edgeHookPoints; k++ {
		a := end + (inner-end)*float64(k)/(edgeHookPoints-1)
		q, err := r.Quantile(stratum, a, tau)
		if err != nil {
			return 0, err
		}
		back = max(back, -dir*(q-qe))
	}
	return back, nil
}

// normalPDF is the standard normal density.
func normalPDF(z float64) float64 { return math.Exp(-z*z/2) / math.Sqrt(2*math.Pi) }
