package curve

import (
	"fmt"
	"math"
	"slices"
)

// screenTaus are the centiles of the screening fit: the median, the
// quartiles and the 10th and 90th centiles.
var screenTaus = []float64{0.1, 0.25, 0.5, 0.75, 0.9}

// screenSelectRows caps the sample on which the screening fit chooses its
// smoothness (see SelectRows): the screen needs curves that follow the
// data's centre closely enough to place |z| = 5, not the criterion's choice
// at the stratum's full size. Measured on 1,000,000 simulated Box–Cox
// normal rows in two strata: the screen took 1.3 s instead of 3.2 s of a
// 12.8 s build, and excluded 17 rows where it excluded 16.
const screenSelectRows = 50000

// screenZ are Phi^-1 of screenTaus (exact to the digits given, from the
// normal quantile function).
var screenZ = []float64{-1.2815515655446004, -0.6744897501960817, 0, 0.6744897501960817, 1.2815515655446004}

// RobustZ returns, for every row of d, its z-score against a screening fit
// that gross errors cannot pull: the quantile regression curves of the
// 10th, 25th, 50th, 75th and 90th centiles, fitted without crossing with
// the smoothness chosen by s as for a reference (Settings.Centiles and
// Settings.Bootstrap are ignored).
//
// A quantile regression estimate of tau has a breakdown point of
// min(tau, 1-tau) in the response: values entered wrong by any amount move
// the curve of the 10th centile no more than any other row below it, and
// until more than a tenth of the rows near an age are wrong the curves stay
// bounded (Koenker 2005, section 2.3.2). A fit of the outer centiles has no
// such protection: ten children of 13–15 years entered at 81–87 cm in a
// height survey pull its 1st centile down and hide themselves.
//
// With q_k the screening quantiles at a row's age and z_k = Phi^-1(tau_k),
// the row's value y scores
//
//	q_1 <= y <= q_5: z linear in y between neighbouring (q_k, z_k);
//	y > q_5:         z = z_5 + (y - q_5) (z_5 - z_4) / (q_5 - q_4);
//	y < q_1:         z = z_1 - (q_1 - y) (z_2 - z_1) / (q_2 - q_1);
//
// so beyond the 10th and 90th centiles the spread per unit z is that of the
// outer band on the same side, which follows the skewness of the
// distribution (a right-skewed weight has a wider upper band). For a normal
// distribution this is the exact z; for a lognormal with a coefficient of
// variation of 12% (about that of child weight) a true z of +4 scores 4.6
// and a true z of -4 scores -3.5, so a limit of 5 keeps every child with
// |true z| < 4.
//
// RobustZ returns the same errors as Fit for bad data or settings. A row
// whose value equals a tied pair of screening quantiles scores the middle of
// their z; a row beyond a tied outer band scores ±Inf.
//
// References:
//   - Koenker R (2005). Quantile Regression. Cambridge University Press.
func RobustZ(d *Data, s *Settings) ([]float64, error) {
	c, err := s.resolve()
	if err != nil {
		return nil, err
	}
	return robustZ(d, c)
}

func robustZ(d *Data, c *config) ([]float64, error) {
	groups, err := groupRows(d, c)
	if err != nil {
		return nil, err
	}
	return robustZRows(groups, len(d.Age), c)
}

// robustZRows is robustZ on rows already grouped (prepare) from data of n
// rows; z is indexed by the rows' src.
func robustZRows(groups []*rows, n int, c *config) ([]float64, error) {
	cs := *c
	cs.chart = []float64{0.1, 0.25, 0.75, 0.9}
	cs.medianOnly = false
	cs.boot = 0
	cs.prog = &progress{}
	cs.selectRows = min(cs.selectRows, screenSelectRows)
	cs.batch = cs.sharedBy(together(groups)).batch
	z := make([]float64, n)
	pl := newPool(cs.workers)
	err := eachStratum(groups, func(g int) error {
		r := groups[g]
		ch, err := smoothFor(pl, r, &cs)
		if err != nil {
			return fmt.Errorf("stratum %q: screening fit: %w", r.name, err)
		}
		m := ch.model
		coef, err := fitGrid(pl, m, r.y, r.w, ch.smooth.Lambda, screenTaus, cs.nonCross, ch.median)
		if err != nil {
			return fmt.Errorf("stratum %q: screening fit: %w", r.name, err)
		}
		q := make([]float64, len(screenTaus))
		for i := range r.y {
			for k := range q {
				q[k] = m.x.Dot(i, coef[k])
			}
			z[r.src[i]] = screenScore(q, r.y[i])
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	return z, nil
}

// screenScore places y among the screening quantiles q (non-decreasing) as
// documented at RobustZ.
func screenScore(q []float64, y float64) float64 {
	n := len(q)
	switch {
	case y > q[n-1]:
		return screenZ[n-1] + outer(y-q[n-1], q[n-1]-q[n-2], screenZ[n-1]-screenZ[n-2])
	case y < q[0]:
		return screenZ[0] - outer(q[0]-y, q[1]-q[0], screenZ[1]-screenZ[0])
	}
	// Inside: the tied run of levels y matches, or the band it falls in.
	lo := slices.IndexFunc(q, func(v float64) bool { return v >= y })
	if q[lo] == y {
		hi := lo
		for hi+1 < n && q[hi+1] == y {
			hi++
		}
		return (screenZ[lo] + screenZ[hi]) / 2
	}
	return screenZ[lo-1] + (y-q[lo-1])/(q[lo]-q[lo-1])*(screenZ[lo]-screenZ[lo-1])
}

// outer is the z distance of a value dist beyond the outermost screening
// quantile, with a band of width band spanning dz; +Inf when the band is
// tied.
func outer(dist, band, dz float64) float64 {
	if !(band > 0) {
		return math.Inf(1)
	}
	return dist / band * dz
}
