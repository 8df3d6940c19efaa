package main

import (
	"bufio"
	"io"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"syscall"
	"testing"
	"time"
)

// lmsTable is a two-row LMS table, invented for the serve tests.
const lmsTable = `# age_unit = months
# measure = weight
# unit = kg
age,L,M,S
0,0.3,3.3,0.14
24,0.1,12.0,0.11
`

func writeLMS(t *testing.T) (dir, path string) {
	t.Helper()
	dir = t.TempDir()
	path = filepath.Join(dir, "weight.csv")
	if err := os.WriteFile(path, []byte(lmsTable), 0o644); err != nil {
		t.Fatal(err)
	}
	return dir, path
}

func TestServeUsage(t *testing.T) {
	dir, ref := writeLMS(t)
	for _, c := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{"serve"}, 2, "no reference file"},
		{[]string{"serve", "--nonsense"}, 2, "nonsense"},
		{[]string{"serve", "--ref", ref, "extra"}, 2, "unexpected argument"},
		{[]string{"serve", "--ref="}, 2, "empty name"},
		{[]string{"serve", "--ref", ref, "--host", "clinic.lan"}, 2, "needs --allow-remote"},
		{[]string{"serve", "--ref", ref, "--addr", "0.0.0.0:0"}, 2, "--allow-remote"},
		{[]string{"serve", "--ref", ref, "--addr", "192.0.2.1:8750"}, 2, "--allow-remote"},
		{[]string{"serve", "--ref", ref, "--audit-log", filepath.Join(dir, "no", "such", "a.log")}, 1, "audit log"},
		{[]string{"serve", "--ref", filepath.Join(dir, "none.json")}, 1, "none.json"},
	} {
		_, stderr, code := gb(t, dir, c.args...)
		if code != c.code || !strings.Contains(stderr, c.want) {
			t.Errorf("%q: exit %d, want %d; stderr %q should hold %q", c.args, code, c.code, stderr, c.want)
		}
	}
	stdout, _, code := gb(t, dir, "serve", "-h")
	if code != 0 || !strings.Contains(stdout, "-allow-remote") || !strings.Contains(stdout, "-host NAME") {
		t.Errorf("serve -h: exit %d, %q", code, stdout)
	}
}

var servingRE = regexp.MustCompile(`on (http://[^/ ]+/)`)

// TestServeSignal serves an LMS table with an audit log, scores one
// measurement and stops the server with SIGINT, as Ctrl-C would.
func TestServeSignal(t *testing.T) {
	dir, ref := writeLMS(t)
	auditPath := filepath.Join(dir, "audit.log")
	cmd := exec.Command(binary, "serve", "--ref", ref, "--addr", "127.0.0.1:0", "--audit-log", auditPath)
	stderr, err := cmd.StderrPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	defer cmd.Process.Kill()
	lines := make(chan string, 16)
	go func() {
		sc := bufio.NewScanner(stderr)
		for sc.Scan() {
			lines <- sc.Text()
		}
		close(lines)
	}()
	var base string
	deadline := time.After(20 * time.Second)
	for base == "" {
		select {
		case l, ok := <-lines:
			if !ok {
				t.Fatal("server stopped before serving")
			}
			if m := servingRE.FindStringSubmatch(l); m != nil {
				base = m[1]
			}
		case <-deadline:
			t.Fatal("server did not start")
		}
	}
	resp, err := http.Post(base+"api/v1/score", "application/json", strings.NewReader(`{"age":6.5,"value":6.75}`))
	if err != nil {
		t.Fatal(err)
	}
	b, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	if resp.StatusCode != http.StatusOK {
		t.Errorf("score: %d %s", resp.StatusCode, b)
	}
	if err := cmd.Process.Signal(syscall.SIGINT); err != nil {
		t.Fatal(err)
	}
	go func() {
		for range lines {
		}
	}()
	done := make(chan error, 1)
	go func() { done <- cmd.Wait() }()
	select {
	case err := <-done:
		if err != nil {
			t.Errorf("serve after SIGINT: %v", err)
		}
	case <-time.After(20 * time.Second):
		t.Fatal("serve did not stop on SIGINT")
	}
	a, err := os.ReadFile(auditPath)
	if err != nil || !strings.Contains(string(a), `"value":6.75`) {
		t.Errorf("audit log %q, %v", a, err)
	}
	if fi, err := os.Stat(auditPath); err == nil && fi.Mode().Perm() != 0o600 {
		t.Errorf("audit log mode %v", fi.Mode().Perm())
	}
}
