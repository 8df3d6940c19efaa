package clinic

import (
	"bytes"
	"context"
	"errors"
	"io"
	"net"
	"net/http"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"sync"
	"testing"
	"time"

	"growband/curve"
)

// syncBuffer is a bytes.Buffer safe for the server's goroutines.
type syncBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *syncBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *syncBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}

// writeRef saves the hand reference as dir/name.json.
func writeRef(t *testing.T, dir, name string, strata ...string) string {
	t.Helper()
	p := filepath.Join(dir, name+".json")
	f, err := os.Create(p)
	if err != nil {
		t.Fatal(err)
	}
	if err := curve.Save(f, handReference(t, strata...)); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	return p
}

var servingRE = regexp.MustCompile(`on (http://[^/ ]+/)`)

// waitURL waits for the server's "serving ... on URL" line.
func waitURL(t *testing.T, log *syncBuffer, done <-chan error) string {
	t.Helper()
	deadline := time.Now().Add(10 * time.Second)
	for time.Now().Before(deadline) {
		if m := servingRE.FindStringSubmatch(log.String()); m != nil {
			return m[1]
		}
		select {
		case err := <-done:
			t.Fatalf("server stopped: %v; log %q", err, log.String())
		case <-time.After(10 * time.Millisecond):
		}
	}
	t.Fatalf("server did not start; log %q", log.String())
	return ""
}

func TestServe(t *testing.T) {
	dir := t.TempDir()
	p := writeRef(t, dir, "weight")
	var log syncBuffer
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	done := make(chan error, 1)
	go func() { done <- Serve(ctx, Options{Refs: []string{p}, Addr: "127.0.0.1:0", Log: &log}) }()
	base := waitURL(t, &log, done)
	resp, err := http.Post(base+"api/v1/score", "application/json", strings.NewReader(`{"stratum":"F","age":2,"value":4}`))
	if err != nil {
		t.Fatal(err)
	}
	b, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	if resp.StatusCode != http.StatusOK || !strings.Contains(string(b), `"reference":"weight"`) {
		t.Errorf("status %d: %s", resp.StatusCode, b)
	}
	cancel()
	select {
	case err := <-done:
		if err != nil {
			t.Errorf("Serve after cancel: %v", err)
		}
	case <-time.After(15 * time.Second):
		t.Fatal("Serve did not shut down")
	}
	if strings.Contains(log.String(), "4") && strings.Contains(log.String(), `"value"`) {
		t.Errorf("log holds data: %q", log.String())
	}
}

func TestServeRefusals(t *testing.T) {
	dir := t.TempDir()
	p := writeRef(t, dir, "weight")
	sub := filepath.Join(dir, "other")
	if err := os.Mkdir(sub, 0o755); err != nil {
		t.Fatal(err)
	}
	p2 := writeRef(t, sub, "weight")
	bad := filepath.Join(dir, "bad.json")
	os.WriteFile(bad, []byte(`{"format": "something else"}`), 0o644)
	ctx := context.Background()
	for _, c := range []struct {
		name string
		opt  Options
		want error
	}{
		{"no refs", Options{}, ErrReferences},
		{"missing file", Options{Refs: []string{filepath.Join(dir, "none.json")}}, ErrReferences},
		{"not a reference", Options{Refs: []string{bad}}, ErrReferences},
		{"same name twice", Options{Refs: []string{p, p2}}, ErrReferences},
		{"all interfaces", Options{Refs: []string{p}, Addr: ":0"}, ErrRemote},
		{"remote address", Options{Refs: []string{p}, Addr: "0.0.0.0:0"}, ErrRemote},
		{"host name", Options{Refs: []string{p}, Addr: "example.org:8750"}, ErrRemote},
		{"no port", Options{Refs: []string{p}, Addr: "127.0.0.1"}, ErrAddr},
	} {
		if err := Serve(ctx, c.opt); !errors.Is(err, c.want) {
			t.Errorf("%s: %v, want %v", c.name, err, c.want)
		}
	}
}

func TestServeAllowRemote(t *testing.T) {
	p := writeRef(t, t.TempDir(), "weight")
	var log syncBuffer
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() {
		done <- Serve(ctx, Options{Refs: []string{p}, Addr: "0.0.0.0:0", AllowRemote: true, Log: &log})
	}()
	base := waitURL(t, &log, done)
	// Listening on all interfaces, the server answers to each of this
	// machine's addresses, and to no other name.
	_, port, _ := net.SplitHostPort(strings.TrimSuffix(strings.TrimPrefix(base, "http://"), "/"))
	hosts := map[string]int{"rebind.example:" + port: http.StatusMisdirectedRequest}
	for _, a := range interfaceAddrs() {
		hosts[net.JoinHostPort(a, port)] = http.StatusOK
	}
	for host, want := range hosts {
		req, err := http.NewRequest(http.MethodGet, "http://127.0.0.1:"+port+"/healthz", nil)
		if err != nil {
			t.Fatal(err)
		}
		req.Host = host
		resp, err := http.DefaultClient.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		resp.Body.Close()
		if resp.StatusCode != want {
			t.Errorf("Host %s: status %d, want %d", host, resp.StatusCode, want)
		}
	}
	cancel()
	if err := <-done; err != nil {
		t.Error(err)
	}
	if !strings.Contains(log.String(), "warning") || !strings.Contains(log.String(), "other machines") {
		t.Errorf("no warning in %q", log.String())
	}
}

func TestIsLoopback(t *testing.T) {
	for host, want := range map[string]bool{
		"127.0.0.1": true, "127.1.2.3": true, "::1": true, "localhost": true, "LocalHost": true,
		"": false, "0.0.0.0": false, "::": false, "192.168.1.10": false, "example.org": false,
	} {
		if got := isLoopback(host); got != want {
			t.Errorf("isLoopback(%q) = %v", host, got)
		}
	}
}
