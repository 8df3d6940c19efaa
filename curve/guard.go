package curve

import (
	"errors"
	"fmt"
	"math"
	"slices"

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
	// EdgeSlopeZ: standard errors by which the reference's line across an
	// end window may differ from the data's in level or slope (4: a
	// departure that chance alone gives about once in 16,000 per test under
	// normality; a build of two strata checks 2 ends, 3 windows, 7 centiles
	// and their joint test, level and slope, about 200 tests, largely
	// dependent (nested windows, neighbouring centiles), so it fails by
	// chance in at most about one build in 80 and far fewer in practice).
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
	// edgeLinePoints: age bins of an end window at which the reference's
	// own quantile-regression line is computed (the bend check); 41 bins
	// make the binning's effect on the line far smaller than the data
	// line's standard error.
	edgeLinePoints = 41
	// edgeDensityStep: half-width, in local SDs, of the central difference
	// of the reference's distribution function that gives its density in
	// Newton's method for that line.
	edgeDensityStep = 0.01
	// edgeLineIterations and edgeLineTol: Newton's method for the line
	// stops when a step moves the line by less than edgeLineTol local SDs
	// across the window (a thousandth of the smallest departure that
	// counts, EdgeMinSD), or after edgeLineIterations steps.
	edgeLineIterations = 50
	// edgeCDFEnd: the reference's distribution function is read between its
	// quantiles edgeCDFEnd and 1 - edgeCDFEnd (far beyond the chart
	// centiles, whose lines are solved for).
	edgeCDFEnd  = 1e-5
	edgeLineTol = 1e-4
	// EdgeMinRows: fewest rows of an end window (common practice: about
	// ten observations per parameter of a straight line, times the tail
	// fraction; 40 rows put 1.2 rows beyond the 3rd centile).
	EdgeMinRows = 40
	// EdgeGridPoints: ages of the tie check.
	EdgeGridPoints = 101
	// edgeMaxRows: an end window with more rows is checked on every k-th
	// of them in age order, about this many. Its data lines then have
	// standard errors of 0.01 to 0.02 SD, five to ten times finer than the smallest
	// departure that counts (EdgeMinSD), and a registry's edge checks cost
	// seconds, not minutes.
	edgeMaxRows = 20000
)

// edgeWindowShares are the end windows of the bend and hook checks, as
// shares of the rows in age order (at least EdgeMinRows): the outer tenth
// has the rows to see a gentle tilt, the outer fortieth sees a departure
// confined to the first months of growth that bends fast (after birth),
// which the wider windows dilute. Shares of rows, not of T(age), so that
// every candidate age scale is checked on the same rows: a scale that
// stretches the first months (age^(1/3)) would otherwise be checked on a
// handful of newborns and pass with curves resting on them alone.
var edgeWindowShares = []float64{1.0 / 10, 1.0 / 20, 1.0 / 40}

// normIQR is the interquartile range of the standard normal, 2*Phi^-1(0.75).
const normIQR = 1.3489795003921634

// EdgeProblem is one failed edge check.
type EdgeProblem struct {
	Stratum string
	Kind    string  // "tie", "bend" or "hook"
	Tau     float64 // the centile concerned (the lower of a tied pair); 0 for the chart centiles together
	Tau2    float64 // the upper centile of a tied pair; 0 otherwise
	Age     float64 // where: the worst age of a tie, the end age otherwise
	Detail  string
}

// stratumLabel names a stratum in messages: "(all)" for the unnamed one.
func stratumLabel(name string) string {
	if name == "" {
		return "(all)"
	}
	return name
}

func (p EdgeProblem) String() string {
	name := stratumLabel(p.Stratum)
	what := fmt.Sprintf("centile %.4g", 100*p.Tau)
	switch {
	case p.Tau == 0:
		what = "chart centiles together"
	case p.Kind == "tie":
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
//   - bend: in each end window (the outer tenth, twentieth and fortieth
//     of the rows in age order, edgeWindowShares, at least EdgeMinRows
//     rows), the reference must describe the window's data: the straight
//     line a quantile regression of the window's rows on age gives at tau
//     is compared with the line the same regression gives under the
//     reference's own distribution at those ages (see checkEnd), by level
//     at the window's mean age and by slope, each within EdgeSlopeZ
//     standard errors. The standard errors are Koenker's (2005) asymptotic
//     ones for iid errors: sqrt(tau(1-tau)) / f(Q_tau) / sqrt(n_w) for the
//     level and that over sd(age in window) for the slope, with the
//     density at the quantile f = phi(Phi^-1(tau)) / sigma. The chart
//     centiles are also tested together (edgeJoint), which sees a fit
//     that misses the data at an end with all its centiles at once.
//   - hook: a bend where the curve also turns back against the data: its
//     course across the window runs more than EdgeMinSD local SDs against
//     the direction of the data line, whose slope differs from zero by more
//     than HookZ standard errors.
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
// The strata are checked concurrently (r is only read; Build's and Load's
// references have their bases cached) and their problems listed in the
// groups' order.
func checkEdgesRows(r *Reference, groups []*rows) ([]EdgeProblem, error) {
	found := make([][]EdgeProblem, len(groups))
	err := parallel(len(groups), func(k int) error {
		g := groups[k]
		st, err := r.Stratum(g.name)
		if err != nil {
			return fmt.Errorf("%w: %w", ErrData, err)
		}
		if st.LMS != nil {
			return nil
		}
		if found[k], err = checkStratumEdges(r, st, g); err != nil {
			return fmt.Errorf("stratum %q: %w", g.name, err)
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	return slices.Concat(found...), nil
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
	seen := map[[2]float64]bool{} // (tau, end) already reported
	for _, share := range edgeWindowShares {
		m := max(int(share*float64(n)), EdgeMinRows)
		lower, upper := m, n-m
		for _, w := range []struct {
			from, to int
			end      float64
		}{{0, lower, st.AgeMin}, {upper, n, st.AgeMax}} {
			p, err := checkEnd(r, st, g, w.from, w.to, w.end)
			if err != nil {
				return nil, err
			}
			for _, q := range p {
				if k := [2]float64{q.Tau, q.Age}; !seen[k] {
					seen[k] = true
					out = append(out, q)
				}
			}
		}
	}
	return out, nil
}

// checkEnd runs the bend and hook checks of one end window, rows from..to-1
// of g, whose end of the range is the age end.
//
// The bend check compares like with like. The straight-line quantile
// regression of the window's rows estimates a population line: the line
// that minimises the expected check loss over the window's ages. When the
// true centile curve is not straight, as after birth, that line is not the
// curve's chord nor its least-squares line: it weighs each age by the
// density near the quantile, so where the curve runs far from the line its
// ages count less (Angrist, Chernozhukov & Fernández-Val 2006). So the
// fitted reference is reduced to the same thing: the line minimising the
// expected check loss under the reference's own distribution at the
// window's ages (binned at edgeLinePoints ages, weighted by their rows),
// found by Newton's method on its estimating equations
//
//	sum_k m_k (F(age_k, a + b x_k) - tau) (1, x_k) = 0,
//
// with F the reference's distribution function (Phi of its z-score) and
// x_k the age less the window's mean. A reference that describes the
// window's data gives their line up to sampling error however fast growth
// bends there; one that flicks, sags or tilts at the end does not. The two
// lines are compared by their level at the window's mean age and by their
// slope, each against the data line's standard error.
//
// References:
//   - Angrist J, Chernozhukov V, Fernández-Val I (2006). Quantile
//     regression under misspecification, with an application to the U.S.
//     wage structure. Econometrica 74, 539–563.
func checkEnd(r *Reference, st *Stratum, g *rows, from, to int, end float64) ([]EdgeProblem, error) {
	age, y, w := g.age[from:to], g.y[from:to], g.w[from:to]
	if step := (len(age) + edgeMaxRows - 1) / edgeMaxRows; step > 1 {
		// Every step-th row in age order: the window's ages keep their
		// spread, and the standard errors below are those of the rows used.
		var sa, sy, sw []float64
		for i := 0; i < len(age); i += step {
			sa, sy, sw = append(sa, age[i]), append(sy, y[i]), append(sw, w[i])
		}
		age, y, w = sa, sy, sw
	}
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
	lo, hi := min(end, inner), max(end, inner)
	win := &edgeWindow{r: r, stratum: st.Name, mean: mean,
		grid: make([]float64, edgeLinePoints), mass: make([]float64, edgeLinePoints)}
	width := (hi - lo) / edgeLinePoints
	for k := range win.grid {
		win.grid[k] = lo + width*(float64(k)+0.5)
	}
	for i, a := range age {
		k := min(max(int((a-lo)/width), 0), edgeLinePoints-1)
		win.mass[k] += w[i]
	}
	ext, err := r.Table(st.Name, win.grid, []float64{st.Taus[0], st.Taus[len(st.Taus)-1]})
	if err != nil {
		return nil, err
	}
	for _, row := range ext.Values {
		win.low, win.high = append(win.low, row[0]), append(win.high, row[1])
	}
	q, err := r.Table(st.Name, []float64{mean}, []float64{0.25, 0.75})
	if err != nil {
		return nil, err
	}
	sigma := (q.Values[0][1] - q.Values[0][0]) / normIQR
	win.step = edgeDensityStep * sigma
	_, neff := (&rows{w: w}).weight()
	var out []EdgeProblem
	var joint edgeJoint
	for _, tau := range st.Chart {
		sol, err := solver.Solve(&solver.Problem{Y: y, X: x, W: w, Tau: tau}, nil)
		if err != nil {
			return nil, fmt.Errorf("edge slope at centile %g: %w", 100*tau, err)
		}
		dataLevel, dataSlope := sol.Coef[0], sol.Coef[1]
		// Koenker's (2005) iid standard errors of the data line's level at
		// the window's mean age and of its slope (uncorrelated, the age
		// being centred).
		seLevel := sigma * math.Sqrt(tau*(1-tau)) / normalPDF(normZ(tau)) / math.Sqrt(neff)
		seSlope := seLevel / sd
		level, slope, err := win.line(tau, dataLevel, dataSlope, sigma)
		if errors.Is(err, errNoDensity) {
			continue // no line to compare: the tie check speaks
		}
		if err != nil {
			return nil, fmt.Errorf("edge line at centile %g: %w", 100*tau, err)
		}
		joint.add(tau, (level-dataLevel)/seLevel, (slope-dataSlope)/seSlope, (level-dataLevel)/sigma, (slope-dataSlope)*(hi-lo)/sigma)
		dSlope, dLevel := math.Abs(slope-dataSlope), math.Abs(level-dataLevel)
		if !(dSlope > EdgeSlopeZ*seSlope && dSlope*(hi-lo) > EdgeMinSD*sigma) && !(dLevel > EdgeSlopeZ*seLevel && dLevel > EdgeMinSD*sigma) {
			continue
		}
		// The reference departs from the data here. It hooks when its
		// curve also turns back against the data's clear direction.
		if math.Abs(dataSlope) > HookZ*seSlope {
			back, err := turnBack(r, st.Name, tau, end, inner, dataSlope)
			if err != nil {
				return nil, err
			}
			if back > EdgeMinSD*sigma {
				v, err := r.Velocity(st.Name, end, tau)
				if err != nil {
					return nil, err
				}
				out = append(out, EdgeProblem{Stratum: st.Name, Kind: "hook", Tau: tau, Age: end,
					Detail: fmt.Sprintf("the curve's slope at the end is %.3g per age unit, turning back by %.2g SD, against the data line's slope %.3g ± %.2g (1 SE) over the end window",
						v, back/sigma, dataSlope, seSlope)})
				continue
			}
		}
		out = append(out, EdgeProblem{Stratum: st.Name, Kind: "bend", Tau: tau, Age: end,
			Detail: fmt.Sprintf("over ages %.4g–%.4g the reference's line has level %.4g (at age %.4g) and slope %.3g, the data's %.4g ± %.2g and %.3g ± %.2g (1 SE)",
				lo, hi, level, mean, slope, dataLevel, seLevel, dataSlope, seSlope)})
	}
	if what, z, sds := joint.test(); what != "" {
		out = append(out, EdgeProblem{Stratum: st.Name, Kind: "bend", Age: end,
			Detail: fmt.Sprintf("over ages %.4g–%.4g the chart centiles' lines depart from the data's in %s together by %.1f SE (%.2g SD on average)",
				lo, hi, what, z, sds)})
	}
	return out, nil
}

// edgeJoint tests the chart centiles of an end window together. When a
// fit misses the data at an end, all its centiles tend to miss the same
// way, each by less than EdgeSlopeZ standard errors but together by far
// more. The mean of the centiles' standardised departures (reference line
// less data line, over its standard error) is compared with its standard
// error under the joint distribution of quantile-regression estimates:
// with iid errors, those at tau_i and tau_j are asymptotically normal with
// correlation (min(tau_i, tau_j) - tau_i tau_j) / sqrt(tau_i (1 - tau_i)
// tau_j (1 - tau_j)) (Koenker 2005, section 4.2, after Koenker & Bassett
// 1978). A level and a slope departure are tested so, each against
// EdgeSlopeZ and with the EdgeMinSD floor on the mean departure.
//
// References:
//   - Koenker R, Bassett G (1978). Regression quantiles. Econometrica 46,
//     33–50.
type edgeJoint struct {
	taus             []float64
	zLevel, zSlope   []float64 // standardised departures
	sdLevel, sdSlope float64   // summed departures in local SDs (slope: across the window)
}

func (j *edgeJoint) add(tau, zl, zs, dl, ds float64) {
	j.taus = append(j.taus, tau)
	j.zLevel, j.zSlope = append(j.zLevel, zl), append(j.zSlope, zs)
	j.sdLevel += dl
	j.sdSlope += ds
}

// se is the standard error of the mean of the standardised departures of
// the centiles added, under the joint null distribution of edgeJoint.
func (j *edgeJoint) se() float64 {
	v := 0.0
	for _, a := range j.taus {
		for _, b := range j.taus {
			v += (min(a, b) - a*b) / math.Sqrt(a*(1-a)*b*(1-b))
		}
	}
	return math.Sqrt(v) / float64(len(j.taus))
}

// test returns what departs ("level" or "slope"), by how many standard
// errors, and by how many SDs on average; "" when neither does.
func (j *edgeJoint) test() (string, float64, float64) {
	k := len(j.taus)
	if k < 2 {
		return "", 0, 0
	}
	se := j.se()
	mean := func(x []float64) float64 {
		s := 0.0
		for _, e := range x {
			s += e
		}
		return s / float64(k)
	}
	for _, c := range []struct {
		what string
		z    []float64
		sds  float64
	}{{"level", j.zLevel, j.sdLevel / float64(k)}, {"slope", j.zSlope, j.sdSlope / float64(k)}} {
		if z := mean(c.z) / se; math.Abs(z) > EdgeSlopeZ && math.Abs(c.sds) > EdgeMinSD {
			return c.what, z, c.sds
		}
	}
	return "", 0, 0
}

// errNoDensity: the reference's distribution has no density near a
// centile at an end window's ages, so its line there is not defined.
var errNoDensity = errors.New("no density near the centile")

// edgeWindow is an end window's ages, binned, for the reference's own
// quantile-regression line (see checkEnd).
type edgeWindow struct {
	r       *Reference
	stratum string
	mean    float64   // the window's mean age: x = age - mean
	grid    []float64 // bin centres
	mass    []float64 // summed row weights per bin
	low     []float64 // the quantiles of the first and last grid taus per bin
	high    []float64
	step    float64 // half-width of the difference that gives densities
}

// cdf is the reference's distribution function at the age of bin k and
// value v; values beyond the bin's quantiles at the first and last grid
// taus are held there (outside the chart centiles whose lines are solved
// for; a Box–Cox tail need not score every value beyond them).
func (e *edgeWindow) cdf(k int, v float64) (float64, error) {
	v = min(max(v, e.low[k]), e.high[k])
	sc, err := e.r.Score(e.stratum, e.grid[k], v)
	if err != nil {
		return 0, err
	}
	return normP(sc.Z), nil
}

// line solves the estimating equations of checkEnd's doc for the line
// a + b x, starting from (a, b), by Newton's method with step halving on
// the equations' norm; sigma scales the convergence test.
func (e *edgeWindow) line(tau, a, b, sigma float64) (float64, float64, error) {
	eqs := func(a, b float64, jac bool) (g [2]float64, h [3]float64, err error) {
		for k, age := range e.grid {
			m := e.mass[k]
			if m == 0 {
				continue
			}
			xk := age - e.mean
			v := a + b*xk
			f, err := e.cdf(k, v)
			if err != nil {
				return g, h, err
			}
			g[0] += m * (f - tau)
			g[1] += m * (f - tau) * xk
			if jac {
				up, err := e.cdf(k, v+e.step)
				if err != nil {
					return g, h, err
				}
				down, err := e.cdf(k, v-e.step)
				if err != nil {
					return g, h, err
				}
				dens := m * (up - down) / (2 * e.step)
				h[0] += dens
				h[1] += dens * xk
				h[2] += dens * xk * xk
			}
		}
		return g, h, nil
	}
	norm := func(g [2]float64) float64 { return math.Hypot(g[0], g[1]/max(e.spread(), 1e-300)) }
	g, h, err := eqs(a, b, true)
	if err != nil {
		return 0, 0, err
	}
	for range edgeLineIterations {
		det := h[0]*h[2] - h[1]*h[1]
		if !(det > 0) { // no density there: tied centiles, which the tie check reports
			return 0, 0, errNoDensity
		}
		da := (h[2]*g[0] - h[1]*g[1]) / det
		db := (h[0]*g[1] - h[1]*g[0]) / det
		cur := norm(g)
		var gn [2]float64
		for range 30 {
			gn, _, err = eqs(a-da, b-db, false)
			if err != nil {
				return 0, 0, err
			}
			if norm(gn) < cur {
				break
			}
			da, db = da/2, db/2
		}
		a, b = a-da, b-db
		if math.Abs(da)+math.Abs(db)*e.spread() <= edgeLineTol*sigma {
			return a, b, nil
		}
		if g, h, err = eqs(a, b, true); err != nil {
			return 0, 0, err
		}
	}
	return a, b, nil
}

// spread is the half-range of the window's bin centres about the mean.
func (e *edgeWindow) spread() float64 {
	return max(math.Abs(e.grid[0]-e.mean), math.Abs(e.grid[len(e.grid)-1]-e.mean))
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
