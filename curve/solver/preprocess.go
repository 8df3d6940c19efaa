package solver

import (
	"math"
	"math/rand/v2"
	"slices"
)

// Settings of the sign-fixing reduction.
const (
	// repairShare: when more than this share of the middle set's size has
	// wrongly fixed signs, the reduction is rebuilt instead of repaired row
	// by row: around the reduced answer when the first fit came from a
	// subsample, else with the middle set doubled (Portnoy & Koenker 1997).
	repairShare = 0.1
	// rankSample: residual quantiles that place the thresholds, and the
	// residual scales of the rows, are read off this many evenly spaced rows.
	rankSample = 50000
	// reduceSeed seeds the subsample of a cold start so answers repeat.
	reduceSeed = 0x6772_6f77
)

// reduction is a problem whose data rows with confidently signed residuals
// are pooled into two rows. The pools' sums are kept up to date as rows are
// moved back, so a repair costs work in the moved rows only.
type reduction struct {
	full  *table
	nData int
	scale *rowScale
	// sign per data row: +1 pooled above, -1 pooled below, 0 kept.
	sign []int8
	keep []int // kept data rows, ascending
	// pooled sums of a_i x_i, a_i y_i, a_i (above) and c_i x_i, c_i y_i,
	// c_i (below).
	up, down               []float64
	upY, downY, upW, downW float64
	// rows are pooled by their scaled residuals at guess: below klo, above
	// khi.
	guess    []float64
	klo, khi float64
	// costUp and costDown turn the table's costs into those of the tau
	// the rows are classified for (1 unless prepared for the next tau).
	costUp, costDown float64
}

// carry is what a reduced solve leaves for the next on the same table.
type carry struct {
	// guess holds coefficients near the answer (a neighbour's, perhaps
	// moved along the trend of the grid); rows are classified by their
	// residuals at it. nil means none: the first fit is a subsample's.
	guess []float64
	// ready, when not nil, is the classification at guess for this
	// problem, made by the previous solve's verifying pass.
	ready *reduction
	// ahead, when not nil, is the next problem of a grid, for which the
	// verifying pass classifies the rows at the same time.
	ahead *ahead
	// scale holds the residual scales of the rows, from the first fit.
	scale *rowScale
	// spare is a spent reduction whose buffers the next may reuse.
	spare *reduction
	// obj is the objective at the answer after a solve.
	obj float64
}

// ahead describes the next problem of a grid: its tau and middle-set size,
// and the solution before the current one (nil for none), from which the
// trend of the coefficients in tau is extrapolated.
type ahead struct {
	tau       float64
	m         int
	before    []float64
	tauBefore float64
}

// solveReduced solves the full table by Portnoy & Koenker's preprocessing.
// cr.guess holds coefficients near the answer (from a neighbouring
// solution, whose basis is given), or is nil for a cold start from a
// subsample; on return cr holds the guess and classification for the next
// problem and the objective of this one.
//
// Rows whose scaled residuals at the guess lie outside the central band of
// ranks [min(F0,tau) - m/2n, max(F0,tau) + m/2n] are pooled above or below,
// where F0 is the share of rows below the guess; the reduced problem is
// solved exactly; then every pooled row's sign is checked on the full data.
// Wrong signs are repaired by moving those rows back and descending from the
// current vertex by the simplex method, until none remain. The answer is
// then the exact optimum of the full problem: pooling rows replaces rho(r)
// by the linear minorant a*r (or -c*r), which agrees with it at the answer.
// On a grid of tau, the guess for the next tau is the answer moved along the
// trend from its predecessor, and the pass that verifies one tau classifies
// the rows for the next, so each tau costs one pass over the data.
//
// References:
//   - Portnoy, S. & Koenker, R. (1997). The Gaussian hare and the Laplacian
//     tortoise. Statistical Science 12, 279–300.
//   - Chernozhukov, V., Fernández-Val, I. & Melly, B. (2022). Fast algorithms
//     for the quantile regression process. Empirical Economics 62, 7–33.
func solveReduced(full *table, nData int, tau float64, cr *carry, basis []int, m int, method Method, maxIter int) (*answer, error) {
	iters := 0
	guess := cr.guess
	rough := guess == nil
	if rough {
		sub := subsample(full, nData, m)
		b, it, err := interior(sub, maxIter, guessGapTol)
		if err != nil {
			return nil, err
		}
		iters += it
		guess, basis = b, nil
	}
	if cr.scale == nil {
		cr.scale = newRowScale(full.x, full.y, nData, guess)
	}
	ys, _ := full.scales()
	tol, tie := zeroResidual*ys, tieResidual*ys
	red := cr.ready
	cr.ready = nil
	if red != nil {
		// Prepared on another view of the same data rows (a grid's first
		// tau has no ordering rows): its pools stand, its other rows are
		// full's.
		red.full = full
	}
	if red == nil || !slices.Equal(red.guess, guess) {
		red = cr.reduction(full, nData)
		red.classify(guess, tau, m)
	}
	repairs := 0
	rebuilt := false
	for {
		t := red.table()
		start := red.mapBasis(basis, t)
		use := method
		if repairs > 0 && start != nil {
			// A repair moves back few rows: the old vertex is close.
			use = Simplex
		}
		v, err := solveTable(t, start, use, maxIter)
		if err != nil {
			return nil, err
		}
		// The basis in full-table rows; the duals follow once verified.
		for k, i := range v.basis {
			v.basis[k] = t.orig[i]
		}
		iters += v.iters
		if slices.Contains(v.basis, -1) {
			// A pooled row holds with equality: the band was far too narrow
			// for the reduced problem to resemble the full one, so its
			// vertex is no guide. Widen the band around the same guess.
			repairs++
			m, basis = min(2*m, nData), nil
			red.classify(guess, tau, m)
			continue
		}
		var next *reduction
		if ah := cr.ahead; ah != nil {
			next = cr.reduction(full, nData)
			next.prepare(v.b, tau, ah)
		}
		bad, zero, obj, cert := red.verify(v.b, tau, tol, tie, next, t, v.dual)
		if len(bad) == 0 && cert != nil {
			// Every pooled sign holds, yet the answer is not optimal for
			// the full problem: the reduction itself is wrong (a defect,
			// not a narrow band). Rebuild it from nothing once; if that
			// fails too, the caller solves the full problem unreduced.
			cr.spare, cr.ready = nil, nil
			if rebuilt {
				return nil, &reductionError{cert}
			}
			rebuilt = true
			repairs++
			red = &reduction{sign: make([]int8, nData), full: full, nData: nData, scale: cr.scale}
			red.classify(guess, tau, m)
			basis = nil
			continue
		}
		if len(bad) == 0 {
			v.iters, v.repairs = iters, repairs
			cr.obj, cr.guess, cr.ready = obj, v.b, next
			if next != nil {
				cr.guess = next.guess
			}
			a := &answer{v: v, obj: obj, zero: zero, dualAt: red.dualAt(v.dual), mu: v.dual[t.nSoft:]}
			cr.spare = red
			return a, nil
		}
		cr.spare = next
		repairs++
		basis = v.basis
		if float64(len(bad)) <= repairShare*float64(m) {
			red.unpool(bad)
			continue
		}
		if rough {
			// The classification came from a subsample's fit, rougher than
			// the reduced optimum now at hand: classify again around it.
			guess, rough = v.b, false
		} else {
			// Around a good guess the band was too narrow: widen it.
			m, basis = min(2*m, nData), nil
		}
		red.classify(guess, tau, m)
	}
}

// reductionError reports a reduced answer that failed the optimality check
// on the full problem even after the reduction was rebuilt.
type reductionError struct{ cert error }

func (e *reductionError) Error() string { return "reduced solve: " + e.cert.Error() }
func (e *reductionError) Unwrap() error { return e.cert }

// reduction returns an empty reduction of full, reusing the spare one's
// buffers (a spent reduction's pools are not read again).
func (cr *carry) reduction(full *table, nData int) *reduction {
	red := cr.spare
	cr.spare = nil
	if red == nil || red.full.x != full.x || len(red.sign) != nData {
		red = &reduction{sign: make([]int8, nData)}
	}
	red.full, red.nData, red.scale = full, nData, cr.scale
	red.costUp, red.costDown = 1, 1
	return red
}

// dualAt returns the multiplier of a soft row of the full table given the
// multipliers dual of the reduced table's rows: a pooled row's is fixed by
// its sign, a kept row's is the reduced table's.
func (red *reduction) dualAt(dual []float64) func(i int) float64 {
	f := red.full
	return func(i int) float64 {
		if i >= red.nData {
			// Penalty rows follow the kept data rows in the reduced table.
			return dual[len(red.keep)+i-red.nData]
		}
		switch red.sign[i] {
		case 1:
			return f.a[i]
		case -1:
			return -f.c[i]
		}
		k, _ := slices.BinarySearch(red.keep, i)
		return dual[k]
	}
}

// rowScale turns a row's residual into units of the local residual size over
// the local share of rows, so that a band of scaled residual ranks is as
// wide, in units of the fit's own uncertainty, at every age: growth data
// spread more with age. Each coefficient k gets the scale
// 1/(size_k*sqrt(mean/mass_k)) from the mean absolute residual (size) and the
// design mass of the rows it covers; a row's scale is the average of its
// coefficients' scales weighted by |x_ik|, one short dot product per row.
type rowScale struct {
	per []float64 // per coefficient
	// row holds each data row's scale once filled (by the first pass that
	// classifies rows), so later passes of a grid read it. Single
	// precision suffices to place rows in a band and halves the memory.
	row    []float32
	filled bool
	// mass holds sum_i (a_i+c_i)|x_ik| per coefficient and massY
	// sum_i (a_i+c_i)|y_i| over the data rows, filled with row. A data
	// row's multiplier is at most max(tau, 1-tau)(a_i+c_i) in size, so
	// these bound the sizes of the terms of the certificate's sums from
	// the pooled rows without summing them at every tau.
	mass  []float64
	massY float64
}

// newRowScale estimates the residual scales from the residuals at b of
// evenly spaced data rows.
func newRowScale(x *Design, y []float64, n int, b []float64) *rowScale {
	p, w := x.Cols, x.Width
	size, mass := make([]float64, p), make([]float64, p)
	step := max(n/rankSample, 1)
	for i := 0; i < n; i += step {
		f := x.First[i]
		xi := x.Val[i*w : i*w+w]
		ar := math.Abs(y[i] - dot(xi, b[f:f+w]))
		for k, v := range xi {
			v = math.Abs(v)
			size[f+k] += v * ar
			mass[f+k] += v
		}
	}
	total := 0.0
	for _, v := range mass {
		total += v
	}
	mean := total / float64(p)
	s := &rowScale{per: make([]float64, p), row: make([]float32, n), mass: make([]float64, p)}
	for k := range s.per {
		s.per[k] = 0
		if mass[k] > 0 && size[k] > 0 {
			// size[k]/mass[k] is the mean |residual| near coefficient k.
			s.per[k] = mass[k] / (size[k] * math.Sqrt(mean/mass[k]))
		}
	}
	return s
}

// of returns the scale of the row with entries xi from column f.
func (s *rowScale) of(xi []float64, f int) float64 {
	per := s.per[f : f+len(xi)]
	num, den := 0.0, 0.0
	for k, v := range xi {
		v = math.Abs(v)
		num += v * per[k]
		den += v
	}
	if num > 0 {
		return num / den
	}
	return 1
}

// band sets the thresholds at guess for tau and middle-set size m from the
// scaled residuals of evenly spaced rows.
func (red *reduction) band(guess []float64, tau float64, m int) {
	f, n := red.full, red.nData
	x, w := f.x, f.x.Width
	red.guess = slices.Clone(guess)
	red.klo, red.khi = math.Inf(-1), math.Inf(1)
	if m >= n {
		// The band is the whole data: keep every row, so that widening
		// the band always ends.
		return
	}
	step := max(n/rankSample, 1)
	sample := make([]float64, 0, n/step+1)
	below := 0
	for i := 0; i < n; i += step {
		fi := x.First[i]
		xi := x.Val[i*w : i*w+w]
		r := f.y[i] - dot(xi, guess[fi:fi+w])
		sample = append(sample, r*red.scale.of(xi, fi))
		if r < 0 {
			below++
		}
	}
	f0 := float64(below) / float64(len(sample))
	half := float64(m) / (2 * float64(n))
	lo := max(min(f0, tau)-half, 0)
	hi := min(max(f0, tau)+half, 1)
	at := func(q float64) float64 {
		k := int(q * float64(len(sample)-1))
		return nth(sample, min(max(k, 0), len(sample)-1))
	}
	if lo > 0 {
		red.klo = at(lo)
	}
	if hi < 1 {
		red.khi = at(hi)
	}
}

// classify pools the rows by their scaled residuals at guess, in a band of
// middle-set size m around tau.
func (red *reduction) classify(guess []float64, tau float64, m int) {
	red.band(guess, tau, m)
	red.resetPools()
	// The table's costs are already this tau's: a reduction prepared by
	// the previous solve carries factors to rescale that tau's costs,
	// which must not apply to a classification made afresh.
	red.costUp, red.costDown = 1, 1
	red.pass(nil, 0, 0, red, nil, nil)
}

// prepare sets red up to be filled by the verifying pass of the answer b at
// tau: the guess for the next tau is b moved along the trend from the
// solution before (linear extrapolation in tau), and the thresholds are
// placed at it. Regression quantiles are piecewise constant in tau but
// follow a smooth curve on a fine grid, so the moved guess places the next
// fit's residual ranks far better than b alone (Chernozhukov, Fernández-Val
// & Melly 2022 predict the next solution so).
func (red *reduction) prepare(b []float64, tau float64, ah *ahead) {
	g := slices.Clone(b)
	if ah.before != nil && ah.tauBefore != tau {
		k := (ah.tau - tau) / (tau - ah.tauBefore)
		for j := range g {
			g[j] += k * (b[j] - ah.before[j])
		}
	}
	red.band(g, ah.tau, ah.m)
	red.resetPools()
	// Data rows cost a_i = w_i*tau and c_i = w_i*(1-tau), so the next
	// tau's costs are proportional to the table's.
	red.costUp, red.costDown = ah.tau/tau, (1-ah.tau)/(1-tau)
}

// verify checks the answer b of the reduced table t, whose multipliers are
// dual, on the full problem. It returns the pooled rows whose residual at b
// has the wrong sign (beyond tol), the soft rows whose residual is within
// tie of zero, the objective at b, and the outcome of the full optimality
// check (see certifier): every row's multiplier (a pooled row's fixed by its
// sign, a kept row's the reduced table's) against its residual, the
// constraints, stationarity and the primal-dual gap. When next is not nil
// the same pass classifies the rows for next (prepared for its tau; the
// costs are rescaled to it afterwards).
func (red *reduction) verify(b []float64, tau, tol, tie float64, next *reduction, t *table, dual []float64) (bad, zero []int, obj float64, cert error) {
	ck := newCertifier(red.full.p(), tol)
	bad, zero, obj = red.pass(b, tol, tie, next, ck, dual)
	share := max(tau, 1-tau)
	for k, v := range red.scale.mass {
		ck.stAbs[k] += share * v
	}
	ck.dualAbs += share * red.scale.massY
	f := red.full
	// The remaining rows: penalty rows, whose multipliers follow the kept
	// data rows in t, and hard rows, which follow t's soft rows.
	nk := len(red.keep)
	for _, pt := range f.parts() {
		w := pt.d.Width
		for k := max(red.nData-pt.off, 0); k < len(pt.d.First); k++ {
			i := pt.off + k
			fi := pt.d.First[k]
			xi := pt.d.Val[k*w : k*w+w]
			r := f.y[i] - dot(xi, b[fi:fi+w])
			if i >= f.nSoft {
				j := i - f.nSoft
				ck.hard(j, f.y[i], -r, dual[t.nSoft+j], xi)
				continue
			}
			obj += rho(r, f.a[i], f.c[i])
			if math.Abs(r) <= tie {
				zero = append(zero, i)
			}
			ck.soft(i, f.y[i], r, dual[nk+i-red.nData], f.a[i], f.c[i], fi, xi)
		}
	}
	ck.primal = obj
	return bad, zero, obj, ck.err()
}

// pass sweeps the data rows once. With b, it returns the pooled rows of red
// whose residual at b has the wrong sign (beyond tol), the rows whose
// residual is within tie of zero and the data rows' objective at b, and it
// adds every data row to ck with its multiplier: a pooled row's fixed by its
// sign, a kept row's from dual (in the order of red.keep). With into, it
// pools into's rows by their scaled residuals at into.guess, with costs
// times into.costUp and into.costDown. Both are done in one pass as the
// sweep is bound by reading the rows from memory.
func (red *reduction) pass(b []float64, tol, tie float64, into *reduction, ck *certifier, dual []float64) (bad, zero []int, obj float64) {
	f := red.full
	x, n := f.x, red.nData
	w := x.Width
	first, y, ca, cc := x.First[:n], f.y[:n], f.a[:n], f.c[:n]
	check := b != nil
	var (
		g, up, down            []float64
		keep                   []int
		isign                  []int8
		scale                  []float32
		fill                   bool
		klo, khi               float64
		upY, downY, upW, downW float64
	)
	if into != nil {
		g, up, down, keep, isign = into.guess, into.up, into.down, into.keep, into.sign[:n]
		scale, fill = into.scale.row[:n], !into.scale.filled
		klo, khi = into.klo, into.khi
	}
	sign := red.sign[:n]
	var sumAbs, sumLin, yd float64
	var st []float64
	kept := 0
	if check {
		st = ck.st
	}
	for i, fi := range first {
		xi := x.Val[i*w : i*w+w]
		if check {
			ri := y[i] - rowDot(xi, b, fi)
			// rho(r) = ((a+c)|r| + (a-c)r)/2, free of branches on the sign
			// of r, which alternates at random (and of the built-in max,
			// which orders NaN and signed zeros).
			sumAbs += (ca[i] + cc[i]) * math.Abs(ri)
			sumLin += (ca[i] - cc[i]) * ri
			s := float64(sign[i])
			if s*ri < -tol {
				bad = append(bad, i)
			}
			if math.Abs(ri) <= tie {
				zero = append(zero, i)
			}
			if sign[i] == 0 {
				// A kept row: its multiplier is the reduced table's.
				ck.soft(i, y[i], ri, dual[kept], ca[i], cc[i], fi, xi)
				kept++
			} else {
				// A pooled row: a_i above, -c_i below, without branching.
				d := 0.5 * ((1+s)*ca[i] - (1-s)*cc[i])
				// The sizes of these terms are bounded through
				// rowScale.mass, not summed here.
				sv := st[fi : fi+w]
				sv = sv[:len(xi)]
				for k, v := range xi {
					sv[k] += d * v
				}
				yd += y[i] * d
			}
		}
		if into == nil {
			continue
		}
		// The row is pooled below when its scaled residual r*scale is
		// below klo, above when above khi. Which it is alternates at random
		// along the rows, so the choice is made without branching (the
		// compiler emits conditional moves) and both pools are summed,
		// one of them with weight zero.
		if fill {
			scale[i] = float32(into.scale.of(xi, fi))
			cw := ca[i] + cc[i]
			mass := into.scale.mass[fi : fi+w]
			for k, v := range xi {
				mass[k] += cw * math.Abs(v)
			}
			into.scale.massY += cw * math.Abs(y[i])
		}
		rs := (y[i] - rowDot(xi, g, fi)) * float64(scale[i])
		ku, kd := 0, 0
		if rs > khi {
			ku = 1
		}
		if rs < klo {
			kd = 1
		}
		isign[i] = int8(ku - kd)
		if ku == kd {
			keep = append(keep, i)
			continue
		}
		gu, gd := float64(ku)*ca[i], float64(kd)*cc[i]
		u, d := up[fi:fi+w], down[fi:fi+w]
		u, d = u[:len(xi)], d[:len(xi)]
		for k, v := range xi {
			u[k] += gu * v
			d[k] += gd * v
		}
		yi := y[i]
		upY += gu * yi
		upW += gu
		downY += gd * yi
		downW += gd
	}
	obj = (sumAbs + sumLin) / 2
	if check {
		ck.dual += yd
	}
	if into != nil {
		into.scale.filled = true
		for k := range up {
			up[k] *= into.costUp
			down[k] *= into.costDown
		}
		into.keep = keep
		into.upY, into.upW = upY*into.costUp, upW*into.costUp
		into.downY, into.downW = downY*into.costDown, downW*into.costDown
	}
	return bad, zero, obj
}

// nth returns the k-th smallest element of a, partly reordering a
// (Hoare's selection, expected linear time).
func nth(a []float64, k int) float64 {
	lo, hi := 0, len(a)-1
	for lo < hi {
		pivot := a[lo+(hi-lo)/2]
		i, j := lo, hi
		for i <= j {
			for a[i] < pivot {
				i++
			}
			for a[j] > pivot {
				j--
			}
			if i <= j {
				a[i], a[j] = a[j], a[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return a[k]
		}
	}
	return a[k]
}

// resetPools empties the pools and the kept rows.
func (red *reduction) resetPools() {
	p := red.full.p()
	red.up, red.down = resize(red.up, p), resize(red.down, p)
	clear(red.up)
	clear(red.down)
	red.upY, red.downY, red.upW, red.downW = 0, 0, 0, 0
	red.keep = red.keep[:0]
}

// pool adds k times data row i to the pool of sign s: k = 1 pools the row,
// k = -1 takes it back out.
func (red *reduction) pool(i int, s int8, k float64) {
	f := red.full
	if s > 0 {
		a := k * f.a[i]
		f.addRow(red.up, i, a)
		red.upY += a * f.y[i]
		red.upW += a
		return
	}
	c := k * f.c[i]
	f.addRow(red.down, i, c)
	red.downY += c * f.y[i]
	red.downW += c
}

// unpool moves the given pooled rows back into the kept set.
func (red *reduction) unpool(rows []int) {
	for _, i := range rows {
		red.pool(i, red.sign[i], -1)
		red.sign[i] = 0
	}
	red.keep = append(red.keep, rows...)
	slices.Sort(red.keep)
}

// poolMargin sets how far a pooled row's response lies from its fit, in
// units of the pooled weight times max|y|: far enough that its residual keeps
// its sign at any sensible vertex, while the row still bounds the reduced
// problem (a pure linear term would not).
const poolMargin = 10

// table builds the reduced problem: kept data rows and penalty rows, one
// pooled row for each sign, and the hard rows.
func (red *reduction) table() *table {
	f := red.full
	ys, _ := f.scales()
	keep := slices.Grow(slices.Clone(red.keep), len(f.x.First)-red.nData)
	for i := red.nData; i < len(f.x.First); i++ {
		keep = append(keep, i)
	}
	var pool [][]float64
	var poolY []float64
	var sign []int8
	if red.upW > 0 {
		pool, poolY, sign = append(pool, red.up), append(poolY, red.upY+poolMargin*red.upW*ys), append(sign, 1)
	}
	if red.downW > 0 {
		pool, poolY, sign = append(pool, red.down), append(poolY, red.downY-poolMargin*red.downW*ys), append(sign, -1)
	}
	t := pick(f, keep, pool, poolY)
	t.poolSign = sign
	return t
}

// pick returns the table of the given banded rows of f, the pooled rows
// (cost 1 either side) and f's hard rows.
func pick(f *table, keep []int, pool [][]float64, poolY []float64) *table {
	w, p := f.x.Width, f.p()
	nh := f.rows() - f.nSoft
	nk := len(keep)
	total := nk + len(pool) + nh
	t := &table{
		x:     &Design{Cols: p, Width: w, First: make([]int, nk), Val: make([]float64, nk*w)},
		wide:  &Design{Cols: p, Width: p, First: make([]int, len(pool)+nh), Val: make([]float64, 0, (len(pool)+nh)*p)},
		y:     make([]float64, total),
		a:     make([]float64, total),
		c:     make([]float64, total),
		nSoft: nk + len(pool),
		orig:  make([]int, total),
	}
	for k, i := range keep {
		t.x.First[k] = f.x.First[i]
		copy(t.x.Val[k*w:], f.x.Val[i*w:i*w+w])
		t.y[k], t.a[k], t.c[k], t.orig[k] = f.y[i], f.a[i], f.c[i], i
	}
	for k, row := range pool {
		t.wide.Val = append(t.wide.Val, row...)
		t.y[nk+k], t.a[nk+k], t.c[nk+k], t.orig[nk+k] = poolY[k], 1, 1, -1
	}
	for j := 0; j < nh; j++ {
		_, g := f.row(f.nSoft + j)
		t.wide.Val = append(t.wide.Val, g...)
		k := nk + len(pool) + j
		t.y[k], t.orig[k] = f.y[f.nSoft+j], f.nSoft+j
	}
	return t
}

// mapBasis translates a basis in full-table rows to t's rows, or nil when a
// row is not in t.
func (red *reduction) mapBasis(basis []int, t *table) []int {
	if basis == nil {
		return nil
	}
	at := make(map[int]int, len(basis))
	for k, i := range basis {
		at[i] = k
	}
	out := make([]int, len(basis))
	found := 0
	for k, i := range t.orig {
		if j, ok := at[i]; ok && i >= 0 {
			out[j] = k
			found++
		}
	}
	if found != len(basis) {
		return nil
	}
	return out
}

// subsample returns m distinct data rows drawn at random (fixed seed),
// the penalty and hard rows, with data costs scaled by n/m so that the
// penalty keeps its weight relative to the data.
func subsample(f *table, nData, m int) *table {
	rng := rand.New(rand.NewPCG(reduceSeed, uint64(nData)))
	m = min(m, nData)
	// One row drawn from each of m equal blocks: every row has the same
	// chance, the draw costs O(m), and rows sorted by age are sampled
	// evenly over the ages (stratified sampling).
	keep := make([]int, 0, m+len(f.x.First)-nData)
	for k := range m {
		lo, hi := k*nData/m, (k+1)*nData/m
		keep = append(keep, lo+rng.IntN(hi-lo))
	}
	for i := nData; i < len(f.x.First); i++ {
		keep = append(keep, i)
	}
	t := pick(f, keep, nil, nil)
	scale := float64(nData) / float64(m)
	for k := 0; k < m; k++ {
		t.a[k] *= scale
		t.c[k] *= scale
	}
	return t
}
