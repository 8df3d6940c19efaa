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
	// rankSample: residual quantiles that place the thresholds are read off
	// this many evenly spaced rows.
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
	// sign per data row: +1 pooled above, -1 pooled below, 0 kept.
	sign []int8
	keep []int // kept data rows, ascending
	// pooled sums of a_i x_i, a_i y_i, a_i (above) and c_i x_i, c_i y_i,
	// c_i (below).
	up, down               []float64
	upY, downY, upW, downW float64
}

// solveReduced solves the full table by Portnoy & Koenker's preprocessing.
// cr.r holds the residuals of a preliminary fit on the full table (from a
// neighbouring solution, whose basis is given), or is nil for a cold start
// from a subsample; on return it holds the residuals of the answer and
// cr.obj its objective.
//
// Rows whose residuals at the guess lie outside the central band of ranks
// [min(F0,tau) - m/2n, max(F0,tau) + m/2n] are pooled above or below, where
// F0 is the share of rows below the guess; the reduced problem is solved
// exactly; then every pooled row's sign is checked on the full data. Wrong
// signs are repaired by moving those rows back and descending from the
// current vertex by the simplex method, until none remain. The answer is
// then the exact optimum of the full problem: pooling rows replaces rho(r)
// by the linear minorant a*r (or -c*r), which agrees with it at the answer.
//
// References:
//   - Portnoy, S. & Koenker, R. (1997). The Gaussian hare and the Laplacian
//     tortoise. Statistical Science 12, 279–300.
//   - Chernozhukov, V., Fernández-Val, I. & Melly, B. (2022). Fast algorithms
//     for the quantile regression process. Empirical Economics 62, 7–33.
func solveReduced(full *table, nData int, tau float64, cr *carry, basis []int, m int, method Method, maxIter int) (*vertex, error) {
	iters := 0
	rough := cr.r == nil
	if rough {
		cr.alloc(full.rows())
		sub := subsample(full, nData, m)
		b, it, err := interior(sub, maxIter)
		if err != nil {
			return nil, err
		}
		iters += it
		full.residuals(cr.r, b)
		basis = nil
	}
	// guess holds the residuals that the rows are classified by; at holds
	// those of the latest reduced answer.
	cr.alloc(full.rows())
	guess, at := cr.r, cr.spare
	ys, _ := full.scales()
	tol := zeroResidual * ys
	red := &reduction{full: full, nData: nData, sign: make([]int8, nData)}
	repairs, restart := 0, true
	for {
		if restart {
			if cr.scale == nil {
				cr.scale = rowScales(full.x, guess[:nData])
			}
			red.classify(guess[:nData], cr.scale, tau, m)
		}
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
			// vertex is no guide. Widen the band around the same fit.
			repairs++
			m, restart, basis = min(2*m, nData), true, nil
			continue
		}
		dual := make([]float64, full.rows())
		bad, obj := red.verify(at, dual, v.b, tol)
		if len(bad) == 0 {
			for k, i := range t.orig {
				if i >= 0 {
					dual[i] = v.dual[k]
				}
			}
			v.dual = dual
			v.iters, v.repairs = iters, repairs
			cr.r, cr.spare, cr.obj = at, guess, obj
			return v, nil
		}
		repairs++
		basis = v.basis
		restart = float64(len(bad)) > repairShare*float64(m)
		if !restart {
			red.unpool(bad)
			continue
		}
		if rough {
			// The classification came from a subsample's fit, rougher than
			// the reduced optimum now at hand: classify again around it.
			guess, at = at, guess
			rough = false
			continue
		}
		// Around a good fit the band was too narrow: widen it.
		m, basis = min(2*m, nData), nil
	}
}

// alloc makes sure both residual buffers hold n rows, keeping r.
func (cr *carry) alloc(n int) {
	if len(cr.r) == n && len(cr.spare) == n {
		return
	}
	v := rowVectors(n, 2)
	copy(v[0], cr.r)
	cr.r, cr.spare = v[0], v[1]
}

// carry is what a reduced solve leaves for the next on the same table.
type carry struct {
	// r holds the residuals on the full table of the last answer (or of a
	// neighbouring solution before the first); nil means none.
	r []float64
	// scale holds the rows' residual scales (see rowScales), computed once.
	scale []float64
	// obj is the objective at r after a solve.
	obj float64
	// spare is a second residual buffer, so that a failed reduction can
	// fall back on the fit it started from.
	spare []float64
}

// verify writes the full residuals at b into r and returns the pooled rows
// whose residual has the wrong sign (beyond tol), and the objective at b.
// It also writes the multipliers of the pooled rows, a_i or -c_i, into dual.
func (red *reduction) verify(r, dual, b []float64, tol float64) (bad []int, obj float64) {
	f := red.full
	x := f.x
	w := x.Width
	n := len(red.sign)
	first, y, a, c, rd, dd := x.First[:n], f.y[:n], f.a[:n], f.c[:n], r[:n], dual[:n]
	for i, s := range red.sign {
		fi := first[i]
		xi := x.Val[i*w : i*w+w]
		bb := b[fi : fi+w]
		bb = bb[:len(xi)]
		xb := 0.0
		for k, v := range xi {
			xb += v * bb[k]
		}
		ri := y[i] - xb
		rd[i] = ri
		switch s {
		case 1:
			dd[i] = a[i]
		case -1:
			dd[i] = -c[i]
		}
		if ri > 0 {
			obj += a[i] * ri
			if s < 0 && ri > tol {
				bad = append(bad, i)
			}
		} else {
			obj -= c[i] * ri
			if s > 0 && ri < -tol {
				bad = append(bad, i)
			}
		}
	}
	// The remaining rows: penalty and hard rows.
	for _, pt := range f.parts() {
		w := pt.d.Width
		for k := max(red.nData-pt.off, 0); k < len(pt.d.First); k++ {
			i := pt.off + k
			fi := pt.d.First[k]
			r[i] = f.y[i] - dot(pt.d.Val[k*w:k*w+w], b[fi:fi+w])
			if i < f.nSoft {
				obj += rho(r[i], f.a[i], f.c[i])
			}
		}
	}
	return bad, obj
}

// rowScales returns, for each data row, the factor that turns its residual
// into units of the local residual size over the local share of rows (both
// projected through the design), so that a band of scaled residual ranks is
// as wide, in units of the fit's own uncertainty, at every age: growth data
// spread more with age.
func rowScales(x *Design, r []float64) []float64 {
	n, p, w := len(r), x.Cols, x.Width
	size, mass := make([]float64, p), make([]float64, p)
	for i, f := range x.First[:n] {
		ar := math.Abs(r[i])
		sz, ms := size[f:f+w], mass[f:f+w]
		for k, v := range x.Val[i*w : i*w+w] {
			v = math.Abs(v)
			sz[k] += v * ar
			ms[k] += v
		}
	}
	total := 0.0
	for k := range size {
		if mass[k] > 0 {
			size[k] /= mass[k]
		}
		total += mass[k]
	}
	mean := total / float64(p)
	scale := make([]float64, n)
	for i, f := range x.First[:n] {
		sz, ms := size[f:f+w], mass[f:f+w]
		s, q, wsum := 0.0, 0.0, 0.0
		for k, v := range x.Val[i*w : i*w+w] {
			v = math.Abs(v)
			s += v * sz[k]
			q += v * ms[k]
			wsum += v
		}
		scale[i] = 1
		if wsum > 0 && s > 0 && q > 0 {
			scale[i] = wsum / (s * math.Sqrt(mean*wsum/q))
		}
	}
	return scale
}

// classify pools rows whose scaled residual ranks lie outside the band
// around the shift from the guess's level to tau.
func (red *reduction) classify(r, scale []float64, tau float64, m int) {
	x := red.full.x // data rows are the first rows of the banded part
	n, w := len(r), x.Width
	step := max(n/rankSample, 1)
	sample := make([]float64, 0, n/step+1)
	below := 0
	for i := 0; i < n; i += step {
		sample = append(sample, r[i]*scale[i])
		if r[i] < 0 {
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
	klo, khi := math.Inf(-1), math.Inf(1)
	if m >= n {
		// The band is the whole data: keep every row, so that widening
		// the band always ends.
		lo, hi = 0, 1
	}
	if lo > 0 {
		klo = at(lo)
	}
	if hi < 1 {
		khi = at(hi)
	}
	red.resetPools()
	f := red.full
	up, down := red.up, red.down
	r, scale = r[:n], scale[:n]
	sign, y, ca, cc := red.sign[:n], f.y[:n], f.a[:n], f.c[:n]
	for i, fi := range x.First[:n] {
		s := r[i] * scale[i]
		switch {
		case s < klo:
			sign[i] = -1
			c := cc[i]
			d := down[fi : fi+w]
			for k, v := range x.Val[i*w : i*w+w] {
				d[k] += c * v
			}
			red.downY += c * y[i]
			red.downW += c
		case s > khi:
			sign[i] = 1
			a := ca[i]
			u := up[fi : fi+w]
			for k, v := range x.Val[i*w : i*w+w] {
				u[k] += a * v
			}
			red.upY += a * y[i]
			red.upW += a
		default:
			sign[i] = 0
			red.keep = append(red.keep, i)
		}
	}
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

// subsample returns m data rows drawn without replacement (fixed seed),
// the penalty and hard rows, with data costs scaled by n/m so that the
// penalty keeps its weight relative to the data.
func subsample(f *table, nData, m int) *table {
	rng := rand.New(rand.NewPCG(reduceSeed, uint64(nData)))
	m = min(m, nData)
	// Floyd's algorithm draws m distinct rows in O(m) draws.
	chosen := make([]bool, nData)
	for j := nData - m; j < nData; j++ {
		k := rng.IntN(j + 1)
		if chosen[k] {
			k = j
		}
		chosen[k] = true
	}
	keep := make([]int, 0, m+len(f.x.First)-nData)
	for i, c := range chosen {
		if c {
			keep = append(keep, i)
		}
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
