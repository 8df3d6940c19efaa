package curve

import (
	"fmt"
	"hash/fnv"
	"math"
	"math/rand/v2"
	"slices"
	"sync"
	"sync/atomic"
)

// Bootstrap bands.
//
// Each replicate draws, with replacement, as many whole subjects as the
// stratum has (when Data.Subject is given, so that the dependence between a
// child's repeated measurements is kept) or as many rows (otherwise), and
// refits the chart centiles with the point estimate's knots and lambda: the
// median first, then outward with the same non-crossing mode. A row drawn m
// times enters with weight m*w instead of being copied. The knots and lambda
// are held fixed, so the bands show the sampling variation of the curves
// given the chosen smoothness, not that of the choice. The interval at each
// band age is the percentile interval (2.5% and 97.5% quantiles of the
// replicate curves, Hyndman & Fan definition 7) of Efron & Tibshirani
// (1993).
//
// Replicate r uses its own PCG stream (math/rand/v2) seeded from
// Settings.Seed, the stratum name and r, so the bands do not depend on the
// number of workers or the order in which replicates finish.
//
// The percentile interval presumes the bootstrap distribution is centred on
// the estimate. Band.BiasToSE reports |mean of replicates - estimate| /
// (replicate SD) per age, and Band.Unstable marks a band where it exceeds
// BiasSELimit somewhere.
//
// References:
//   - Efron B, Tibshirani R J (1993). An Introduction to the Bootstrap.
//     Chapman & Hall, New York.
//   - Hyndman R J, Fan Y (1996). Sample quantiles in statistical packages.
//     The American Statistician 50, 361–365.

// BiasSELimit is the |bias|/SE above which a bootstrap band is marked
// Unstable. Efron & Tibshirani (1993, section 10.6, from memory) treat a bias
// below a quarter of the standard error as negligible. A stricter limit such
// as 0.1 would be tripped by Monte Carlo noise alone: the estimated ratio
// has a standard error of about 1/sqrt(B), 0.07 for B = 200 replicates, and
// a band is checked at DefaultBandPoints ages.
const BiasSELimit = 0.25

// maxFailShare is the largest share of replicates allowed to fail (for
// example a resample leaving an edge knot span empty, so the design is rank
// deficient) before the bootstrap is an error; failed replicates are
// otherwise left out.
const maxFailShare = 0.1

// bandLevel is the two-sided level of the bands.
const bandLevel = 0.95

// bootstrapBands computes the chart bands of st, fitted on r with model m.
func bootstrapBands(pl *pool, r *rows, m *model, st *Stratum, c *config) ([]Band, error) {
	n := len(r.y)
	ages := make([]float64, c.bandPoints)
	tg := make([]float64, c.bandPoints)
	for a := range ages {
		ages[a] = st.AgeMin + (st.AgeMax-st.AgeMin)*float64(a)/float64(c.bandPoints-1)
		if a == c.bandPoints-1 {
			ages[a] = st.AgeMax
		}
		t, err := c.scale.Apply(ages[a])
		if err != nil {
			panic("curve: band age outside the scale's domain: " + err.Error())
		}
		tg[a] = min(max(t, m.knots[0]), m.knots[len(m.knots)-1])
	}
	values := func(coef []float64) []float64 {
		v := make([]float64, len(tg))
		for a, t := range tg {
			x, err := m.basis.Value(coef, t)
			if err != nil {
				panic("curve: band age outside the knot range: " + err.Error())
			}
			v[a] = x
		}
		return v
	}

	taus := slices.Clone(st.Chart)
	if !slices.Contains(taus, 0.5) {
		taus = append(taus, 0.5)
		slices.Sort(taus)
	}
	chartAt := make([]int, len(st.Chart)) // index of each chart tau in taus
	for k, tau := range st.Chart {
		chartAt[k] = slices.Index(taus, tau)
	}

	h := fnv.New64a()
	h.Write([]byte(r.name))
	seed := c.seed ^ h.Sum64()

	b := c.boot
	reps := make([][][]float64, b) // [replicate][chart][age]
	errs := make([]error, b)
	var next, done atomic.Int64
	step := int64(max(b/10, 1))
	var wg sync.WaitGroup
	for range min(c.workers, b) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			mult := make([]int, max(n, r.nsubj))
			for {
				rep := int(next.Add(1) - 1)
				if rep >= b {
					return
				}
				rng := rand.New(rand.NewPCG(seed, uint64(rep)))
				clear(mult)
				units := n
				if r.subj != nil {
					units = r.nsubj
				}
				for range units {
					mult[rng.IntN(units)]++
				}
				var idx []int
				var y, w []float64
				for i := range n {
					k := mult[i]
					if r.subj != nil {
						k = mult[r.subj[i]]
					}
					if k > 0 {
						idx = append(idx, i)
						y = append(y, r.y[i])
						w = append(w, r.w[i]*float64(k))
					}
				}
				coef, err := fitGridOn(pl, subset(m.x, idx), m.pen, y, w, st.Smoothness.Lambda, taus, c.nonCross, nil)
				if err != nil {
					errs[rep] = err
				} else {
					v := make([][]float64, len(st.Chart))
					for k, at := range chartAt {
						v[k] = values(coef[at])
					}
					reps[rep] = v
				}
				if d := done.Add(1); d%step == 0 || d == int64(b) {
					c.prog.printf("stratum %q: bootstrap %d/%d", r.name, d, b)
				}
			}
		}()
	}
	wg.Wait()

	var good [][][]float64
	var firstErr error
	for rep, v := range reps {
		if v != nil {
			good = append(good, v)
		} else if firstErr == nil {
			firstErr = fmt.Errorf("replicate %d: %w", rep, errs[rep])
		}
	}
	if failed := b - len(good); failed > 0 {
		if float64(failed) > maxFailShare*float64(b) {
			return nil, fmt.Errorf("%w: %d of %d; first: %w", ErrBootstrap, failed, b, firstErr)
		}
		c.prog.printf("stratum %q: %d of %d bootstrap replicates failed and were left out", r.name, failed, b)
	}

	bands := make([]Band, len(st.Chart))
	col := make([]float64, len(good))
	for k, tau := range st.Chart {
		ti := slices.Index(st.Taus, tau)
		est := values(st.Coef[ti])
		bd := Band{
			Tau:      tau,
			Ages:     slices.Clone(ages),
			Lo:       make([]float64, len(ages)),
			Hi:       make([]float64, len(ages)),
			BiasToSE: make([]float64, len(ages)),
		}
		for a := range ages {
			for g, v := range good {
				col[g] = v[k][a]
			}
			slices.Sort(col)
			bd.Lo[a] = quantile7(col, (1-bandLevel)/2)
			bd.Hi[a] = quantile7(col, 1-(1-bandLevel)/2)
			mean, sd := meanSD(col)
			bd.BiasToSE[a] = biasToSE(mean-est[a], sd)
			if bd.BiasToSE[a] > BiasSELimit {
				bd.Unstable = true
			}
		}
		bands[k] = bd
	}
	return bands, nil
}

// quantile7 is definition 7 of Hyndman & Fan (1996) on sorted s.
func quantile7(s []float64, p float64) float64 {
	h := float64(len(s)-1) * p
	f := int(math.Floor(h))
	if f+1 >= len(s) {
		return s[len(s)-1]
	}
	return s[f] + (h-float64(f))*(s[f+1]-s[f])
}

func meanSD(s []float64) (mean, sd float64) {
	for _, v := range s {
		mean += v
	}
	mean /= float64(len(s))
	ss := 0.0
	for _, v := range s {
		ss += (v - mean) * (v - mean)
	}
	return mean, math.Sqrt(ss / float64(len(s)-1))
}

// biasToSE is |bias|/sd; with no spread it is 0 for no bias and the largest
// float (a finite stand-in for infinity that JSON can hold) otherwise.
func biasToSE(bias, sd float64) float64 {
	switch {
	case sd > 0:
		return math.Abs(bias) / sd
	case bias == 0:
		return 0
	}
	return math.MaxFloat64
}
