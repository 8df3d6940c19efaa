package clinic

import (
	"bufio"
	"encoding/json"
	"fmt"
	"io"
	"math/rand/v2"
	"net"
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
// centile of the latency; the target is p99 below 5 ms on this machine.
// The yardstick direct-us/score is the cost of the same scoring without HTTP.
//
// Each goroutine keeps one connection open and writes plain HTTP/1.1
// requests on it, reading each answer with net/http's own response parser:
// client and server share the machine's cores, and net/http's client
// transport spends as much CPU on a request as the server does, which would
// measure the client rather than the server. Answers are checked after the
// timed part.
func BenchmarkScoreLoad20000(b *testing.B) {
	const workers = 32
	n := 20000
	if testing.Short() {
		n = 2000
	}
	h, r := newTestHandler(b, Options{}, false)
	srv := httptest.NewServer(h)
	defer srv.Close()
	rng := rand.New(rand.NewPCG(1, 2))
	requests := make([][]byte, n)
	want := make([]float64, n)
	for i := range requests {
		s := []string{"F", "M"}[i%2]
		age := rng.Float64() * testAgeMax
		value := testMean(s, age) + rng.NormFloat64()*testSD
		body := fmt.Appendf(nil, `{"stratum":%q,"age":%v,"value":%v}`, s, age, value)
		requests[i] = fmt.Appendf(nil, "POST /api/v1/score HTTP/1.1\r\nHost: %s\r\nContent-Type: application/json\r\nContent-Length: %d\r\n\r\n%s",
			srv.Listener.Addr(), len(body), body)
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
	answers := make([][]byte, n)
	status := make([]int, n)
	var elapsed time.Duration
	for b.Loop() {
		var next atomic.Int64
		var failed atomic.Int64
		var firstErr sync.Once
		fail := func(err error) {
			failed.Add(1)
			firstErr.Do(func() { b.Error(err) })
		}
		var wg sync.WaitGroup
		t0 := time.Now()
		for range workers {
			wg.Add(1)
			go func() {
				defer wg.Done()
				conn, err := net.Dial("tcp", srv.Listener.Addr().String())
				if err != nil {
					fail(err)
					return
				}
				defer conn.Close()
				br := bufio.NewReader(conn)
				for {
					i := int(next.Add(1)) - 1
					if i >= n {
						return
					}
					t := time.Now()
					if _, err := conn.Write(requests[i]); err != nil {
						fail(err)
						return
					}
					resp, err := http.ReadResponse(br, nil)
					if err != nil {
						fail(err)
						return
					}
					answers[i], err = io.ReadAll(resp.Body)
					resp.Body.Close()
					lat[i] = time.Since(t)
					status[i] = resp.StatusCode
					if err != nil {
						fail(err)
						return
					}
				}
			}()
		}
		wg.Wait()
		elapsed = time.Since(t0)
		if f := failed.Load(); f > 0 {
			b.Fatalf("%d connections failed", f)
		}
	}
	for i, body := range answers {
		var res result
		err := json.Unmarshal(body, &res)
		if err != nil || status[i] != http.StatusOK || res.Z == nil || *res.Z != want[i] {
			b.Fatalf("request %d: status %d, %s (%v); direct z %v", i, status[i], body, err, want[i])
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
