package curve

import (
	"fmt"
	"slices"
	"sync"

	"growband/curve/solver"
)

// pool bounds the number of solver calls running at once. Only solver calls
// hold a token, never a goroutine waiting for others, so nested parallel
// work (strata, candidates, tau chains, replicates) cannot deadlock.
type pool struct{ tokens chan struct{} }

func newPool(workers int) *pool { return &pool{tokens: make(chan struct{}, max(workers, 1))} }

// solve runs solver.Solve under a token, warm-started from start (may be
// nil).
func (pl *pool) solve(p *solver.Problem, start *solver.Solution) (*solver.Solution, error) {
	pl.tokens <- struct{}{}
	defer func() { <-pl.tokens }()
	var s *solver.Settings
	if start != nil {
		s = &solver.Settings{Start: start}
	}
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

// fitStrata fits every group concurrently; strata share one pool of
// c.workers solver slots.
func fitStrata(groups []*rows, c *config) ([]Stratum, error) {
	pl := newPool(c.workers)
	out := make([]Stratum, len(groups))
	err := parallel(len(groups), func(i int) error {
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

// fitStratum runs the whole fit of one stratum: smoothness, guard, tau grid,
// bands.
func fitStratum(pl *pool, r *rows, c *config) (*Stratum, error) {
	n := len(r.y)
	ch := c.chosen[r.name]
	if ch == nil {
		c.prog.printf("stratum %q: %d rows, choosing smoothness", r.name, n)
		var err error
		if ch, err = chooseSmoothness(pl, r, c); err != nil {
			return nil, err
		}
	}
	m := ch.model
	windows := guardWindows(r, c.windows, c.scale)
	taus, dropped := tauGrid(c.chart, windows, c.guardMin)
	flags := append(chartFlags(c.chart, windows, c.guardMin), dropped...)
	c.prog.printf("stratum %q: %d interior knots, lambda %.4g (%s); fitting %d centile curves",
		r.name, ch.smooth.InteriorKnots, ch.smooth.Lambda, ch.smooth.Criterion, len(taus))
	coef, err := fitGrid(pl, m, r.y, r.w, ch.smooth.Lambda, taus, c.nonCross, ch.median)
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
	if c.boot > 0 {
		st.Bands, err = bootstrapBands(pl, r, m, st, c)
		if err != nil {
			return nil, err
		}
	}
	return st, nil
}
