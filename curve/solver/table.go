package solver

import "math"

// table is the solver's internal form of a problem. Rows [0, nSoft) are soft:
// a residual r_i = y_i - x_i'b costs a_i*r_i when positive and -c_i*r_i when
// negative. Rows [nSoft, rows) are hard constraints x_i'b >= y_i. The first
// rows are banded (data and penalty rows, in x); the rest are dense (pooled
// rows of preprocess.go, then the constraints, in wide).
type table struct {
	x     *Design // banded rows [0, x.Rows())
	wide  *Design // dense rows after them
	y     []float64
	a, c  []float64 // soft-row costs; unused for hard rows
	nSoft int
	// orig maps rows to those of the table this one was taken from (-1 for
	// a pooled row); nil means the identity.
	orig []int
	// poolSign holds, for each pooled row x.Rows()+k (the soft rows of
	// wide), the sign its residual keeps by construction.
	poolSign []int8
	// ys, cs cache scales(); zero until first computed.
	ys, cs float64
}

func (t *table) rows() int { return len(t.y) }
func (t *table) p() int    { return t.x.Cols }

// row returns the first stored column and the stored entries of row i.
func (t *table) row(i int) (int, []float64) {
	if n := len(t.x.First); i >= n {
		return t.wide.Row(i - n)
	}
	return t.x.Row(i)
}

// parts returns the two designs with the index of their first row.
func (t *table) parts() [2]part {
	return [2]part{{t.x, 0}, {t.wide, len(t.x.First)}}
}

type part struct {
	d   *Design
	off int
}

// newTable builds the internal form of p: data and penalty rows padded to a
// common width, then the constraint rows. Without penalty rows the table
// shares the caller's design, which it never writes.
func newTable(pr *Problem) *table {
	n, q := pr.X.Rows(), pr.X.Cols
	width := pr.X.Width
	nPen := 0
	if pr.Penalty != nil {
		nPen = pr.Penalty.Rows()
		width = max(width, pr.Penalty.Width)
	}
	nx := n + nPen
	total := nx + len(pr.G)
	vec := rowVectors(total, 3)
	t := &table{
		wide:  NewDense(pr.G),
		y:     vec[0],
		a:     vec[1],
		c:     vec[2],
		nSoft: nx,
	}
	t.wide.Cols = q
	if nPen == 0 {
		// The design is already in banded form; the table only reads it.
		t.x = pr.X
		copy(t.y, pr.Y)
		t.setTau(pr)
		copy(t.y[nx:], pr.H)
		return t
	}
	shared := sharedPenalty(pr.X, pr.Penalty, width)
	if shared != nil {
		t.x = shared
	} else {
		t.x = &Design{Cols: q, Width: width, First: make([]int, nx), Val: make([]float64, nx*width)}
	}
	put := func(i, first int, val []float64) {
		if shared != nil {
			return
		}
		f := min(first, q-width)
		t.x.First[i] = f
		copy(t.x.Val[i*width+first-f:], val)
	}
	for i := 0; i < n; i++ {
		f, v := pr.X.Row(i)
		put(i, f, v)
		w := 1.0
		if pr.W != nil {
			w = pr.W[i]
		}
		t.y[i] = pr.Y[i]
		t.a[i] = w * pr.Tau
		t.c[i] = w * (1 - pr.Tau)
	}
	for k := 0; k < nPen; k++ {
		f, v := pr.Penalty.Row(k)
		put(n+k, f, v)
		t.a[n+k] = pr.Lambda
		t.c[n+k] = pr.Lambda
	}
	copy(t.y[nx:], pr.H)
	return t
}

// sharedPenalty returns the design x extended over the penalty rows when
// x's arrays already hold them just past its own rows, padded to width as
// newTable would place them; nil otherwise. A caller that keeps its design
// so (package curve does) spares each table a copy of every data row,
// which at millions of rows is most of a table's memory. The rows are
// compared entry by entry, so a table built on them is the table newTable
// would copy; the table never writes them.
func sharedPenalty(x, pen *Design, width int) *Design {
	n, nPen, q := len(x.First), len(pen.First), x.Cols
	nx := n + nPen
	if x.Width != width || cap(x.First) < nx || cap(x.Val) < nx*width {
		return nil
	}
	first, val := x.First[:nx], x.Val[:nx*width]
	for k := range nPen {
		f, v := pen.Row(k)
		at := min(f, q-width)
		if first[n+k] != at {
			return nil
		}
		for j, got := range val[(n+k)*width : (n+k+1)*width] {
			want := 0.0
			if jj := j - (f - at); jj >= 0 && jj < len(v) {
				want = v[jj]
			}
			if got != want {
				return nil
			}
		}
	}
	return &Design{Cols: q, Width: width, First: first, Val: val}
}

// Layout of vectors over the rows, in float64s (see rowVectors).
const (
	aliasPage = 512 // 4 KiB
	aliasLine = 8   // one 64-byte cache line
)

// rowVectors returns k vectors of length n in one allocation, each starting
// a further cache line past a 4 KiB boundary. Vectors at the same offset
// modulo 4 KiB make the processor stall loads behind unrelated stores (4K
// aliasing), and the hot loops touch element i of several together.
func rowVectors(n, k int) [][]float64 {
	stride := (n+aliasPage-1)/aliasPage*aliasPage + aliasLine
	buf := make([]float64, stride*k)
	out := make([][]float64, k)
	for j := range out {
		out[j] = buf[j*stride : j*stride+n : j*stride+n]
	}
	return out
}

// setTau sets the data rows' costs for pr.Tau; the rest of the table is
// the same at every tau.
func (t *table) setTau(pr *Problem) {
	for i := range pr.X.Rows() {
		w := 1.0
		if pr.W != nil {
			w = pr.W[i]
		}
		t.a[i] = w * pr.Tau
		t.c[i] = w * (1 - pr.Tau)
	}
}

// residuals writes r_i = y_i - x_i'b for every row.
func (t *table) residuals(r, b []float64) {
	for _, pt := range t.parts() {
		w := pt.d.Width
		nr := len(pt.d.First)
		// Windows whose lengths match First spare bounds checks.
		rp, yp := r[pt.off:][:nr], t.y[pt.off:][:nr]
		for i, f := range pt.d.First {
			xi := pt.d.Val[i*w : i*w+w]
			rp[i] = yp[i] - rowDot(xi, b, f)
		}
	}
}

// objective returns the soft rows' check losses at residuals r.
func (t *table) objective(r []float64) float64 {
	f := 0.0
	for i := 0; i < t.nSoft; i++ {
		f += rho(r[i], t.a[i], t.c[i])
	}
	return f
}

func rho(r, a, c float64) float64 {
	if r > 0 {
		return a * r
	}
	return -c * r
}

// scales returns the largest |y| (at least 1) and the largest soft cost of
// the banded and hard rows, used to make tolerances relative. Pooled rows
// are left out: their responses are far from their fits by design. The
// result is cached: callers that change y or the costs a+c must reset t.ys.
func (t *table) scales() (ys, cs float64) {
	if t.ys > 0 {
		return t.ys, t.cs
	}
	defer func() { t.ys, t.cs = ys, cs }()
	ys = 1
	nx := len(t.x.First)
	// Plain comparisons: the rows hold no NaN (validated), and they run
	// faster than the built-in max, which orders NaN and signed zeros.
	for _, y := range t.y[:nx] {
		if a := math.Abs(y); a > ys {
			ys = a
		}
	}
	for _, y := range t.y[t.nSoft:] {
		if a := math.Abs(y); a > ys {
			ys = a
		}
	}
	for i, a := range t.a[:nx] {
		if s := a + t.c[i]; s > cs {
			cs = s
		}
	}
	if cs == 0 {
		cs = 1
	}
	return ys, cs
}

// addRow adds a*x_i to dst.
func (t *table) addRow(dst []float64, i int, a float64) {
	f, v := t.row(i)
	for k, x := range v {
		dst[f+k] += a * x
	}
}

// dense returns row i as a dense vector in dst.
func (t *table) dense(dst []float64, i int) {
	clear(dst)
	t.addRow(dst, i, 1)
}

// rowDot returns x'b[f:f+len(x)], a stored row times the coefficients it
// covers. It is small enough to be inlined into the hot loops, and slicing b
// to x's length lets the compiler drop the bounds checks.
func rowDot(x, b []float64, f int) float64 {
	bb := b[f : f+len(x)]
	s := 0.0
	for k, v := range x {
		s += v * bb[k]
	}
	return s
}

// firstHard returns a view of t, a table of a problem without pooled rows,
// that keeps only its first m hard rows. The view shares t's rows, costs
// included.
func (t *table) firstHard(m int) *table {
	v := *t
	w := t.wide
	v.wide = &Design{Cols: w.Cols, Width: w.Width, First: w.First[:m], Val: w.Val[:m*w.Width]}
	end := t.nSoft + m
	v.y, v.a, v.c = t.y[:end], t.a[:end], t.c[:end]
	v.ys, v.cs = 0, 0
	return &v
}

// order sets the hard rows from the m-th on, which must be the rows of the
// identity (see solveGrid), to b_j >= prev_j for dir > 0 and -b_j >= -prev_j
// for dir < 0.
func (t *table) order(m, dir int, prev []float64) {
	w := t.wide
	p := t.p()
	s := float64(dir)
	for j := range p {
		row := w.Val[(m+j)*p : (m+j+1)*p]
		clear(row)
		row[j] = s
		t.y[t.nSoft+m+j] = s * prev[j]
	}
	t.ys = 0
}
