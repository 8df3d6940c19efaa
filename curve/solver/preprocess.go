package solver

import (
	"math"
	"math/rand/v2"
	"slices"
)

// Settings of the sign-fixing reduction.
const (
	// repairShare: when more than this share of the middle set's size has
	// wrongly fixed signs, the middle set is doubled and the reduction
	// rebuilt instead of repaired row by row (Portnoy & Koenker 1997).
	repairShare = 0.1
	// rankSample: residual quantiles that place the thresholds are read off
	// this many evenly spaced rows.
	rankSample = 20000
	// reduceSeed seeds the subsample of a cold start so answers repeat.
	reduceSeed = 0x6772_6f77
)

// reduction is a problem whose data rows with confidently signed residuals
// are pooled into the linear term.
type reduction struct {
	full  *table
	nData int
	// sign per data row: +1 pooled above, -1 pooled below, 0 kept.
	sign []int8
}

// solveReduced solves the full table by Portnoy & Koenker's preprocessing.
// guess is a preliminary fit (a neighbouring solution), or nil for a cold
// start from a subsample; level is the share of data rows below the guess's
// fit that the answer is expected to move to (tau for a cold start).
//
// Rows whose residuals at the guess lie outside the central band of ranks
// [min(F0,tau) - m/2n, max(F0,tau) + m/2n] are pooled above or below; the
// reduced problem is solved exactly; then every pooled row's sign is checked
// on the full data. Wrong signs are repaired by moving those rows back, and
// the reduced problem is solved again from the current vertex, until none
// remain. The answer is then the exact optimum of the full problem: pooling
// rows replaces rho(r) by the linear minorant a*r (or -c*r), which agrees
// with it at the answer.
//
// References:
//   - Portnoy, S. & Koenker, R. (1997). The Gaussian hare and the Laplacian
//     tortoise. Statistical Science 12, 279–300.
//   - Chernozhukov, V., Fernández-Val, I. & Melly, B. (2022). Fast algorithms
//     for the quantile regression process. Empirical Economics 62, 7–33.
func solveReduced(full *table, nData int, tau float64, guess *Solution, m int, method Method, maxIter int) (*vertex, error) {
	r := make([]float64, full.rows())
	var basis []int
	iters := 0
	if guess == nil {
		sub := subsample(full, nData, m)
		b, it, err := interior(sub, maxIter)
		if err != nil {
			return nil, err
		}
		iters += it
		full.residuals(r, b)
	} else {
		full.residuals(r, guess.Coef)
		basis = guess.Basis
	}
	ys, _ := full.scales()
	tol := zeroResidual * ys
	red := &reduction{full: full, nData: nData, sign: make([]int8, nData)}
	repairs, restart := 0, true
	for {
		if restart {
			red.classify(r[:nData], tau, m)
		}
		t := red.table()
		v, err := solveTable(t, red.mapBasis(basis, t), method, maxIter)
		if err != nil {
			return nil, err
		}
		v.toFull(t, full)
		iters += v.iters
		if slices.Contains(v.basis, -1) {
			// A pooled row holds with equality: the pool was far too wide.
			repairs++
			m, restart, basis = min(2*m, nData), true, nil
			full.residuals(r, v.b)
			continue
		}
		full.residuals(r, v.b)
		var bad []int
		for i, s := range red.sign {
			if (s > 0 && r[i] < -tol) || (s < 0 && r[i] > tol) {
				bad = append(bad, i)
			}
		}
		if len(bad) == 0 {
			for i, s := range red.sign {
				switch s {
				case 1:
					v.dual[i] = full.a[i]
				case -1:
					v.dual[i] = -full.c[i]
				}
			}
			v.iters, v.repairs = iters, repairs
			return v, nil
		}
		repairs++
		basis = v.basis
		restart = float64(len(bad)) > repairShare*float64(m)
		if restart {
			m = min(2*m, nData)
			continue
		}
		for _, i := range bad {
			red.sign[i] = 0
		}
	}
}

// classify pools rows whose scaled residual ranks lie outside the band
// around the shift from the guess's level to tau. Residuals are scaled by
// the local residual size over the local share of rows (both projected
// through the design), so that the band is as wide, in units of the fit's
// own uncertainty, at every age: growth data spread more with age.
func (red *reduction) classify(r []float64, tau float64, m int) {
	f := red.full
	n, p := len(r), f.p()
	size, mass := make([]float64, p), make([]float64, p)
	for i := 0; i < n; i++ {
		first, v := f.row(i)
		ar := math.Abs(r[i])
		for k, x := range v {
			x = math.Abs(x)
			size[first+k] += x * ar
			mass[first+k] += x
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
	scaled := make([]float64, n)
	for i := 0; i < n; i++ {
		first, v := f.row(i)
		sz, ms, wsum := 0.0, 0.0, 0.0
		for k, x := range v {
			x = math.Abs(x)
			sz += x * size[first+k]
			ms += x * mass[first+k]
			wsum += x
		}
		band := 1.0
		if wsum > 0 && sz > 0 && ms > 0 {
			band = sz / wsum * math.Sqrt(mean*wsum/ms)
		}
		scaled[i] = r[i] / band
	}
	step := max(n/rankSample, 1)
	sample := make([]float64, 0, n/step+1)
	below := 0
	for i := 0; i < n; i += step {
		sample = append(sample, scaled[i])
		if r[i] < 0 {
			below++
		}
	}
	slices.Sort(sample)
	f0 := float64(below) / float64(len(sample))
	half := float64(m) / (2 * float64(n))
	lo := math.Max(math.Min(f0, tau)-half, 0)
	hi := math.Min(math.Max(f0, tau)+half, 1)
	at := func(q float64) float64 {
		k := int(q * float64(len(sample)-1))
		return sample[min(max(k, 0), len(sample)-1)]
	}
	klo, khi := math.Inf(-1), math.Inf(1)
	if lo > 0 {
		klo = at(lo)
	}
	if hi < 1 {
		khi = at(hi)
	}
	for i, x := range scaled {
		switch {
		case x < klo:
			red.sign[i] = -1
		case x > khi:
			red.sign[i] = 1
		default:
			red.sign[i] = 0
		}
	}
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
	p := f.p()
	ys, _ := f.scales()
	keep := make([]int, 0, len(red.sign)/8)
	up, down := make([]float64, p), make([]float64, p)
	var upY, downY, upW, downW float64
	for i, s := range red.sign {
		switch s {
		case 1:
			f.addRow(up, i, f.a[i])
			upY += f.a[i] * f.y[i]
			upW += f.a[i]
		case -1:
			f.addRow(down, i, f.c[i])
			downY += f.c[i] * f.y[i]
			downW += f.c[i]
		default:
			keep = append(keep, i)
		}
	}
	for i := red.nData; i < len(f.x.First); i++ {
		keep = append(keep, i)
	}
	var pool [][]float64
	var poolY []float64
	if upW > 0 {
		pool, poolY = append(pool, up), append(poolY, upY+poolMargin*upW*ys)
	}
	if downW > 0 {
		pool, poolY = append(pool, down), append(poolY, downY-poolMargin*downW*ys)
	}
	return pick(f, keep, pool, poolY)
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
	at := make(map[int]int, len(t.orig))
	for k, i := range t.orig {
		if i >= 0 {
			at[i] = k
		}
	}
	out := make([]int, len(basis))
	for k, i := range basis {
		j, ok := at[i]
		if !ok {
			return nil
		}
		out[k] = j
	}
	return out
}

// subsample returns m data rows drawn without replacement (fixed seed),
// the penalty and hard rows, with data costs scaled by n/m so that the
// penalty keeps its weight relative to the data.
func subsample(f *table, nData, m int) *table {
	rng := rand.New(rand.NewPCG(reduceSeed, uint64(nData)))
	m = min(m, nData)
	keep := rng.Perm(nData)[:m]
	slices.Sort(keep)
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
