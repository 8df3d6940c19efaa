package curve

import (
	"strings"
	"testing"
	"time"
)

// TestGridProgress checks the progress lines of a grid: what is fitted, how
// far, and an estimate of the time left from the pace so far; the median,
// solved by both halves of a grid, counts once; lines come at most every
// progressEvery.
func TestGridProgress(t *testing.T) {
	var buf strings.Builder
	// check reads one line and its estimate, which may be off by the time
	// the test itself takes (well under a second).
	check := func(prefix string, left time.Duration) {
		t.Helper()
		line := buf.String()
		buf.Reset()
		rest, ok := strings.CutPrefix(line, prefix)
		if !ok || !strings.HasSuffix(rest, " left\n") {
			t.Fatalf("progress %q, want %q, a duration and \" left\"", line, prefix)
		}
		d, err := time.ParseDuration(strings.TrimSuffix(rest, " left\n"))
		if err != nil || d < left-time.Second || d > left+2*time.Second {
			t.Errorf("progress %q: estimate %v, want about %v", line, d, left)
		}
	}
	g := (&progress{w: &buf}).eta("female", 4)
	g.start = time.Now().Add(-20 * time.Second) // the first solve took 20 s
	g.last = g.start.Add(-time.Hour)
	g.tick(0.5)
	check(`growband: stratum "female": 1 of 4 centile curves fitted, about `, 60*time.Second)
	g.tick(0.51) // within progressEvery of the last line: silent
	if buf.Len() != 0 {
		t.Errorf("progress within %v of the last line: %q", progressEvery, buf.String())
	}
	g.last = g.start.Add(-time.Hour)
	g.tick(0.5) // the other half's median: not counted
	g.tick(0.49)
	check(`growband: stratum "female": 3 of 4 centile curves fitted, about `, 20*time.Second/3)
}
