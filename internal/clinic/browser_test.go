package clinic

import (
	"context"
	"encoding/json"
	"fmt"
	"html"
	"image"
	"image/png"
	"net/http"
	"net/http/httptest"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"
)

// chromiumPath is where Debian's chromium package installs the browser.
const chromiumPath = "/usr/bin/chromium"

// browserTimeout bounds one headless browser run; a cold start on a busy
// machine takes a few seconds.
const browserTimeout = 90 * time.Second

// chromium runs the headless browser with the given extra arguments on url
// and returns its standard output.
func chromium(t *testing.T, args ...string) string {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), browserTimeout)
	defer cancel()
	base := []string{"--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
		"--disable-extensions", "--no-first-run", "--hide-scrollbars", "--user-data-dir=" + t.TempDir()}
	cmd := exec.CommandContext(ctx, chromiumPath, append(base, args...)...)
	var stderr strings.Builder
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("chromium %q: %v\n%s", args, err, stderr.String())
	}
	return string(out)
}

// keepShot copies a screenshot to $CLINIC_SHOTS, when set, for a person to
// look at.
func keepShot(t *testing.T, path string) {
	dir := os.Getenv("CLINIC_SHOTS")
	if dir == "" {
		return
	}
	b, err := os.ReadFile(path)
	if err == nil {
		err = os.WriteFile(filepath.Join(dir, filepath.Base(path)), b, 0o644)
	}
	if err != nil {
		t.Log(err)
	}
}

// TestBrowser loads the page in headless Chromium: the z-score it shows must
// be the API's, a bad value must show its error beside the field, and the
// screenshots must not be blank. The form is sent as a GET query, which the
// server renders like a POST.
func TestBrowser(t *testing.T) {
	if _, err := os.Stat(chromiumPath); err != nil {
		t.Skip("no headless browser at " + chromiumPath)
	}
	if testing.Short() {
		t.Skip("headless browser skipped with -short")
	}
	h, _ := newTestHandler(t, Options{}, true)
	srv := httptest.NewServer(h)
	defer srv.Close()

	// The API's answers for three visits.
	visits := []struct{ age, value string }{{"2.5", "4.6"}, {"7", "6.3"}, {"12.5", "7.4"}}
	var apiZ []float64
	for _, v := range visits {
		resp, err := http.Post(srv.URL+"/api/v1/score", "application/json",
			strings.NewReader(fmt.Sprintf(`{"reference":"weight","stratum":"F","age":%s,"value":%s}`, v.age, v.value)))
		if err != nil {
			t.Fatal(err)
		}
		var res result
		err = json.NewDecoder(resp.Body).Decode(&res)
		resp.Body.Close()
		if err != nil || res.Z == nil {
			t.Fatalf("API: %v %+v", err, res)
		}
		apiZ = append(apiZ, *res.Z)
	}
	q := url.Values{"ref": {"weight"}, "stratum": {"F"}}
	for _, v := range visits {
		q.Add("age", v.age)
		q.Add("value", v.value)
		q.Add("measured", "")
	}
	page := srv.URL + "/?" + q.Encode()
	dom := chromium(t, "--dump-dom", page)
	cells := regexp.MustCompile(`<td class="num z" data-z=""[^>]*>([^<]*)</td>`).FindAllStringSubmatch(dom, -1)
	if len(cells) != len(visits) {
		t.Fatalf("browser shows %d z-scores, want %d; DOM starts %.500s", len(cells), len(visits), dom)
	}
	for i, c := range cells {
		shown := strings.Replace(html.UnescapeString(c[1]), "\u2212", "-", 1)
		z, err := strconv.ParseFloat(shown, 64)
		// The page writes 2 decimals: it must be the API's z rounded.
		if err != nil || shown != strconv.FormatFloat(apiZ[i], 'f', 2, 64) && !strings.HasPrefix(shown, "+"+strconv.FormatFloat(apiZ[i], 'f', 2, 64)) {
			t.Errorf("visit %d: page shows %q (%v), API z %v", i+1, c[1], z, apiZ[i])
		}
	}
	if !strings.Contains(dom, "<svg") || !strings.Contains(dom, `class="js"`) {
		t.Error("chart missing, or the page script did not run")
	}

	bad := url.Values{"ref": {"weight"}, "stratum": {"F"}, "age": {"6"}, "value": {"6..1"}}
	dom = chromium(t, "--dump-dom", srv.URL+"/?"+bad.Encode())
	m := regexp.MustCompile(`<p class="err" id="value-1-err">([^<]*)</p>`).FindStringSubmatch(dom)
	if m == nil || !strings.Contains(html.UnescapeString(m[1]), `"6..1" is not a number`) {
		t.Errorf("bad value: no error beside the value field; DOM errors %q",
			regexp.MustCompile(`<p class="err"[^>]*>[^<]*`).FindAllString(dom, -1))
	}
	if !strings.Contains(dom, `id="value-1" name="value" type="text" inputmode="decimal" autocomplete="off" value="6..1" aria-invalid="true"`) {
		t.Error("bad value not kept in its field, or not marked invalid")
	}

	dir := t.TempDir()
	for _, s := range []struct{ name, size, url string }{
		{"clinic-desktop.png", "1100,1900", page},
		{"clinic-phone.png", "390,2400", page},
		{"clinic-error.png", "390,1200", srv.URL + "/?" + bad.Encode()},
	} {
		shot := filepath.Join(dir, s.name)
		chromium(t, "--screenshot="+shot, "--window-size="+s.size, s.url)
		checkNotBlank(t, shot)
		keepShot(t, shot)
	}

	// Printing gives one page.
	pdf := filepath.Join(dir, "clinic-print.pdf")
	chromium(t, "--print-to-pdf="+pdf, "--no-pdf-header-footer", page)
	b, err := os.ReadFile(pdf)
	if err != nil {
		t.Fatal(err)
	}
	if n := len(regexp.MustCompile(`/Type\s*/Page[^s]`).FindAll(b, -1)); n != 1 {
		t.Errorf("printed page: %d pages, want 1", n)
	}
	keepShot(t, pdf)
}

// checkNotBlank decodes the PNG and checks that it holds a real page: many
// colours, and a good share of pixels that are not the background.
func checkNotBlank(t *testing.T, path string) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	b := img.Bounds()
	colours := map[[3]uint32]int{}
	for y := b.Min.Y; y < b.Max.Y; y += 2 {
		for x := b.Min.X; x < b.Max.X; x += 2 {
			r, g, bl, _ := img.At(x, y).RGBA()
			colours[[3]uint32{r >> 8, g >> 8, bl >> 8}]++
		}
	}
	var top, total int
	for _, n := range colours {
		top = max(top, n)
		total += n
	}
	// A rendered page with text and a chart has hundreds of colours from
	// anti-aliasing; a blank or failed render has a handful (thresholds:
	// common practice for smoke tests).
	if len(colours) < 50 || float64(top)/float64(total) > 0.97 {
		t.Errorf("%s (%v) looks blank: %d colours, the commonest covers %.1f%%", filepath.Base(path), b.Size(), len(colours), 100*float64(top)/float64(total))
	}
	_ = image.Point{}
}
