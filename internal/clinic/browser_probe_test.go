package clinic

import (
	"bytes"
	"encoding/json"
	"fmt"
	"html"
	"image"
	"image/png"
	"io"
	"net/http"
	"net/http/httptest"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"sync"
	"testing"
)

// probeScript runs inside the page under test (served as /probe.js and
// added to every HTML answer by probed). By the URL fragment it:
//
//	#fill   fills the child form and presses Score, as a nurse would;
//	#result on the first result, types an identifier and a date into the
//	        print fields and presses Score again (those must never reach
//	        the server); on the second, measures the page;
//	#print  types the print fields, for --print-to-pdf.
//
// The measurements go into <pre id="probe"> as JSON: the viewport, the
// page's scroll width, the boxes of the latest z and centile and of the
// visible chart, and the smallest chart text as shown, in CSS px.
const probeScript = `
(function () {
  function typePrint() {
    document.getElementById("print-child").value = "TW-PRINT-4711";
    document.getElementById("print-date").value = "2031-02-03";
  }
  function box(el) {
    if (!el) { return null; }
    var r = el.getBoundingClientRect();
    return {top: r.top, bottom: r.bottom, left: r.left, right: r.right, width: r.width, height: r.height};
  }
  function measure() {
    var out = {vw: window.innerWidth, vh: window.innerHeight, scrollWidth: document.documentElement.scrollWidth, scrollY: window.scrollY, url: location.href,
      z: box(document.querySelector("[data-latest-z]")), centile: box(document.querySelector("[data-latest-centile]")),
      charts: 0, minFont: 1e9, texts: 0, printChild: (document.getElementById("print-child") || {}).value};
    out.overflow = [];
    document.querySelectorAll("body *").forEach(function (el) {
      if (out.overflow.length < 5 && el.getBoundingClientRect().right > window.innerWidth + 0.5 && !el.closest("svg")) {
        out.overflow.push(el.tagName.toLowerCase() + "." + el.className + " " + (el.textContent || "").slice(0, 40));
      }
    });
    document.querySelectorAll(".chart svg").forEach(function (s) {
      var b = s.getBoundingClientRect();
      if (b.width === 0) { return; }
      out.charts++;
      out.chart = box(s);
      s.querySelectorAll("text").forEach(function (t) {
        if (!t.textContent.trim()) { return; }
        var m = t.getScreenCTM();
        var px = parseFloat(getComputedStyle(t).fontSize) * Math.hypot(m.a, m.b);
        out.texts++;
        if (px < out.minFont) { out.minFont = px; out.minText = t.textContent; }
      });
    });
    var top = window.parent.document;
    var pre = top.createElement("pre");
    pre.id = "probe";
    pre.textContent = JSON.stringify(out);
    top.body.appendChild(pre);
  }
  window.addEventListener("load", function () {
    setTimeout(function () {
      var form = document.getElementById("child-form");
      if (location.hash === "#fill") {
        form.querySelector("[name=stratum]").value = "F";
        form.querySelector("[name=age]").value = "7";
        form.querySelector("[name=value]").value = "6.3";
        form.querySelector("button[value=score]").click();
      } else if (location.hash === "#result" && !sessionStorage.getItem("typed")) {
        sessionStorage.setItem("typed", "1");
        typePrint();
        form.querySelector("button[value=score]").click();
      } else if (location.hash === "#print") {
        typePrint();
      } else {
        measure();
      }
    }, 100);
  });
})();
`

// probed serves the handler under test with the probe script, and records
// every request (method, URL, body) and the status it got. /harness?w=W&h=H&src=URL
// shows src in a frame of exactly W x H CSS px, the viewport of the phone,
// laptop or desktop under test (a headless window has a minimum width and
// its own idea of the viewport); for that the page's refusal to be framed
// is lifted in these tests only.
type probed struct {
	h       http.Handler
	noAppJS bool // leave out the page's own script: the page as without JavaScript
	mu      sync.Mutex
	seen    []seenRequest
}

type seenRequest struct {
	Method, URL, Body, Origin string
	Status                    int
}

func (p *probed) ServeHTTP(w http.ResponseWriter, r *http.Request) {
	switch r.URL.Path {
	case "/probe.js":
		w.Header().Set("Content-Type", "text/javascript")
		_, _ = io.WriteString(w, probeScript)
		return
	case "/harness":
		q := r.URL.Query()
		w.Header().Set("Content-Type", "text/html; charset=utf-8")
		fmt.Fprintf(w, `<!doctype html><html><body style="margin:0"><iframe src="%s" width="%s" height="%s" style="border:0;display:block"></iframe></body></html>`,
			html.EscapeString(q.Get("src")), html.EscapeString(q.Get("w")), html.EscapeString(q.Get("h")))
		return
	}
	body, _ := io.ReadAll(r.Body)
	r.Body = io.NopCloser(bytes.NewReader(body))
	rec := httptest.NewRecorder()
	p.h.ServeHTTP(rec, r)
	p.mu.Lock()
	p.seen = append(p.seen, seenRequest{r.Method, r.URL.String(), string(body), r.Header.Get("Origin"), rec.Code})
	p.mu.Unlock()
	b := rec.Body.Bytes()
	for k, v := range rec.Header() {
		w.Header()[k] = v
	}
	if strings.HasPrefix(rec.Header().Get("Content-Type"), "text/html") {
		b = bytes.Replace(b, []byte("</body>"), []byte(`<script src="/probe.js"></script></body>`), 1)
		if p.noAppJS {
			b = bytes.Replace(b, []byte(`<script src="/assets/app.js" defer></script>`), nil, 1)
		}
		w.Header().Del("Content-Length")
		w.Header().Del("X-Frame-Options")
		w.Header().Set("Content-Security-Policy", strings.Replace(contentPolicy, "frame-ancestors 'none'", "frame-ancestors 'self'", 1))
	}
	w.WriteHeader(rec.Code)
	_, _ = w.Write(b)
}

func (p *probed) requests() []seenRequest {
	p.mu.Lock()
	defer p.mu.Unlock()
	return append([]seenRequest(nil), p.seen...)
}

// probeResult is what probeScript measured.
type probeResult struct {
	VW, VH, ScrollWidth float64
	ScrollY             float64
	URL                 string
	Z, Centile, Chart   *struct{ Top, Bottom, Left, Right, Width, Height float64 }
	Charts, Texts       int
	MinFont             float64
	MinText, PrintChild string
	Overflow            []string // elements that reach past the window's right edge
}

var probeRE = regexp.MustCompile(`<pre id="probe">([^<]*)</pre>`)

// probeBudget is the virtual time chromium gives the page to load, submit
// twice and be measured, in ms: each step waits 100 ms (common practice
// for headless runs; generous).
const probeBudget = "8000"

func needBrowser(t *testing.T) {
	t.Helper()
	if _, err := os.Stat(chromiumPath); err != nil {
		t.Skip("no headless browser at " + chromiumPath)
	}
	if testing.Short() {
		t.Skip("headless browser skipped with -short")
	}
}

// minChartPx is the smallest chart text wanted on screen, in CSS px
// (issue 14: at least 11 px at every size).
const minChartPx = 11

// TestBrowserResultOnScreen scores a child by filling the form and pressing
// Score in headless Chromium at a phone's, a laptop's and a desktop's window
// size, and two more: the latest z-score, its centile and the whole chart must be inside
// the window at once, the page must not scroll sideways, and every chart
// text must be at least minChartPx high. The page's own script is left out,
// so this is the page as a browser without JavaScript shows it (only the
// probe runs, to press the buttons and measure). On the way it types an
// identifier and a date into the print fields and presses Score again: the
// server must never receive them. Screenshots of the same result (from the
// GET form of the request) are kept in $CLINIC_SHOTS when set.
func TestBrowserResultOnScreen(t *testing.T) {
	needBrowser(t)
	h, _ := newTestHandler(t, Options{}, false)
	p := &probed{h: h, noAppJS: true}
	srv := httptest.NewServer(p)
	defer srv.Close()
	dir := t.TempDir()
	getForm := url.Values{"ref": {"weight"}, "stratum": {"F"}, "age": {"2.5", "7"}, "value": {"4.6", "6.3"}, "measured": {"", ""}}
	// A phone, a laptop and a desktop (issue 14), and a small phone and a
	// tablet on either side of the switch between the two charts.
	for _, size := range [][2]int{{390, 844}, {1366, 768}, {1920, 1080}, {326, 640}, {608, 900}} {
		name := fmt.Sprintf("%dx%d", size[0], size[1])
		harness := func(src string) string {
			return srv.URL + "/harness?" + url.Values{"w": {fmt.Sprint(size[0])}, "h": {fmt.Sprint(size[1])}, "src": {src}}.Encode()
		}
		dom := chromium(t, "--dump-dom", "--virtual-time-budget="+probeBudget, "--window-size=2000,1200", harness("/#fill"))
		m := probeRE.FindStringSubmatch(dom)
		if m == nil {
			t.Fatalf("%s: no measurement; DOM ends %q", name, dom[max(0, len(dom)-600):])
		}
		var pr probeResult
		if err := json.Unmarshal([]byte(html.UnescapeString(m[1])), &pr); err != nil {
			t.Fatalf("%s: %v: %s", name, err, m[1])
		}
		t.Logf("%s: %s", name, html.UnescapeString(m[1]))
		if pr.VW != float64(size[0]) || pr.VH != float64(size[1]) {
			t.Errorf("%s: measured in a %gx%g viewport", name, pr.VW, pr.VH)
		}
		for what, b := range map[string]*struct{ Top, Bottom, Left, Right, Width, Height float64 }{"z-score": pr.Z, "centile": pr.Centile, "chart": pr.Chart} {
			if b == nil || b.Top < 0 || b.Bottom > pr.VH || b.Left < 0 || b.Right > pr.VW || b.Width == 0 {
				t.Errorf("%s: the %s is not inside the window after Score: %+v", name, what, b)
			}
		}
		// The form posts to /#result: the browser lands on the result, past
		// the page's header bar.
		if !strings.HasSuffix(pr.URL, "/#result") || pr.ScrollY <= 0 {
			t.Errorf("%s: after Score the page is at %s scrolled %g px, want at #result", name, pr.URL, pr.ScrollY)
		}
		if pr.ScrollWidth > pr.VW {
			t.Errorf("%s: the page scrolls sideways: %g px wide in a %g px window; %q", name, pr.ScrollWidth, pr.VW, pr.Overflow)
		}
		if pr.Charts != 1 || pr.Texts < 10 || pr.MinFont < minChartPx {
			t.Errorf("%s: %d charts shown, %d texts, smallest %.1f px (%q); want one chart, text >= %d px", name, pr.Charts, pr.Texts, pr.MinFont, pr.MinText, minChartPx)
		}
		// The same result from the GET form of the request (what a page
		// without script would show after Score), for a person to look at.
		shot := filepath.Join(dir, "clinic-result-"+name+".png")
		chromium(t, "--screenshot="+shot, "--window-size=2000,1200", "--virtual-time-budget=2000", harness("/?"+getForm.Encode()+"#shot"))
		cropShot(t, shot, size[0], size[1])
		checkNotBlank(t, shot)
		keepShot(t, shot)
	}
	var posts int
	for _, r := range p.requests() {
		if strings.Contains(r.URL+r.Body, "TW-PRINT-4711") || strings.Contains(r.URL+r.Body, "2031-02-03") {
			t.Errorf("the server received the print fields: %s %s %q", r.Method, r.URL, r.Body)
		}
		if r.Method == http.MethodPost {
			posts++
			if r.Status != http.StatusOK || !strings.Contains(r.Body, "value=6.3") {
				t.Errorf("the page's own POST: status %d, body %q", r.Status, r.Body)
			}
		}
	}
	if posts != 10 {
		t.Errorf("%d form posts, want 2 per window size", posts)
	}
}

// TestBrowserPrint prints the result page to PDF with an identifier and a
// date typed into the print fields: the PDF's text (pdftotext, from
// poppler-utils) must hold both, the reference's name and build date, the
// z-score and the caution, on one page.
func TestBrowserPrint(t *testing.T) {
	needBrowser(t)
	h, _ := newTestHandler(t, Options{}, false)
	srv := httptest.NewServer(&probed{h: h})
	defer srv.Close()
	q := url.Values{"ref": {"weight"}, "stratum": {"F"}, "age": {"7"}, "value": {"6.3"}}
	pdf := filepath.Join(t.TempDir(), "clinic-print.pdf")
	chromium(t, "--print-to-pdf="+pdf, "--no-pdf-header-footer", "--virtual-time-budget=3000", srv.URL+"/?"+q.Encode()+"#print")
	keepShot(t, pdf)
	b, err := os.ReadFile(pdf)
	if err != nil {
		t.Fatal(err)
	}
	if n := len(regexp.MustCompile(`/Type\s*/Page[^s]`).FindAll(b, -1)); n != 1 {
		t.Errorf("printed page: %d pages, want 1", n)
	}
	pdftotext, err := exec.LookPath("pdftotext")
	if err != nil {
		t.Skip("no pdftotext: the PDF's text is not checked")
	}
	out, err := exec.Command(pdftotext, "-layout", pdf, "-").Output()
	if err != nil {
		t.Fatal(err)
	}
	text := string(out)
	z := fmtSigned(testZ("F", 7, 6.3), 2)
	for _, want := range []string{"TW-PRINT-4711", "2031-02-03", "Date printed", "weight", "built 2026-01-02", z, "It is not a"} {
		if !strings.Contains(text, want) {
			t.Errorf("printed page lacks %q:\n%s", want, text)
		}
	}
	for _, not := range []string{"Batch file", "Score the file", "neither sent nor kept"} {
		if strings.Contains(text, not) {
			t.Errorf("printed page shows %q", not)
		}
	}
}

// TestBrowserCrossOrigin opens, in headless Chromium, a page of another
// origin that posts the child form to the clinic and sends a script request
// to the API, and opens the clinic under a foreign host name that resolves
// to 127.0.0.1 (as DNS rebinding would): the clinic must refuse all of
// them and record nothing in the audit log.
func TestBrowserCrossOrigin(t *testing.T) {
	needBrowser(t)
	var audit syncBuffer
	h, _ := newTestHandler(t, Options{Audit: &audit}, false)
	p := &probed{h: h}
	clinic := httptest.NewServer(p)
	defer clinic.Close()
	evil := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		w.Header().Set("Content-Type", "text/html; charset=utf-8")
		if r.URL.Path == "/fetch" {
			_, _ = io.WriteString(w, `<!doctype html><html><body><p id="out">pending</p><script>
fetch("`+clinic.URL+`/api/v1/score", {method: "POST", mode: "no-cors", headers: {"Content-Type": "text/plain"},
  body: JSON.stringify({stratum: "F", age: 7, value: 6.3})}).then(function () { document.getElementById("out").textContent = "sent"; },
  function () { document.getElementById("out").textContent = "failed"; });
</script></body></html>`)
			return
		}
		_, _ = io.WriteString(w, `<!doctype html><html><body onload="document.getElementById('f').submit()">
<form id="f" method="post" action="`+clinic.URL+`/">
<input name="stratum" value="F"><input name="age" value="7"><input name="value" value="6.3"><input name="do" value="score">
</form></body></html>`)
	}))
	defer evil.Close()
	dom := chromium(t, "--dump-dom", "--virtual-time-budget=3000", evil.URL+"/form")
	if !strings.Contains(dom, `"field":"Origin"`) {
		t.Errorf("the browser does not show the refusal of the form post: %.400s", dom)
	}
	chromium(t, "--dump-dom", "--virtual-time-budget=3000", evil.URL+"/fetch")
	var refused int
	for _, r := range p.requests() {
		if r.Method != http.MethodPost {
			continue
		}
		if r.Origin != evil.URL || r.Status != http.StatusForbidden {
			t.Errorf("cross-origin %s %s from %q: status %d, want 403", r.Method, r.URL, r.Origin, r.Status)
			continue
		}
		refused++
	}
	if refused != 2 {
		t.Errorf("%d cross-origin posts refused, want 2 (form and script); requests %+v", refused, p.requests())
	}
	if audit.String() != "" {
		t.Errorf("audit log written by a foreign page: %q", audit.String())
	}

	// The clinic under a foreign name (DNS rebinding), resolved by the
	// browser to the clinic's address.
	u, err := url.Parse(clinic.URL)
	if err != nil {
		t.Fatal(err)
	}
	dom = chromium(t, "--dump-dom", "--host-resolver-rules=MAP rebind.test 127.0.0.1", "http://rebind.test:"+u.Port()+"/?stratum=F&age=7&value=6.3")
	if !strings.Contains(dom, "421") && !strings.Contains(dom, `not for \"rebind.test:`) {
		t.Errorf("page under a foreign host name not refused: %.400s", dom)
	}
	last := p.requests()[len(p.requests())-1]
	if last.Status != http.StatusMisdirectedRequest {
		t.Errorf("request under a foreign host name: status %d, want 421", last.Status)
	}
	if audit.String() != "" {
		t.Errorf("audit log written under a foreign host name: %q", audit.String())
	}
}

// cropShot cuts the screenshot at path to its top-left w x h pixels, the
// harness's frame.
func cropShot(t *testing.T, path string, w, h int) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(f)
	f.Close()
	if err != nil {
		t.Fatal(err)
	}
	sub := img.(interface {
		SubImage(image.Rectangle) image.Image
	}).SubImage(image.Rect(0, 0, w, h))
	var buf bytes.Buffer
	if err := png.Encode(&buf, sub); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}
