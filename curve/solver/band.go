package solver

import "math"

// bandCholesky is the Cholesky factor L (A = L L') of a symmetric positive
// definite p-by-p matrix whose entries vanish more than bw places from the
// diagonal. L has the same band, stored by rows: l[i*(bw+1)+bw-(i-j)] holds
// L[i][j] for i-bw <= j <= i. The normal matrix of a B-spline design with
// rows of w entries has bandwidth w-1, so factoring costs O(p·w²) and each
// solve O(p·w) (Golub & Van Loan 1996, Matrix Computations, 3rd ed.,
// section 4.3.5, band Cholesky; from memory).
type bandCholesky struct {
	p, bw int
	l     []float64
}

// bandwidth returns the largest |i-j| with a non-zero entry in the upper
// triangle of the p-by-p row-major matrix a with the given stride.
func bandwidth(a []float64, p, stride int) int {
	bw := 0
	for i := 0; i < p; i++ {
		for j := p - 1; j > i+bw; j-- {
			if a[i*stride+j] != 0 {
				bw = j - i
				break
			}
		}
	}
	return bw
}

// factor factors the matrix whose upper triangle is in a (row-major, with
// the given stride) and reports whether it is numerically positive definite.
func (c *bandCholesky) factor(a []float64, p, stride int) bool {
	bw := bandwidth(a, p, stride)
	c.p, c.bw = p, bw
	width := bw + 1
	if cap(c.l) < p*width {
		c.l = make([]float64, p*width)
	}
	c.l = c.l[:p*width]
	clear(c.l)
	at := func(i, j int) int { return i*width + bw - (i - j) } // L[i][j], j <= i
	for i := 0; i < p; i++ {
		lo := max(0, i-bw)
		for j := lo; j <= i; j++ {
			s := a[j*stride+i] // A[j][i] = A[i][j], upper triangle
			for k := max(lo, j-bw); k < j; k++ {
				s -= c.l[at(i, k)] * c.l[at(j, k)]
			}
			if j < i {
				c.l[at(i, j)] = s / c.l[at(j, j)]
				continue
			}
			if !(s > 0) || math.IsInf(s, 0) {
				return false
			}
			c.l[at(i, i)] = math.Sqrt(s)
		}
	}
	return true
}

// solve sets x to the solution of L L' x = b (x and b may be the same).
func (c *bandCholesky) solve(x, b []float64) {
	p, bw, width := c.p, c.bw, c.bw+1
	copy(x, b)
	// Forward: L z = b.
	for i := 0; i < p; i++ {
		s := x[i]
		row := c.l[i*width:]
		for j := max(0, i-bw); j < i; j++ {
			s -= row[bw-(i-j)] * x[j]
		}
		x[i] = s / row[bw]
	}
	// Backward: L' x = z; column i of L' is row i of L.
	for i := p - 1; i >= 0; i-- {
		x[i] /= c.l[i*width+bw]
		xi := x[i]
		row := c.l[i*width:]
		for j := max(0, i-bw); j < i; j++ {
			x[j] -= row[bw-(i-j)] * xi
		}
	}
}
