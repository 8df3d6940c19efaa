package clinic

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"net"
	"net/http"
	"net/http/httptest"
	"net/url"
	"strings"
	"testing"
	"time"
	"unicode/utf8"
)

const okScore = `{"stratum":"F","age":7,"value":6.3}`

func TestHostRefused(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	remote, _ := newTestHandler(t, Options{Addr: "192.0.2.7:8750", Hosts: []string{"Clinic.LAN"}}, false)
	for _, c := range []struct {
		h    http.Handler
		host string
		want int
	}{
		{h, "localhost:8750", http.StatusOK},
		{h, "LOCALHOST", http.StatusOK},
		{h, "127.0.0.1:9", http.StatusOK},
		{h, "127.3.2.1:8750", http.StatusOK},
		{h, "[::1]:8750", http.StatusOK},
		{h, "evil.example:8750", http.StatusMisdirectedRequest},
		{h, "localhost.evil.example", http.StatusMisdirectedRequest},
		{h, "192.0.2.7:8750", http.StatusMisdirectedRequest},
		{h, "", http.StatusMisdirectedRequest},
		{remote, "192.0.2.7:8750", http.StatusOK},
		{remote, "clinic.lan:8750", http.StatusOK},
		{remote, "localhost:8750", http.StatusOK},
		{remote, "other.lan:8750", http.StatusMisdirectedRequest},
	} {
		for _, method := range []string{http.MethodGet, http.MethodPost} {
			var req *http.Request
			if method == http.MethodGet {
				req = httptest.NewRequest(method, "/api/v1/references", nil)
			} else {
				req = httptest.NewRequest(method, "/api/v1/score", strings.NewReader(okScore))
				req.Header.Set("Content-Type", "application/json")
			}
			req.Host = c.host
			rec := httptest.NewRecorder()
			c.h.ServeHTTP(rec, req)
			if rec.Code != c.want {
				t.Errorf("%s Host %q: status %d, want %d: %s", method, c.host, rec.Code, c.want, rec.Body)
				continue
			}
			if c.want != http.StatusOK {
				if e := decode[errorBody](t, rec); e.Field != "Host" || !strings.Contains(e.Error, "localhost") {
					t.Errorf("Host %q: %+v", c.host, e)
				}
			}
		}
	}
}

func TestCrossOriginRefused(t *testing.T) {
	var audit bytes.Buffer
	h, _ := newTestHandler(t, Options{Audit: &audit}, false)
	self := "http://" + testHost
	form := url.Values{"stratum": {"F"}, "age": {"7"}, "value": {"6.3"}}.Encode()
	for _, c := range []struct {
		name, path, ctype, body string
		hdr                     map[string]string
		want                    int
	}{
		{"no browser headers", "/api/v1/score", "application/json", okScore, nil, http.StatusOK},
		{"same origin", "/api/v1/score", "application/json", okScore, map[string]string{"Origin": self, "Sec-Fetch-Site": "same-origin"}, http.StatusOK},
		{"same-origin referer", "/api/v1/score", "application/json", okScore, map[string]string{"Referer": self + "/?x=1"}, http.StatusOK},
		{"typed by the user", "/", "application/x-www-form-urlencoded", form, map[string]string{"Sec-Fetch-Site": "none"}, http.StatusOK},
		{"foreign origin", "/api/v1/score", "application/json", okScore, map[string]string{"Origin": "http://evil.example"}, http.StatusForbidden},
		{"other port", "/api/v1/score", "application/json", okScore, map[string]string{"Origin": "http://127.0.0.1:9999"}, http.StatusForbidden},
		{"null origin", "/", "application/x-www-form-urlencoded", form, map[string]string{"Origin": "null"}, http.StatusForbidden},
		{"foreign referer", "/", "application/x-www-form-urlencoded", form, map[string]string{"Referer": "http://evil.example/page"}, http.StatusForbidden},
		{"cross-site fetch", "/api/v1/score", "application/json", okScore, map[string]string{"Sec-Fetch-Site": "cross-site", "Origin": self}, http.StatusForbidden},
		{"same-site fetch", "/api/v1/score", "application/json", okScore, map[string]string{"Sec-Fetch-Site": "same-site"}, http.StatusForbidden},
		{"batch", "/api/v1/batch", "text/csv", "stratum,age,value\nF,7,6.3\n", map[string]string{"Origin": "http://evil.example"}, http.StatusForbidden},
	} {
		req := httptest.NewRequest(http.MethodPost, c.path, strings.NewReader(c.body))
		req.Host = testHost
		req.Header.Set("Content-Type", c.ctype)
		for k, v := range c.hdr {
			req.Header.Set(k, v)
		}
		before := audit.Len()
		rec := httptest.NewRecorder()
		h.ServeHTTP(rec, req)
		if rec.Code != c.want {
			t.Errorf("%s: status %d, want %d: %.300s", c.name, rec.Code, c.want, rec.Body)
			continue
		}
		if c.want == http.StatusForbidden {
			if e := decode[errorBody](t, rec); e.Field != "Origin" {
				t.Errorf("%s: %+v", c.name, e)
			}
			if audit.Len() != before {
				t.Errorf("%s: refused request reached the audit log", c.name)
			}
		}
	}
	// Reading is not refused: a link from elsewhere to the page still opens.
	req := httptest.NewRequest(http.MethodGet, "/?stratum=F&age=7&value=6.3", nil)
	req.Host = testHost
	req.Header.Set("Sec-Fetch-Site", "cross-site")
	rec := httptest.NewRecorder()
	h.ServeHTTP(rec, req)
	if rec.Code != http.StatusOK {
		t.Errorf("GET from a link: %d", rec.Code)
	}
	if got := rec.Header().Get("Referrer-Policy"); got != "same-origin" {
		t.Errorf("Referrer-Policy %q: the page's own posts need their Origin", got)
	}
}

func TestJSONContentType(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	for ctype, want := range map[string]int{
		"application/json":                  http.StatusOK,
		"application/json; charset=utf-8":   http.StatusOK,
		"Application/JSON":                  http.StatusOK,
		"":                                  http.StatusUnsupportedMediaType,
		"text/plain":                        http.StatusUnsupportedMediaType,
		"application/x-www-form-urlencoded": http.StatusUnsupportedMediaType,
		"multipart/form-data; boundary=x":   http.StatusUnsupportedMediaType,
		"application/jsonx":                 http.StatusUnsupportedMediaType,
	} {
		rec := do(t, h, http.MethodPost, "/api/v1/score", ctype, strings.NewReader(okScore))
		if rec.Code != want {
			t.Errorf("Content-Type %q: status %d, want %d", ctype, rec.Code, want)
		}
		if want != http.StatusOK {
			if e := decode[errorBody](t, rec); e.Field != "Content-Type" || !strings.Contains(e.Error, "application/json") {
				t.Errorf("Content-Type %q: %+v", ctype, e)
			}
		}
	}
}

func TestDuplicateKeys(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	for body, field := range map[string]string{
		`{"stratum":"F","age":7,"value":6.3,"value":99}`:                      "value",
		`{"stratum":"F","age":7,"AGE":8,"value":6.3}`:                         "AGE",
		`{"stratum":"F","\u0061ge":7,"age":8,"value":6.3}`:                    "age",
		`[{"stratum":"F","age":7,"value":6.3},{"value":1,"age":2,"value":3}]`: "[1].value",
		`{"stratum":"F","age":7,"value":6.3,"x":{"a":1,"b":[{"c":1,"c":2}]}}`: "x.b[0].c",
		`{"stratum":"F","age":7,"value":6.3,"x":{"a":1,"a":2}}`:               "x.a",
	} {
		rec := postJSON(t, h, body)
		if rec.Code != http.StatusBadRequest {
			t.Errorf("%s: status %d, want 400", body, rec.Code)
			continue
		}
		if e := decode[errorBody](t, rec); e.Field != field || !strings.Contains(e.Error, "twice") {
			t.Errorf("%s: %+v, want field %q", body, e, field)
		}
	}
	// The same key in different objects is no duplicate.
	for _, body := range []string{
		`[{"stratum":"F","age":7,"value":6.3},{"stratum":"F","age":7,"value":6.3}]`,
		`{"stratum":"F","age":7,"value":6.3}`,
	} {
		if rec := postJSON(t, h, body); rec.Code != http.StatusOK {
			t.Errorf("%s: status %d: %s", body, rec.Code, rec.Body)
		}
	}
	if path, dup := duplicateKey([]byte(`{"a":{"b":1},"c":[{"b":2},{"b":3}],"d":{"b":{"b":1}}}`)); dup {
		t.Errorf("false duplicate at %q", path)
	}
}

func TestAssetsNoListingNoTemplates(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	for path, want := range map[string]int{
		"/assets/style.css":              http.StatusOK,
		"/assets/":                       http.StatusNotFound,
		"/assets":                        http.StatusNotFound,
		"/assets/page.html":              http.StatusNotFound,
		"/assets/../templates/page.html": http.StatusNotFound,
		"/templates/page.html":           http.StatusNotFound,
		"/assets/x/":                     http.StatusNotFound,
		"/assets/.":                      http.StatusNotFound,
	} {
		rec := do(t, h, http.MethodGet, path, "", nil)
		if rec.Code == http.StatusTemporaryRedirect || rec.Code == http.StatusMovedPermanently {
			// The mux sends unclean paths to their clean form: follow it.
			rec = do(t, h, http.MethodGet, rec.Header().Get("Location"), "", nil)
		}
		if rec.Code != want {
			t.Errorf("%s: status %d, want %d", path, rec.Code, want)
		}
		if b := rec.Body.String(); strings.Contains(b, "app.js") && path != "/assets/style.css" || strings.Contains(b, "{{") {
			t.Errorf("%s: listing or template served: %.200s", path, b)
		}
	}
}

// failWriter fails every write, as a full disk would.
type failWriter struct{}

func (failWriter) Write([]byte) (int, error) {
	return 0, errors.New("write /srv/secret/place/audit.log: no space left on device")
}

func TestAuditFailureFailsRequest(t *testing.T) {
	var log syncBuffer
	h, _ := newTestHandler(t, Options{Audit: failWriter{}, AuditName: "audit.log", Log: &log}, false)
	check := func(what string, rec *httptest.ResponseRecorder) {
		t.Helper()
		b := rec.Body.String()
		if rec.Code != http.StatusInternalServerError || !strings.Contains(b, "audit log audit.log") || strings.Contains(b, "/srv") {
			t.Errorf("%s: status %d: %.400s", what, rec.Code, b)
		}
		if strings.Contains(b, `"z"`) || len(pageZ(t, b)) > 0 {
			t.Errorf("%s: result shown although not audited", what)
		}
	}
	check("score", postJSON(t, h, okScore))
	check("page", do(t, h, http.MethodGet, "/?stratum=F&age=7&value=6.3", "", nil))
	check("chart", do(t, h, http.MethodGet, "/api/v1/chart.svg?stratum=F&age=7&value=6.3", "", nil))
	check("batch", do(t, h, http.MethodPost, "/api/v1/batch", "text/csv", strings.NewReader("stratum,age,value\nF,7,6.3\n")))
	body, ct := multipartBody(t, "weight", "kids.csv", "stratum,age,value\nF,7,6.3\n")
	check("batch form", do(t, h, http.MethodPost, "/batch", ct, body))
	if n := strings.Count(log.String(), "no space left on device"); n != 5 {
		t.Errorf("server log reports %d failures, want 5: %q", n, log.String())
	}
}

// TestSlowBody sends a score request whose body stalls: the answer is 408
// and names no socket address.
func TestSlowBody(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	srv := httptest.NewUnstartedServer(h)
	// A short read timeout stands for the real one (readTimeout).
	srv.Config.ReadTimeout = 300 * time.Millisecond
	srv.Start()
	defer srv.Close()
	for _, c := range []struct{ path, ctype string }{
		{"/api/v1/score", "application/json"},
		{"/", "application/x-www-form-urlencoded"},
		{"/api/v1/batch", "text/csv"},
		{"/batch", "multipart/form-data; boundary=b"},
	} {
		conn, err := net.Dial("tcp", srv.Listener.Addr().String())
		if err != nil {
			t.Fatal(err)
		}
		fmt.Fprintf(conn, "POST %s HTTP/1.1\r\nHost: %s\r\nContent-Type: %s\r\nContent-Length: 1000\r\n\r\n--b\r\nContent-Disposition: form-data; name=\"file\"; filename=\"a.csv\"\r\n\r\nstratum,", c.path, srv.Listener.Addr(), c.ctype)
		conn.SetReadDeadline(time.Now().Add(10 * time.Second))
		resp, err := http.ReadResponse(bufio.NewReader(conn), nil)
		if err != nil {
			t.Fatalf("%s: %v", c.path, err)
		}
		b, _ := io.ReadAll(resp.Body)
		resp.Body.Close()
		conn.Close()
		if resp.StatusCode != http.StatusRequestTimeout || !strings.Contains(string(b), "too slowly") {
			t.Errorf("%s: status %d: %.300s", c.path, resp.StatusCode, b)
		}
		if strings.Contains(string(b), "127.0.0.1") || strings.Contains(string(b), "tcp") {
			t.Errorf("%s: socket address in the answer: %.300s", c.path, b)
		}
	}
}

// TestNotUTF8 sends bytes that are not UTF-8 in every kind of body: every
// answer is valid UTF-8.
func TestNotUTF8(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	for what, rec := range map[string]*httptest.ResponseRecorder{
		"score":        postJSON(t, h, "{\"stratum\":\"F\xff\",\"age\":7,\"value\":6.3}"),
		"score key":    postJSON(t, h, "{\"st\xffratum\":\"F\",\"age\":7,\"value\":6.3}"),
		"score syntax": postJSON(t, h, "{\"stratum\":\xff}"),
		"page":         do(t, h, http.MethodPost, "/", "application/x-www-form-urlencoded", strings.NewReader("stratum=F%FF&age=7%FF&value=6.3")),
		"page raw":     do(t, h, http.MethodPost, "/", "application/x-www-form-urlencoded", strings.NewReader("stratum=F\xff&age=\xfe&value=6.3")),
		"batch":        do(t, h, http.MethodPost, "/api/v1/batch", "text/csv", strings.NewReader("child,stratum,age,value\nA\xff,F,7,6.3\n=1+1,F,7\xff,6.3\n")),
	} {
		if !utf8.Valid(rec.Body.Bytes()) {
			t.Errorf("%s: answer (%d, %s) holds bytes that are not UTF-8", what, rec.Code, rec.Header().Get("Content-Type"))
		}
		if what == "batch" && (!strings.Contains(rec.Body.String(), "A\uFFFD") || !strings.Contains(rec.Body.String(), "'=1+1")) {
			t.Errorf("batch: cells not replaced or neutralised: %s", rec.Body)
		}
	}
}
