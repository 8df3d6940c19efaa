package curve

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sync"

	"growband/curve/solver"
	"growband/spline"
)

// pool bounds the number of solver calls running at once. Only solver calls
// hold a token, never a goroutine waiting for others, so nested parallel
// work (strata, candidates, tau chains, replicates) cannot deadlock.
type pool struct{ tokens chan struct{} }

func newPool(workers int) *pool { return &pool{tokens: make(chan struct{}, max(workers, 1))} }

// grid runs solver.SolveGrid under a token.
func (pl *pool) grid(p *solver.Problem, taus []float64, s *solver.Settings) ([]*solver.Solution, error) {
	pl.tokens <- struct{}{}
	defer func() { <-pl.tokens }()
	return solver.SolveGrid(p, taus, s)
}

// solve runs solver.Solve under a token.
func (pl *pool) solve(p *solver.Problem, s *solver.Settings) (*solver.Solution, error) {
	pl.tokens <- struct{}{}
	defer func() { <-pl.tokens }()
	return solver.Solve(p, s)
}

// parallel runs f(0), ..., f(n-1) concurrently and returns the error of the
// lowest index that failed, so the reported error does not depend on
// scheduling.
func parallel(n int, f func(i int) error) error {
	errs := make([]error, n)
	var wg sync.WaitGroup
	for i := range n {
		wg.Add(1)
		go func() {
			defer wg.Done()
			errs[i] = f(i)
		}()
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return err
		}
	}
	return nil
}

// sharedBy returns a copy of c for one of k strata searched at once: each
// stratum's smoothness search evaluates its share of the workers'
// candidates at a time (at least one). The search's choice does not depend
// on its batch (see search); a larger batch only evaluates, in parallel,
// candidates past the point where the search stops, which the other strata
// would have put to use.
func (c *config) sharedBy(k int) *config {
	cs := *c
	cs.batch = max(1, c.workers/max(k, 1))
	return &cs
}

// searchBatch is the number of candidates a smoothness search evaluates at
// once.
func (c *config) searchBatch() int {
	if c.batch > 0 {
		return c.batch
	}
	return c.workers
}

// fitStrata fits every group concurrently; strata share one pool of
// c.workers solver slots.
func fitStrata(groups []*rows, c *config) ([]Stratum, error) {
	pl := newPool(c.workers)
	c = c.sharedBy(together(groups))
	out := make([]Stratum, len(groups))
	err := eachStratum(groups, func(i int) error {
		st, err := fitStratum(pl, groups[i], c)
		if err != nil {
			return fmt.Errorf("stratum %q: %w", groups[i].name, err)
		}
		out[i] = *st
		return nil
	})
	if err != nil {
		return nil, err
	}
	return out, nil
}

// SelectRows is the stratum size above which the knots and lambda are chosen
// on a sample of SelectRows rows, one drawn at random from each of
// SelectRows equal blocks of the age-sorted rows (so the sample covers the
// ages as the stratum does); the curves are then fitted on every row. The
// choice costs about seven solves per candidate (each started from the
// candidate before, see startsFrom, but still several passes over the
// rows), while the final grid costs about one pass over the data per tau,
// so beyond this size the choice would dominate. The
// criterion's choice depends on n (its penalty is log(n)/2n per
// interpolated row): on the simulation of recovery_test.go in two strata of
// 500,000 rows it picks 4 and 5 interior knots on all rows and on samples of
// 200,000, but 2 and 2 on samples of 50,000 (measured).
const SelectRows = 200000

// sampleStream is the PCG stream of the selection sample, apart from the
// bootstrap and cross-validation streams.
const sampleStream = 1<<63 + 1

// choosesSmoothness reports whether the settings leave the knots or lambda
// to the criterion.
func choosesSmoothness(c *config) bool {
	return (c.knots == 0 && c.knotT == nil) || c.penalty == PenaltyAuto
}

// sample returns m rows of r, one drawn at random from each of m equal
// blocks of the rows (sorted by age), with their weights and subjects.
func (r *rows) sample(m int, seed uint64) *rows {
	rng := rand.New(rand.NewPCG(seed, sampleStream))
	n := len(r.y)
	s := &rows{name: r.name, age: make([]float64, m), t: make([]float64, m),
		y: make([]float64, m), w: make([]float64, m), nsubj: r.nsubj, lo: r.lo, hi: r.hi}
	if r.subj != nil {
		s.subj = make([]int, m)
	}
	for k := range m {
		lo, hi := k*n/m, (k+1)*n/m
		i := lo + rng.IntN(hi-lo)
		s.age[k], s.t[k], s.y[k], s.w[k] = r.age[i], r.t[i], r.y[i], r.w[i]
		if r.subj != nil {
			s.subj[k] = r.subj[i]
		}
	}
	return s
}

// smoothFor fixes the smoothness of the stratum r, on an age-stratified
// sample of c.selectRows rows when r is larger and the settings leave
// something to choose, and returns the choice with the model of all of r's
// rows: the chosen knot count placed at the quantiles of all the ages (as
// without sampling), lambda in the units of all the weights. The reference's
// fit and the implausibility screen's both choose this way.
func smoothFor(pl *pool, r *rows, c *config) (*choice, error) {
	n := len(r.y)
	sel := r
	if n > c.selectRows && choosesSmoothness(c) {
		sel = r.sample(c.selectRows, c.seed)
		c.prog.printf("stratum %q: %d rows, choosing smoothness on an age-stratified sample of %d", r.name, n, c.selectRows)
	} else {
		c.prog.printf("stratum %q: %d rows, choosing smoothness", r.name, n)
	}
	ch, err := chooseSmoothness(pl, sel, c)
	if err != nil || sel == r {
		return ch, err
	}
	interior := ch.model.interior
	if c.knotT == nil {
		if k, err := spline.QuantileKnots(r.t, len(interior)); err == nil && len(k) == len(interior) {
			interior = k
		}
	}
	if ch.model, err = newModel(r, interior, c.degree, c.order); err != nil {
		return nil, err
	}
	total, _ := r.weight()
	part, _ := sel.weight()
	ch.smooth.Lambda *= total / part
	ch.median = nil
	return ch, nil
}

// fitStratum runs the whole fit of one stratum: smoothness, guard, tau grid,
// bands.
func fitStratum(pl *pool, r *rows, c *config) (*Stratum, error) {
	n := len(r.y)
	ch := c.chosen[r.name]
	var err error
	if ch == nil {
		if ch, err = smoothFor(pl, r, c); err != nil {
			return nil, err
		}
	}
	m := ch.model
	windows := guardWindows(r, c.windows, c.scale)
	taus, dropped := tauGrid(c.chart, windows, c.guardMin)
	flags := append(chartFlags(c.chart, windows, c.guardMin), dropped...)
	c.prog.printf("stratum %q: %d interior knots, lambda %.4g (%s); fitting %d centile curves",
		r.name, ch.smooth.InteriorKnots, ch.smooth.Lambda, ch.smooth.ChosenBy, len(taus))
	eta := c.prog.eta(r.name, len(taus))
	coef, err := fitGridWith(pl, m.x, m.pen, r.y, r.w, ch.smooth.Lambda, taus, c.nonCross, ch.median, eta.tick)
	if err != nil {
		return nil, err
	}
	st := &Stratum{
		Name:       r.name,
		N:          n,
		AgeMin:     r.lo[0],
		AgeMax:     r.hi[0],
		Knots:      slices.Clone(m.knots),
		Taus:       taus,
		Coef:       coef,
		Chart:      slices.Clone(c.chart),
		Smoothness: ch.smooth,
		Flags:      flags,
	}
	neffMin := math.Inf(1)
	for _, w := range windows {
		neffMin = min(neffMin, w.neff)
	}
	lo, hi := bodyLimits(taus, neffMin)
	b, err := spline.New(st.Knots, c.degree)
	if err != nil {
		return nil, err
	}
	if st.Tail, err = fitTail(st, b, c.scale, c.degree, lo, hi); err != nil {
		return nil, err
	}
	if c.boot > 0 {
		st.Bands, err = bootstrapBands(pl, r, m, st, c)
		if err != nil {
			return nil, err
		}
	}
	return st, nil
}
