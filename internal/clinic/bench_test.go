package clinic

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"math/rand/v2"
	"net/http"
	"net/http/httptest"
	"slices"
	"sync"
	"sync/atomic"
	"testing"
	"time"
)

// loadResult keeps the benchmark's answers alive.
var loadResult []time.Duration

// BenchmarkScoreLoad20000 sends 20,000 scoring requests (2,000 with -short)
// from 32 goroutines to a loopback server and checks that every answer is
// the one Reference.Score gives. It reports the throughput and the 99th
// centile of the latency; the target is p99 below 5 ms on a workstation.
// The yardstick direct-us/score is the cost of the same scoring without HTTP.
func BenchmarkScoreLoad20000(b *testing.B) {
	const workers = 32
	n := 20000
	if testing.Short() {
		n = 2000
	}
	h, r := newTestHandler(b, Options{}, false)
	srv := httptest.NewServer(h)
	defer srv.Close()
	client := &http.Client{Transport: &http.Transport{MaxIdleConnsPerHost: workers}, Timeout: 10 * time.Second}
	rng := rand.New(rand.NewPCG(1, 2))
	bodies := make([][]byte, n)
	want := make([]float64, n)
	for i := range bodies {
		s := []string{"F", "M"}[i%2]
		age := rng.Float64() * testAgeMax
		value := testMean(s, age) + rng.NormFloat64()*testSD
		bodies[i] = fmt.Appendf(nil, `{"stratum":%q,"age":%v,"value":%v}`, s, age, value)
		d, err := r.Score(s, age, value)
		if err != nil {
			b.Fatal(err)
		}
		want[i] = d.Z
	}
	directStart := time.Now()
	for i := range n {
		s := []string{"F", "M"}[i%2]
		r.Score(s, 12, testMean(s, 12))
	}
	direct := time.Since(directStart)
	lat := make([]time.Duration, n)
	var elapsed time.Duration
	for b.Loop() {
		var next atomic.Int64
		var failed atomic.Int64
		var firstErr sync.Once
		var wg sync.WaitGroup
		t0 := time.Now()
		for range workers {
			wg.Add(1)
			go func() {
				defer wg.Done()
				for {
					i := int(next.Add(1)) - 1
					if i >= n {
						return
					}
					t := time.Now()
					resp, err := client.Post(srv.URL+"/api/v1/score", "application/json", bytes.NewReader(bodies[i]))
					if err == nil {
						var res result
						body, rerr := io.ReadAll(resp.Body)
						resp.Body.Close()
						lat[i] = time.Since(t)
						err = rerr
						if err == nil {
							err = json.Unmarshal(body, &res)
						}
						if err == nil && (resp.StatusCode != http.StatusOK || res.Z == nil || *res.Z != want[i]) {
							err = fmt.Errorf("request %d: status %d, %s; direct z %v", i, resp.StatusCode, body, want[i])
						}
					}
					if err != nil {
						failed.Add(1)
						firstErr.Do(func() { b.Error(err) })
					}
				}
			}()
		}
		wg.Wait()
		elapsed = time.Since(t0)
		if f := failed.Load(); f > 0 {
			b.Fatalf("%d of %d requests failed", f, n)
		}
	}
	sorted := slices.Clone(lat)
	slices.Sort(sorted)
	p99 := sorted[int(0.99*float64(n-1))]
	b.ReportMetric(float64(n)/elapsed.Seconds(), "req/s")
	b.ReportMetric(float64(p99.Microseconds())/1000, "p99-ms")
	b.ReportMetric(float64(sorted[n/2].Microseconds())/1000, "p50-ms")
	b.ReportMetric(float64(direct.Nanoseconds())/float64(n)/1000, "direct-us/score")
	loadResult = sorted
}
