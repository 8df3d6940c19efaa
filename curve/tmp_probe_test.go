package curve

import (
	"syscall"
	"testing"
	"time"
)

func cpuNow() time.Duration {
	var ru syscall.Rusage
	syscall.Getrusage(syscall.RUSAGE_SELF, &ru)
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

func TestProbeSelect(t *testing.T) {
	d := lmsTruth{}.draw(100000, 7)
	c, _ := (&Settings{Workers: 1}).resolve()
	groups, _, _ := prepare(d, c)
	r := groups[0]
	sets, _ := knotSets(r, c)
	pl := newPool(1)
	ev := &evaluator{pl: pl, r: r, c: c, criterion: CriterionSIC}
	for _, set := range sets[4:5] {
		m, _ := newModel(r, set, c.degree, c.order)
		t0 := cpuNow()
		sols, err := fitEach(pl, m.x, r.y, r.w, m.pen, 0, ev.taus())
		if err != nil {
			t.Fatal(err)
		}
		it, red := 0, 0
		for _, s := range sols {
			it += s.Iterations
			red += s.Reductions
		}
		t.Logf("knots %d p %d: cpu %v iters %d reductions %d", len(set), m.p, cpuNow()-t0, it, red)
	}
}
