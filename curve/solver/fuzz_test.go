package solver

import (
	"errors"
	"testing"
)

// fuzzCertTol is the certificate tolerance for fuzzed problems, whose entries
// are small multiples of 1/64 (common practice for double precision).
const fuzzCertTol = 1e-9

// testSentinels are the errors Solve may return.
var testSentinels = []error{ErrNotFinite, ErrNegWeight, ErrTau, ErrTooFew, ErrRankDeficient, ErrInfeasible, ErrNoConverge}

// fuzzProblem decodes bytes into a small problem: up to 12 rows and 3
// coefficients, dense or banded rows, maybe weights, a penalty and
// constraints. Entries are coarse (multiples of 1/16 and so on) so that ties
// and degenerate vertices are common. Missing bytes read as zero.
func fuzzProblem(data []byte) *Problem {
	pos := 0
	next := func() int {
		if pos >= len(data) {
			pos++
			return 0
		}
		pos++
		return int(data[pos-1])
	}
	n := 1 + next()%12
	q := 1 + next()%3
	tau := float64(1+next()) / 257
	flags := next()
	width := q
	if flags&1 != 0 && q >= 2 {
		width = 1 + next()%(q-1)
	}
	x := &Design{Cols: q, Width: width, First: make([]int, n), Val: make([]float64, n*width)}
	y := make([]float64, n)
	for i := range n {
		x.First[i] = next() % (q - width + 1)
		for k := range width {
			x.Val[i*width+k] = float64(next()-128) / 16
		}
		y[i] = float64(next()-128) / 8
	}
	p := &Problem{Y: y, X: x, Tau: tau}
	if flags&2 != 0 {
		p.W = make([]float64, n)
		for i := range p.W {
			p.W[i] = float64(next() % 4)
		}
	}
	if flags&4 != 0 {
		pw := 1 + next()%min(2, q)
		r := q - pw + 1
		d := &Design{Cols: q, Width: pw, First: make([]int, r), Val: make([]float64, r*pw)}
		for j := range r {
			d.First[j] = j
			for k := range pw {
				d.Val[j*pw+k] = float64(next()-128) / 32
			}
		}
		p.Penalty, p.Lambda = d, float64(next())/64
	}
	if flags&8 != 0 {
		m := 1 + next()%2
		for range m {
			g := make([]float64, q)
			for k := range g {
				g[k] = float64(next()-128) / 64
			}
			p.G = append(p.G, g)
			p.H = append(p.H, float64(next()-128)/16)
		}
	}
	return p
}

func isSentinel(err error) bool {
	for _, s := range testSentinels {
		if errors.Is(err, s) {
			return true
		}
	}
	return false
}

// FuzzSolve checks that Solve never panics, returns only typed errors, that
// every solution carries a valid certificate, and that Simplex and Interior
// agree on the outcome and the objective.
func FuzzSolve(f *testing.F) {
	// Seeds: n, p, tau, flags, then rows (first, values, y), weights, penalty,
	// constraints as fuzzProblem reads them.
	f.Add([]byte{5, 0, 128, 0, 0, 130, 1, 0, 140, 9, 0, 120, 200, 0, 160, 3, 0, 100, 7, 0, 130, 2})
	f.Add([]byte{9, 1, 64, 0, 0, 144, 128, 140, 0, 144, 144, 150, 0, 144, 160, 120, 0, 144, 176, 170, 0, 144, 192, 160})
	f.Add([]byte{11, 2, 200, 1, 1, 0, 140, 150, 130, 1, 150, 140, 140, 0, 160, 170, 120, 1, 130, 160, 150})
	f.Add([]byte{7, 1, 32, 2, 0, 144, 128, 140, 0, 144, 144, 140, 0, 144, 160, 140, 1, 0, 3, 2, 1, 0, 2})
	f.Add([]byte{8, 2, 100, 4, 0, 144, 130, 100, 140, 0, 144, 150, 120, 150, 0, 144, 170, 140, 160, 1, 96, 160, 1, 64})
	f.Add([]byte{6, 1, 150, 8, 0, 144, 128, 128, 0, 144, 144, 144, 0, 144, 160, 160, 0, 144, 176, 176, 160, 128, 150})
	f.Add([]byte{11, 2, 50, 15, 1, 0, 166, 140, 145, 1, 136, 132, 158, 1, 167, 146, 122, 1, 166, 167, 158, 1, 141, 146, 179, 0, 165, 156, 99, 0, 142, 134, 136, 0, 149, 162, 174, 1, 159, 157, 171, 1, 140, 155, 110, 0, 140, 163, 125, 1, 159, 151, 151, 3, 2, 3, 1, 2, 0, 2, 1, 2, 0, 1, 2, 1, 96, 160, 160, 96, 32, 0, 128, 192, 128, 112})
	f.Add([]byte{3, 2, 0, 0}) // too few rows for three coefficients
	// Banded rows with identical rows: Interior hung (see regressions).
	f.Add([]byte("#2\xc8110\x8c\x99 1x\x8c\x8c\x00\xa0\xaax\x01\x82\xa0"))
	// Three rows, two constraints: Simplex said rank deficient (see regressions).
	f.Add([]byte("22080zzz00001000100110000"))
	// Nine equal responses and an L1 penalty: Simplex cycled (see regressions).
	f.Add([]byte("820$000 \x8c001Z\x8c002z\x8c002 \x8c00x\x8c\x8c00\x8cb\x8c02\x8c\x8c\x8c000X\x8c001x\x8c000X0"))
	// b1 >= 1 and -b1 >= 0: infeasible.
	f.Add([]byte{2, 0, 128, 8, 0, 144, 130, 0, 144, 140, 0, 144, 150, 1, 192, 144, 64, 128})
	f.Fuzz(func(t *testing.T, data []byte) {
		p := fuzzProblem(data)
		var sols [2]*Solution
		var errs [2]error
		for k, m := range []Method{Simplex, Interior} {
			sols[k], errs[k] = testSolve(p, &Settings{Method: m})
			if errs[k] != nil {
				if !isSentinel(errs[k]) {
					t.Fatalf("%v: untyped error %v", m, errs[k])
				}
				if sols[k] != nil {
					t.Fatalf("%v: a solution with error %v", m, errs[k])
				}
				continue
			}
			checkCertificate(t, p, sols[k], fuzzCertTol)
		}
		// Both methods see the same LP, so they must agree on its outcome;
		// with the default MaxIter even ErrNoConverge on a 12-row problem is
		// a failure (cycling).
		if (errs[0] == nil) != (errs[1] == nil) {
			t.Fatalf("simplex: %v; interior: %v", errs[0], errs[1])
		}
		if errs[0] == nil && errs[1] == nil && !testRelClose(sols[0].Objective, sols[1].Objective, fuzzCertTol) {
			t.Fatalf("objective: simplex %.15g, interior %.15g", sols[0].Objective, sols[1].Objective)
		}
	})
}
