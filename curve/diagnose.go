package curve

import (
	"cmp"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sort"

	"gonum.org/v1/gonum/stat/distuv"

	"growband/spline"
)

// Diagnostics is the check of a reference against measurement data: how the
// data fall among the chart centiles and how their z-scores depart from the
// unit normal, per stratum and age group. It is data only; rendering it is
// left to the caller.
type Diagnostics struct {
	Groups  []Group   // by stratum (reference order), then by age
	Q       []QTests  // one per stratum with usable rows
	Skipped []Skipped // rows not used, in row order, with the reason
}

// Skipped is a data row Check did not use.
type Skipped struct {
	Row    int // index into the data columns
	Reason string
}

// Group is the check of one age group of one stratum.
type Group struct {
	Stratum string
	// AgeLo and AgeHi are the band edges when bands were given, else the
	// smallest and largest age in the group.
	AgeLo, AgeHi float64
	N            int
	// Moments of the group's z-scores: mean, standard deviation (divisor
	// N-1), skewness sqrt(b1) = m3/m2^1.5 and kurtosis b2 = m4/m2^2 (central
	// moments with divisor N); 0, 1, 0 and 3 for a unit normal.
	Mean, SD, Skew, Kurt float64
	Shares               []Share // one per chart centile
	Worm                 Worm
}

// Share compares the observed share of a group below one chart centile with
// the nominal share Tau.
type Share struct {
	Tau      float64
	Below    int     // rows with value < the fitted centile at their age
	Observed float64 // Below/N
	// Lo and Hi bound the Wilson (1927) 95% score interval of the share.
	Lo, Hi float64
	// Off is true when Tau lies outside [Lo, Hi]: the data disagree with the
	// centile at the 5% level (pointwise; with many centiles and groups some
	// disagreements are expected by chance).
	Off bool
}

// Worm holds the points of a worm plot (van Buuren & Fredriks 2001) of one
// group: a detrended normal Q-Q plot of the z-scores. Point i (from 0) has
// the unit normal quantile Normal[i] of Blom's (1958) plotting position
// (i+1-3/8)/(N+1/4), which approximates the expected normal order statistic
// closely (within 0.02 at N = 5), the i-th smallest z-score Z[i], and
// Deviation[i] = Z[i] - Normal[i]; [Lo[i], Hi[i]]
// is the approximate pointwise 95% envelope of the deviation for unit-normal
// data, ±1.96 sqrt(p(1-p)/N)/phi(Normal[i]) with p = Phi(Normal[i]), the
// large-sample standard error of a sample quantile. Points outside the
// envelope, or a worm with a systematic shape (a slope: wrong spread; a U:
// skewness; an S: kurtosis), mean the reference does not describe the
// group.
type Worm struct {
	Normal, Z, Deviation, Lo, Hi []float64
}

// QTests are the Q statistics of Royston & Wright (2000) for one stratum:
// with G age groups of n_g z-scores each,
//
//	Q1 = sum_g n_g zbar_g^2                                  (means)
//	Q2 = sum_g [(s_g^(2/3) - (1 - 2/(9(n_g-1)))) / sqrt(2/(9(n_g-1)))]^2
//	                                                         (variances)
//	Q3 = sum_g Zskew_g^2,  Q4 = sum_g Zkurt_g^2            (shape)
//
// where s_g^2 is the group variance, turned into a standard normal variate
// by the Wilson–Hilferty cube root, Zskew is the D'Agostino normalising
// transform of sqrt(b1) (groups of 8 or more) and Zkurt the Anscombe–Glynn
// transform of b2 (groups of 20 or more). For z-scores that are unit normal
// within each group each Q is approximately chi-squared on DF = the number of
// groups contributing. These formulas are from memory of the papers. Royston
// & Wright reduce DF by the degrees of freedom of the fitted curves, which a
// quantile-regression reference does not have in that form; DF here is the
// number of groups, exact for data independent of the fit and conservative
// (P too large) when checking the data the reference was fitted to.
type QTests struct {
	Stratum                            string
	Groups                             int
	Mean, Variance, Skewness, Kurtosis QStat
}

// QStat is one Q statistic with its chi-squared degrees of freedom and
// upper-tail P value; DF 0 (no group large enough) gives NaN Q and P.
type QStat struct {
	Q  float64
	DF int
	P  float64
}

// Settings of Check.
const (
	// diagRowsPerGroup and diagMaxGroups set the default age groups: as many
	// equal-count groups as give at least 100 rows each, at most 10. 100
	// rows make the 3rd and 97th centile shares and the kurtosis transform
	// (valid from 20 rows) meaningful; our choice.
	diagRowsPerGroup = 100
	diagMaxGroups    = 10
	// wilsonLevel is the coverage of the share intervals (common practice).
	wilsonLevel = 0.95
	// skewMinN and kurtMinN are the smallest groups for which the
	// D'Agostino and Anscombe–Glynn transforms are valid (as stated by
	// D'Agostino, Belanger & D'Agostino 1990, from memory).
	skewMinN, kurtMinN = 8, 20
	// checkBlockRows: rows are scored in parallel blocks of at least this
	// many rows (fewer rows are scored in one; our choice).
	checkBlockRows = 10000
)

// Check scores the rows of d against r and returns the diagnostics.
//
// Rows are grouped per stratum by age. bands, when not nil, gives the age
// band edges, strictly increasing: band i is [bands[i], bands[i+1]), the
// last one closed; bands holding no rows are left out. nil bands give equal-
// count groups per stratum (as many as give 100 rows each, at most 10, at
// least 1). Rows that cannot be used are listed in Skipped with the reason,
// never dropped silently: an unknown stratum, an age outside the stratum's
// fitted range or outside the bands, a value that is not finite, a
// non-positive weight. Weights are otherwise ignored: the shares and tests
// count rows.
//
// Check returns an error wrapping ErrData when the columns of d differ in
// length or bands are not finite and strictly increasing.
//
// References:
//   - Wilson E B (1927). Probable inference, the law of succession, and
//     statistical inference. Journal of the American Statistical
//     Association 22, 209–212.
//   - Royston P, Wright E M (2000). Goodness-of-fit statistics for
//     age-specific reference intervals. Statistics in Medicine 19,
//     2943–2962.
//   - van Buuren S, Fredriks M (2001). Worm plot: a simple diagnostic device
//     for modelling growth reference curves. Statistics in Medicine 20,
//     1259–1277.
//   - Blom G (1958). Statistical Estimates and Transformed Beta-Variables.
//     Wiley, New York.
//   - D'Agostino R B, Belanger A, D'Agostino R B Jr (1990). A suggestion for
//     using powerful and informative tests of normality. The American
//     Statistician 44, 316–321.
//   - Anscombe F J, Glynn W J (1983). Distribution of the kurtosis
//     statistic b2 for normal samples. Biometrika 70, 227–234.
//   - Wilson E B, Hilferty M M (1931). The distribution of chi-square.
//     Proceedings of the National Academy of Sciences 17, 684–688.
func Check(r *Reference, d *Data, bands []float64) (*Diagnostics, error) {
	n := len(d.Age)
	if len(d.Value) != n || (d.Stratum != nil && len(d.Stratum) != n) || (d.Weight != nil && len(d.Weight) != n) {
		return nil, fmt.Errorf("%w: %d ages, %d values, %d strata, %d weights", ErrData, n, len(d.Value), len(d.Stratum), len(d.Weight))
	}
	if bands != nil {
		if len(bands) < 2 {
			return nil, fmt.Errorf("%w: %d band edges, need at least 2", ErrData, len(bands))
		}
		for i, b := range bands {
			if !isFin(b) || (i > 0 && !(b > bands[i-1])) {
				return nil, fmt.Errorf("%w: band edges must be finite and strictly increasing (edge %d is %g)", ErrData, i, b)
			}
		}
	}

	// Each row's stratum, or its reason to be skipped; the look-up is done
	// once per stratum name, so the scoring below reads r only.
	type found struct {
		si  int // index in r.Strata
		b   *spline.Basis
		err error
	}
	byName := map[string]found{}
	si := make([]int32, n) // the row's stratum; -1 when skipped
	out := &Diagnostics{}
	for i := range n {
		si[i] = -1
		name := ""
		if d.Stratum != nil {
			name = d.Stratum[i]
		}
		if d.Weight != nil && !(d.Weight[i] > 0) {
			out.Skipped = append(out.Skipped, Skipped{i, fmt.Sprintf("weight %g is not positive", d.Weight[i])})
			continue
		}
		f, ok := byName[name]
		if !ok {
			st, b, err := r.lookup(name)
			f = found{b: b, err: err}
			for k := range r.Strata {
				if &r.Strata[k] == st {
					f.si = k
				}
			}
			byName[name] = f
		}
		err := f.err
		if err == nil && bands != nil && !(d.Age[i] >= bands[0] && d.Age[i] <= bands[len(bands)-1]) {
			err = fmt.Errorf("age %g outside the bands [%g, %g]", d.Age[i], bands[0], bands[len(bands)-1])
		}
		if err != nil {
			out.Skipped = append(out.Skipped, Skipped{i, err.Error()})
			continue
		}
		si[i] = int32(f.si)
	}
	bases := make([]*spline.Basis, len(r.Strata))
	for _, f := range byName {
		if f.err == nil {
			bases[f.si] = f.b
		}
	}

	// Score the rows in parallel blocks: z, and per chart centile whether
	// the value lies below it (stride: the most chart centiles of a
	// stratum). A row that cannot be scored is skipped with the reason.
	stride := 0
	for k := range r.Strata {
		stride = max(stride, len(r.Strata[k].Chart))
	}
	z := make([]float64, n)
	below := make([]bool, n*stride)
	blocks := min(runtime.GOMAXPROCS(0), max(n/checkBlockRows, 1))
	failed := make([][]Skipped, blocks)
	_ = parallel(blocks, func(k int) error {
		var ws scoreSpace
		for i := k * n / blocks; i < (k+1)*n/blocks; i++ {
			if si[i] < 0 {
				continue
			}
			st := &r.Strata[si[i]]
			s, err := ws.score(r, st, bases[si[i]], d.Age[i], d.Value[i])
			if err != nil {
				si[i] = -1
				failed[k] = append(failed[k], Skipped{i, err.Error()})
				continue
			}
			z[i] = s.Z
			for j, c := range st.Chart {
				below[i*stride+j] = d.Value[i] < ws.q[gridIndex(st.Taus, c)]
			}
		}
		return nil
	})
	for _, f := range failed {
		out.Skipped = append(out.Skipped, f...)
	}
	slices.SortStableFunc(out.Skipped, func(a, b Skipped) int { return cmp.Compare(a.Row, b.Row) })
	perStratum := make([][]int, len(r.Strata))
	for i, k := range si {
		if k >= 0 {
			perStratum[k] = append(perStratum[k], i)
		}
	}

	for sx := range r.Strata {
		st := &r.Strata[sx]
		rows := perStratum[sx]
		if len(rows) == 0 {
			continue
		}
		// By age, ties in row order.
		slices.SortFunc(rows, func(a, b int) int {
			if c := cmp.Compare(d.Age[a], d.Age[b]); c != 0 {
				return c
			}
			return cmp.Compare(a, b)
		})
		var cuts []int // group g is rows[cuts[g]:cuts[g+1]]
		var edges [][2]float64
		if bands != nil {
			for b := 0; b+1 < len(bands); b++ {
				lo := sort.Search(len(rows), func(i int) bool { return d.Age[rows[i]] >= bands[b] })
				hi := sort.Search(len(rows), func(i int) bool { return d.Age[rows[i]] >= bands[b+1] })
				if b+2 == len(bands) {
					hi = len(rows)
				}
				if hi > lo {
					cuts = append(cuts, lo, hi)
					edges = append(edges, [2]float64{bands[b], bands[b+1]})
				}
			}
		} else {
			g := min(max(len(rows)/diagRowsPerGroup, 1), diagMaxGroups)
			for k := range g {
				lo, hi := k*len(rows)/g, (k+1)*len(rows)/g
				cuts = append(cuts, lo, hi)
				edges = append(edges, [2]float64{d.Age[rows[lo]], d.Age[rows[hi-1]]})
			}
		}
		var groups []Group
		for k := 0; k < len(cuts); k += 2 {
			gr := rows[cuts[k]:cuts[k+1]]
			gz := make([]float64, len(gr))
			for i, row := range gr {
				gz[i] = z[row]
			}
			g := Group{Stratum: st.Name, AgeLo: edges[k/2][0], AgeHi: edges[k/2][1], N: len(gr)}
			g.Mean, g.SD, g.Skew, g.Kurt = moments(gz)
			for j, c := range st.Chart {
				count := 0
				for _, row := range gr {
					if below[row*stride+j] {
						count++
					}
				}
				lo, hi := wilson(count, len(gr), wilsonLevel)
				g.Shares = append(g.Shares, Share{
					Tau: c, Below: count, Observed: float64(count) / float64(len(gr)),
					Lo: lo, Hi: hi, Off: c < lo || c > hi,
				})
			}
			g.Worm = worm(gz)
			groups = append(groups, g)
		}
		out.Groups = append(out.Groups, groups...)
		out.Q = append(out.Q, qTests(st.Name, groups))
	}
	return out, nil
}

// moments returns the mean, the standard deviation (divisor n-1, NaN for
// one value), sqrt(b1) and b2 of z (NaN when the values are all equal).
func moments(z []float64) (mean, sd, skew, kurt float64) {
	n := float64(len(z))
	for _, v := range z {
		mean += v
	}
	mean /= n
	var m2, m3, m4 float64
	for _, v := range z {
		d := v - mean
		d2 := d * d
		m2 += d2
		m3 += d2 * d
		m4 += d2 * d2
	}
	sd = math.Sqrt(m2 / (n - 1))
	if len(z) < 2 {
		sd = math.NaN()
	}
	m2, m3, m4 = m2/n, m3/n, m4/n
	return mean, sd, m3 / math.Pow(m2, 1.5), m4 / (m2 * m2)
}

// wilson returns the Wilson (1927) score interval for a binomial share of
// k successes in n trials at the given coverage:
//
//	(p + c^2/2n ± c sqrt(p(1-p)/n + c^2/4n^2)) / (1 + c^2/n),  p = k/n,
//
// c the normal quantile of (1+level)/2. n = 0 gives [0, 1].
func wilson(k, n int, level float64) (lo, hi float64) {
	if n == 0 {
		return 0, 1
	}
	c := normZ((1 + level) / 2)
	nf := float64(n)
	p := float64(k) / nf
	c2 := c * c
	den := 1 + c2/nf
	mid := (p + c2/(2*nf)) / den
	half := c / den * math.Sqrt(p*(1-p)/nf+c2/(4*nf*nf))
	return max(mid-half, 0), min(mid+half, 1)
}

// WormOf returns the worm-plot points of the z-scores z (z is not
// modified), as Check computes them for each group. Its Normal and Z are
// also the points of a normal Q–Q plot. It is growband's one computation
// of these points; render only draws them.
func WormOf(z []float64) Worm { return worm(z) }

// worm returns the worm-plot points of the z-scores (z is not modified).
func worm(z []float64) Worm {
	n := len(z)
	w := Worm{
		Normal: make([]float64, n), Z: slices.Clone(z), Deviation: make([]float64, n),
		Lo: make([]float64, n), Hi: make([]float64, n),
	}
	slices.Sort(w.Z)
	c := normZ((1 + wilsonLevel) / 2)
	for i := range n {
		p := blomPosition(i, n)
		u := normZ(p)
		w.Normal[i] = u
		w.Deviation[i] = w.Z[i] - u
		se := math.Sqrt(p*(1-p)/float64(n)) / distuv.UnitNormal.Prob(u)
		w.Lo[i], w.Hi[i] = -c*se, c*se
	}
	return w
}

// blomPosition is Blom's (1958) plotting position of the i-th (from 0) of n
// sorted values, (i+1-3/8)/(n+1/4).
func blomPosition(i, n int) float64 {
	return (float64(i+1) - 3.0/8) / (float64(n) + 1.0/4)
}

// qTests computes the Royston–Wright Q statistics over the groups.
func qTests(name string, groups []Group) QTests {
	var q [4]float64
	var df [4]int
	for _, g := range groups {
		n := float64(g.N)
		q[0] += n * g.Mean * g.Mean
		df[0]++
		if g.N >= 2 && isFin(g.SD) {
			e := varZ(g.SD, g.N)
			q[1] += e * e
			df[1]++
		}
		if g.N >= skewMinN && isFin(g.Skew) {
			e := skewZ(g.Skew, g.N)
			q[2] += e * e
			df[2]++
		}
		if g.N >= kurtMinN && isFin(g.Kurt) {
			e := kurtZ(g.Kurt, g.N)
			q[3] += e * e
			df[3]++
		}
	}
	var s [4]QStat
	for i := range s {
		s[i] = QStat{Q: q[i], DF: df[i], P: math.NaN()}
		if df[i] == 0 {
			s[i].Q = math.NaN()
			continue
		}
		s[i].P = distuv.ChiSquared{K: float64(df[i])}.Survival(q[i])
	}
	return QTests{Stratum: name, Groups: len(groups), Mean: s[0], Variance: s[1], Skewness: s[2], Kurtosis: s[3]}
}

// varZ is the Wilson & Hilferty (1931) cube-root transform of the sample
// variance sd^2 of n unit-normal values ((n-1) sd^2 is chi-squared on n-1
// degrees of freedom) to an approximately standard normal variate.
func varZ(sd float64, n int) float64 {
	v := 2 / (9 * float64(n-1))
	return (math.Cbrt(sd*sd) - (1 - v)) / math.Sqrt(v)
}

// skewZ is D'Agostino's transform of the sample skewness sqrt(b1) of n
// normal values to an approximately standard normal variate (n >= 8), as
// given by D'Agostino, Belanger & D'Agostino (1990), from memory.
func skewZ(sb1 float64, n int) float64 {
	nf := float64(n)
	y := sb1 * math.Sqrt((nf+1)*(nf+3)/(6*(nf-2)))
	beta2 := 3 * (nf*nf + 27*nf - 70) * (nf + 1) * (nf + 3) / ((nf - 2) * (nf + 5) * (nf + 7) * (nf + 9))
	w2 := -1 + math.Sqrt(2*(beta2-1))
	delta := 1 / math.Sqrt(math.Log(math.Sqrt(w2)))
	alpha := math.Sqrt(2 / (w2 - 1))
	ya := y / alpha
	return delta * math.Log(ya+math.Sqrt(ya*ya+1))
}

// kurtZ is the Anscombe & Glynn (1983) transform of the sample kurtosis b2
// of n normal values to an approximately standard normal variate (n >= 20),
// from memory.
func kurtZ(b2 float64, n int) float64 {
	nf := float64(n)
	mean := 3 * (nf - 1) / (nf + 1)
	variance := 24 * nf * (nf - 2) * (nf - 3) / ((nf + 1) * (nf + 1) * (nf + 3) * (nf + 5))
	x := (b2 - mean) / math.Sqrt(variance)
	sb1 := 6 * (nf*nf - 5*nf + 2) / ((nf + 7) * (nf + 9)) * math.Sqrt(6*(nf+3)*(nf+5)/(nf*(nf-2)*(nf-3)))
	a := 6 + 8/sb1*(2/sb1+math.Sqrt(1+4/(sb1*sb1)))
	t := (1 - 2/a) / (1 + x*math.Sqrt(2/(a-4)))
	return ((1 - 2/(9*a)) - math.Cbrt(t)) / math.Sqrt(2/(9*a))
}
