package clinic

import (
	"bufio"
	"bytes"
	"fmt"
	"io"
	"net/http"
	"net/http/httptest"
	"os"
	"os/exec"
	"strconv"
	"strings"
	"testing"
)

// The batch upload takes the reading options of the command line as query
// fields: codes, day-first dates and decimal commas, with one cell in the
// other decimal mark excluded alone.
func TestBatchReadingOptions(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	file := "sex;birth;visit;weight\n" +
		"2;15/01/2023;15/07/2023;5,9\n" +
		"1;01/02/2023;13/02/2024;8,1\n" +
		"2;15/01/2023;15/03/2023;120.5\n" +
		"F;28/02/2023;31/03/2023;4,4\n"
	target := "/api/v1/batch?reference=weight&stratum-codes=1%3DM,2%3DF,F%3DF&date-format=DD/MM/YYYY" +
		"&birth-column=birth&visit-column=visit"
	rec := do(t, h, http.MethodPost, target, "text/csv", strings.NewReader(file))
	if rec.Code != http.StatusOK {
		t.Fatalf("status %d: %s", rec.Code, rec.Body)
	}
	lines := strings.Split(strings.TrimSpace(rec.Body.String()), "\n")
	if len(lines) != 5 {
		t.Fatalf("answer has %d lines, want 5:\n%s", len(lines), rec.Body)
	}
	for i, want := range []string{"", "", "decimal point", ""} {
		row := lines[i+1]
		cells := strings.Split(row, ",")
		if want == "" && cells[len(cells)-3] == "" {
			t.Errorf("row %d not scored: %s", i+1, row)
		}
		if want != "" && !strings.Contains(row, want) {
			t.Errorf("row %d: %s, want the reason %q", i+1, row, want)
		}
	}
	// An unknown option value names its field.
	rec = do(t, h, http.MethodPost, "/api/v1/batch?reference=weight&decimal=dot", "text/csv", strings.NewReader(file))
	if rec.Code != http.StatusBadRequest || !strings.Contains(rec.Body.String(), `"field":"decimal"`) {
		t.Errorf("bad decimal option: status %d %s", rec.Code, rec.Body)
	}
}

// Beyond maxBatchJobs running, a batch upload is refused with 503 and
// Retry-After; once one finishes the next is accepted.
func TestBatchJobLimit(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	for range maxBatchJobs {
		if !h.takeSlot() {
			t.Fatal("a slot is missing")
		}
	}
	file := "stratum,age,value\nF,3,4.9\n"
	rec := do(t, h, http.MethodPost, "/api/v1/batch?reference=weight", "text/csv", strings.NewReader(file))
	if rec.Code != http.StatusServiceUnavailable || rec.Header().Get("Retry-After") == "" {
		t.Fatalf("status %d, Retry-After %q", rec.Code, rec.Header().Get("Retry-After"))
	}
	body, ct := multipartBody(t, "weight", "a.csv", file)
	if rec := do(t, h, http.MethodPost, "/batch", ct, body); rec.Code != http.StatusServiceUnavailable || rec.Header().Get("Retry-After") == "" {
		t.Fatalf("form: status %d", rec.Code)
	}
	h.freeSlot()
	rec = do(t, h, http.MethodPost, "/api/v1/batch?reference=weight", "text/csv", strings.NewReader(file))
	if rec.Code != http.StatusOK {
		t.Fatalf("after a job ended: status %d %s", rec.Code, rec.Body)
	}
}

// Memory of a large batch upload: a child process (this test binary again)
// serves one upload of memRows rows, about 10 MB, and reports how far its
// peak resident set (VmHWM of /proc/self/status) rose above the resident
// set before the request. The server holds the body once and streams the
// rows; the bound allows the body, the garbage collector's headroom of one
// more heap (GOGC=100) and the runtime's slack, which grows when the
// collector is starved of CPU: measured 3.7 to 6.3 times the body on a
// loaded 2-core machine, against about 100 times before streaming.
const (
	memRows        = 1000000
	memGrowthLimit = 8.0 // peak growth over the body's size
	memChildEnv    = "GROWBAND_BATCH_MEMORY_CHILD"
)

func TestBatchMemory(t *testing.T) {
	if os.Getenv(memChildEnv) != "" {
		batchMemoryChild(t)
		return
	}
	if _, err := os.Stat("/proc/self/status"); err != nil {
		t.Skip("needs /proc/self/status to read the peak resident set")
	}
	cmd := exec.Command(os.Args[0], "-test.run=^TestBatchMemory$", "-test.v")
	cmd.Env = append(os.Environ(), memChildEnv+"=1")
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("child: %v\n%s", err, out)
	}
	var growth, body, rows int64
	for _, line := range strings.Split(string(out), "\n") {
		if s, ok := strings.CutPrefix(strings.TrimSpace(line), "batch-memory "); ok {
			fmt.Sscanf(s, "growth=%d body=%d rows=%d", &growth, &body, &rows)
		}
	}
	if body == 0 {
		t.Fatalf("child reported nothing:\n%s", out)
	}
	ratio := float64(growth) / float64(body)
	t.Logf("%d rows, body %.1f MB: peak resident set rose %.1f MB (%.2f times the body)", rows, float64(body)/1e6, float64(growth)/1e6, ratio)
	if rows != memRows {
		t.Fatalf("scored %d rows, want %d", rows, memRows)
	}
	if ratio > memGrowthLimit {
		t.Fatalf("peak memory rose %.2f times the body, want at most %g", ratio, memGrowthLimit)
	}
}

func batchMemoryChild(t *testing.T) {
	h, _ := newTestHandler(t, Options{MaxBody: 16 << 20}, false)
	body := &rowSource{n: memRows}
	size := body.size()
	before := procStatus(t, "VmRSS")
	req := httptest.NewRequest(http.MethodPost, "/api/v1/batch?reference=weight", &rowSource{n: memRows})
	req.ContentLength = size
	req.Host = "127.0.0.1"
	w := &countingWriter{header: http.Header{}}
	h.ServeHTTP(w, req)
	if w.status != 0 && w.status != http.StatusOK {
		t.Fatalf("status %d", w.status)
	}
	peak := procStatus(t, "VmHWM")
	fmt.Printf("batch-memory growth=%d body=%d rows=%d\n", peak-before, size, w.lines-1)
}

// rowSource generates a batch file of n rows without holding it.
type rowSource struct {
	n, i int
	buf  []byte
}

func (s *rowSource) row(i int) string {
	if i < 0 {
		return "stratum,age,value\n"
	}
	st := "FM"[i%2 : i%2+1]
	age := i % (testAgeMax + 1)
	return fmt.Sprintf("%s,%d,%.1f\n", st, age, testMean(st, float64(age))+float64(i%7-3)/5)
}

func (s *rowSource) size() int64 {
	n := int64(len(s.row(-1)))
	for i := range s.n {
		n += int64(len(s.row(i)))
	}
	return n
}

func (s *rowSource) Read(p []byte) (int, error) {
	// A few KB at a time, as from a socket: the client's copy of the file
	// is not held.
	for len(s.buf) < min(len(p), 4096) && s.i <= s.n {
		s.buf = append(s.buf, s.row(s.i-1)...)
		s.i++
	}
	if len(s.buf) == 0 {
		return 0, io.EOF
	}
	n := copy(p, s.buf)
	s.buf = s.buf[:copy(s.buf, s.buf[n:])]
	return n, nil
}

// countingWriter is a ResponseWriter that keeps nothing but counts lines.
type countingWriter struct {
	header http.Header
	status int
	lines  int
}

func (c *countingWriter) Header() http.Header { return c.header }
func (c *countingWriter) WriteHeader(s int)   { c.status = s }
func (c *countingWriter) Write(p []byte) (int, error) {
	c.lines += bytes.Count(p, []byte{'\n'})
	return len(p), nil
}

// procStatus reads a size in bytes from /proc/self/status.
func procStatus(t *testing.T, key string) int64 {
	f, err := os.Open("/proc/self/status")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if v, ok := strings.CutPrefix(sc.Text(), key+":"); ok {
			kb, err := strconv.ParseInt(strings.TrimSuffix(strings.TrimSpace(v), " kB"), 10, 64)
			if err != nil {
				t.Fatal(err)
			}
			return kb << 10
		}
	}
	t.Fatalf("no %s in /proc/self/status", key)
	return 0
}
