package clinic

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"html"
	"mime/multipart"
	"net/http"
	"net/url"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"growband/internal/ageunit"
	"growband/internal/scorefile"
)

// zCells finds the z-scores shown in the results table.
var zCells = regexp.MustCompile(`<td class="num z" data-z[^>]*>([^<]*)</td>`)

// pageZ reads the shown z-scores back as numbers (the page writes a true
// minus sign).
func pageZ(t *testing.T, body string) []float64 {
	t.Helper()
	var zs []float64
	for _, m := range zCells.FindAllStringSubmatch(body, -1) {
		s := strings.Replace(html.UnescapeString(m[1]), "\u2212", "-", 1)
		z, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatalf("z cell %q: %v", m[1], err)
		}
		zs = append(zs, z)
	}
	return zs
}

func TestPageBlank(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, true)
	rec := do(t, h, http.MethodGet, "/", "", nil)
	if rec.Code != http.StatusOK {
		t.Fatalf("status %d", rec.Code)
	}
	body := rec.Body.String()
	for _, want := range []string{
		"weight in kg", "0 to 24 months", "This reference describes the sample", // reference facts and caution
		`name="age"`, `name="measured"`, `name="value"`, `name="birth"`, // the form
		`<option value="single"`,                                                      // the reference picker, two being loaded
		`Age <span class="unit">months</span>`, `weight <span class="unit">kg</span>`, // units on labels
	} {
		if !strings.Contains(body, want) {
			t.Errorf("page lacks %q", want)
		}
	}
	if strings.Contains(body, "https://") || strings.Contains(body, "http://") {
		t.Error("page refers to another site")
	}
	if strings.Contains(body, `class="card results"`) {
		t.Error("results shown before anything was entered")
	}
}

func TestPageScore(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	// Two visits given out of order: the page lists them by age.
	form := url.Values{
		"stratum": {"F"}, "birth": {"2024-01-02"},
		"age":      {"12", ""},
		"measured": {"", "2024-07-02"},
		"value":    {fmt.Sprint(testMean("F", 12) - 0.5*testSD), "6.2"},
	}
	rec := postForm(t, h, form)
	if rec.Code != http.StatusOK {
		t.Fatalf("status %d: %s", rec.Code, rec.Body)
	}
	body := rec.Body.String()
	// 2024-01-02 to 2024-07-02 is 182 days (exact calendar arithmetic).
	age2 := 182 / ageunit.Months.Days()
	zs := pageZ(t, body)
	want := []float64{testZ("F", age2, 6.2), -0.5}
	if len(zs) != 2 || !near(zs[0], want[0], 0.005) || !near(zs[1], want[1], 0.005) {
		t.Fatalf("page z %v, want %v (2 decimals)", zs, want)
	}
	dz := fmt.Sprintf("%.2f", want[1]-want[0])
	dz = strings.Replace(dz, "-", "\u2212", 1)
	if !strings.Contains(body, `<td class="num" data-label="Change in z">`+dz+`</td>`) {
		t.Errorf("change in z %s not shown", dz)
	}
	if strings.Count(body, "<svg") != 2 || !strings.Contains(body, `<div class="wide"><svg`) || !strings.Contains(body, `<div class="small"><svg`) {
		t.Error("no inline charts, for wide screens and for phones")
	}
	if strings.Contains(body, "<?xml") {
		t.Error("XML declaration inside the page")
	}
	// The GET form of the same request shows the same numbers.
	rec = do(t, h, http.MethodGet, "/?"+form.Encode(), "", nil)
	if got := pageZ(t, rec.Body.String()); len(got) != 2 || got[0] != zs[0] || got[1] != zs[1] {
		t.Errorf("GET page z %v, POST %v", got, zs)
	}
}

func TestPageErrorsBesideFields(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	for _, c := range []struct {
		name  string
		form  url.Values
		errID string // the error paragraph's id, beside its field
		text  string
	}{
		{"bad value", url.Values{"stratum": {"F"}, "age": {"3"}, "value": {"abc"}}, "value-1-err", "not a number"},
		{"no value", url.Values{"stratum": {"F"}, "age": {"3"}, "value": {""}, "measured": {"x"}}, "value-1-err", "enter the measurement"},
		{"bad age", url.Values{"stratum": {"F"}, "age": {"three"}, "value": {"5"}}, "age-1-err", "not a number"},
		{"age and date", url.Values{"stratum": {"F"}, "age": {"3"}, "measured": {"2024-01-01"}, "value": {"5"}}, "age-1-err", "not both"},
		{"date without birth", url.Values{"stratum": {"F"}, "measured": {"2024-01-01"}, "value": {"5"}}, "birth-err", "birth date"},
		{"visit before birth", url.Values{"stratum": {"F"}, "birth": {"2024-02-01"}, "measured": {"2024-01-01"}, "value": {"5"}}, "measured-1-err", "before the birth"},
		{"unknown stratum", url.Values{"stratum": {"Z"}, "age": {"3"}, "value": {"5"}}, "stratum-err", "unknown stratum"},
		{"second row", url.Values{"stratum": {"F"}, "age": {"3", "4"}, "value": {"5", "5,5,5"}}, "value-2-err", "not a number"},
	} {
		t.Run(c.name, func(t *testing.T) {
			rec := postForm(t, h, c.form)
			body := rec.Body.String()
			if rec.Code != http.StatusUnprocessableEntity {
				t.Errorf("status %d", rec.Code)
			}
			re := regexp.MustCompile(`<p class="err" id="` + c.errID + `">([^<]*)</p>`)
			m := re.FindStringSubmatch(body)
			if m == nil || !strings.Contains(m[1], c.text) {
				t.Errorf("no error %q at %s; errors shown: %q", c.text, c.errID, regexp.MustCompile(`<p class="err"[^>]*>[^<]*`).FindAllString(body, -1))
			}
			// The entered text is kept so it can be corrected.
			for _, v := range c.form["value"] {
				if v != "" && !strings.Contains(body, `value="`+v+`"`) {
					t.Errorf("entered %q not kept", v)
				}
			}
		})
	}
	// A good row beside a bad one is still scored.
	rec := postForm(t, h, url.Values{"stratum": {"F"}, "age": {"3", "4"}, "value": {"x", "5"}})
	if zs := pageZ(t, rec.Body.String()); len(zs) != 1 {
		t.Errorf("z shown %v, want the good row's", zs)
	}
}

func TestPageAddVisitAndChoose(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, true)
	rec := postForm(t, h, url.Values{"ref": {"weight"}, "stratum": {"F"}, "age": {"3"}, "value": {"5"}, "do": {"add"}})
	if n := strings.Count(rec.Body.String(), "data-visit>"); n != 2 {
		t.Errorf("%d visit rows after adding one, want 2", n)
	}
	rec = do(t, h, http.MethodGet, "/?ref=single&do=choose", "", nil)
	body := rec.Body.String()
	if !strings.Contains(body, `<option value="single" selected>`) || strings.Contains(body, `class="card results"`) {
		t.Error("choosing a reference did not select it, or scored")
	}
	rec = do(t, h, http.MethodGet, "/?ref=nothing", "", nil)
	if !strings.Contains(rec.Body.String(), "unknown reference") {
		t.Error("unknown reference not reported")
	}
}

// TestBatchAPI checks that the batch upload gives what growband score
// gives for the same file (internal/scorefile): every row echoed with z,
// centile and flag, reasons for the rows not scored, file errors naming the
// file and line.
func TestBatchAPI(t *testing.T) {
	h, r := newTestHandler(t, Options{}, false)
	in := "id,stratum,age,value\n" +
		"a,F,3,4.9\n" +
		"b,M,12.5,9.4\n" +
		"c,M,30,10\n" + // age out of range
		"d,X,3,5\n" + // unknown stratum
		"e,F,3,heavy\n" +
		"\n" +
		"f,F,,5\n" +
		"g,F,3,\"4\n" // unterminated quote: this row only
	rec := do(t, h, http.MethodPost, "/api/v1/batch", "text/csv", strings.NewReader(in))
	if rec.Code != http.StatusOK {
		t.Fatalf("status %d: %s", rec.Code, rec.Body)
	}
	rows, err := csv.NewReader(rec.Body).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != 8 || strings.Join(rows[0], ",") != "id,stratum,age,value,z,centile,flag" {
		t.Fatalf("rows %q", rows)
	}
	for i, c := range []struct {
		s    string
		a, v float64
	}{{"F", 3, 4.9}, {"M", 12.5, 9.4}} {
		d, _ := r.Score(c.s, c.a, c.v)
		if rows[i+1][4] != scorefile.ZText(d.Z) || rows[i+1][5] != scorefile.CentileText(d.Centile) {
			t.Errorf("row %d: z %q centile %q, direct %v %v", i+1, rows[i+1][4], rows[i+1][5], d.Z, d.Centile)
		}
	}
	for i, want := range map[int]string{3: "age outside", 4: "unknown stratum", 5: "not a number", 6: "missing value", 7: "quote"} {
		if rows[i][4] != "" || !strings.Contains(rows[i][6], want) {
			t.Errorf("row %d: %q, want no z and a flag with %q", i, rows[i], want)
		}
	}
	// Semicolons, a byte-order mark, headers in capitals, dates and a
	// decimal comma.
	in = "\ufeffSex;Birth;Measured;Value\nF;2024-01-02;2025-01-02;7,9\n"
	rec = do(t, h, http.MethodPost, "/api/v1/batch?reference=weight", "text/csv", strings.NewReader(in))
	rows, _ = csv.NewReader(rec.Body).ReadAll()
	age := 366 / ageunit.Months.Days() // exact calendar arithmetic, as in TestScoreDates
	if len(rows) != 2 || rows[1][4] != scorefile.ZText(testZ("F", age, 7.9)) {
		t.Errorf("rows %q", rows)
	}
	for _, c := range []struct{ body, query, field, msg string }{
		{"stratum,age\nF,3\n", "", "file", "upload:1: no value column"},
		{"stratum,value\nF,3\n", "", "file", "upload:1: no age"},
		{"age,value\n3,4\n", "", "file", "no stratum column"}, // two strata
		{"", "", "file", "empty"},
		{"age,value\n\x00\x01", "", "file", "NUL"},
		{"stratum,age,value\nF,3,4\n", "?reference=nope", "reference", "nope"},
	} {
		rec := do(t, h, http.MethodPost, "/api/v1/batch"+c.query, "text/csv", strings.NewReader(c.body))
		if rec.Code != http.StatusBadRequest {
			t.Errorf("%q: status %d", c.body, rec.Code)
			continue
		}
		if e := decode[errorBody](t, rec); e.Field != c.field || !strings.Contains(e.Error, c.msg) {
			t.Errorf("%q: %+v, want field %s and %q", c.body, e, c.field, c.msg)
		}
	}
}

func multipartBody(t *testing.T, ref, name, content string) (*bytes.Buffer, string) {
	t.Helper()
	var buf bytes.Buffer
	mw := multipart.NewWriter(&buf)
	if err := mw.WriteField("ref", ref); err != nil {
		t.Fatal(err)
	}
	if name != "" {
		fw, err := mw.CreateFormFile("file", name)
		if err != nil {
			t.Fatal(err)
		}
		fw.Write([]byte(content))
	}
	mw.Close()
	return &buf, mw.FormDataContentType()
}

func TestBatchForm(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	body, ct := multipartBody(t, "weight", `C:\clinic\visits "march".csv`, "stratum,age,value\nF,3,4.9\n")
	rec := do(t, h, http.MethodPost, "/batch", ct, body)
	if rec.Code != http.StatusOK || !strings.HasPrefix(rec.Header().Get("Content-Type"), "text/csv") {
		t.Fatalf("status %d, %s: %s", rec.Code, rec.Header().Get("Content-Type"), rec.Body)
	}
	if cd := rec.Header().Get("Content-Disposition"); cd != `attachment; filename="visits__march_-scored.csv"` {
		t.Errorf("Content-Disposition %q", cd)
	}
	body, ct = multipartBody(t, "weight", "x.csv", "stratum,age\nF,3\n")
	rec = do(t, h, http.MethodPost, "/batch", ct, body)
	if rec.Code != http.StatusBadRequest || !strings.Contains(rec.Body.String(), `id="file-err"`) {
		t.Errorf("bad file: status %d", rec.Code)
	}
	body, ct = multipartBody(t, "weight", "", "")
	rec = do(t, h, http.MethodPost, "/batch", ct, body)
	if rec.Code != http.StatusBadRequest || !strings.Contains(rec.Body.String(), "choose a CSV file") {
		t.Errorf("no file: status %d", rec.Code)
	}
	rec = do(t, h, http.MethodPost, "/batch", "text/plain", strings.NewReader("x"))
	if rec.Code != http.StatusBadRequest {
		t.Errorf("not multipart: status %d", rec.Code)
	}
}

// TestPageResultFirst checks the page's structure behind "the result is on
// screen at once": the result section comes first in the page, and the form
// posts to the #result fragment, so a browser without script lands on it.
func TestPageResultFirst(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	rec := postForm(t, h, url.Values{"stratum": {"F"}, "age": {"7"}, "value": {"6.3"}})
	body := rec.Body.String()
	res := strings.Index(body, `id="result"`)
	for _, later := range []string{`id="ref-h"`, `id="child-form"`, `id="batch"`} {
		if i := strings.Index(body, later); res < 0 || i < res {
			t.Errorf("%s comes before the result (%d, %d)", later, i, res)
		}
	}
	if !strings.Contains(body, `<form method="post" action="/#result" id="child-form"`) {
		t.Error("the child form does not post to #result")
	}
	if strings.Count(body, `id="result"`) != 1 {
		t.Error(`id="result" given twice`)
	}
	// With errors and no result, #result is the form with its notes.
	bad := postForm(t, h, url.Values{"stratum": {"F"}, "age": {"7"}, "value": {"6..3"}}).Body.String()
	if strings.Count(bad, `id="result"`) != 1 || !strings.Contains(bad, `<section class="card child" aria-labelledby="child-h" id="result">`) {
		t.Error("a form with errors is not the #result target")
	}
	// z = (6.3 - (3.4 + 0.35*7))/0.8 = 0.5625 by the hand reference (exact
	// identity); its centile Phi(0.5625) = 71.3 (from memory).
	if plain := html.UnescapeString(body); !strings.Contains(plain, `data-latest-z>+0.56<`) || !strings.Contains(plain, `data-latest-centile>71.3<`) {
		t.Errorf("latest z and centile not shown first: %.300s", body[res:])
	}
}

// TestPrintFieldsNeverSent checks that the child identifier and the date
// printed cannot be submitted: their inputs have no name and lie outside
// every form. (TestBrowserResultOnScreen also types into them, submits the
// form and checks what the server received.)
func TestPrintFieldsNeverSent(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	body := postForm(t, h, url.Values{"stratum": {"F"}, "age": {"7"}, "value": {"6.3"}}).Body.String()
	for _, id := range []string{"print-child", "print-date"} {
		tag := regexp.MustCompile(`<input id="` + id + `"[^>]*>`).FindString(body)
		if tag == "" {
			t.Fatalf("no %s input", id)
		}
		if strings.Contains(tag, "name=") || strings.Contains(tag, "form=") {
			t.Errorf("%s can be submitted: %s", id, tag)
		}
		i := strings.Index(body, tag)
		if opened, closed := strings.Count(body[:i], "<form"), strings.Count(body[:i], "</form>"); opened != closed {
			t.Errorf("%s lies inside a form", id)
		}
	}
}

// TestPageLMSTable serves a reference read from an LMS table: the page says
// so, with the source file, strata and age range, and never "Children
// measured 0".
func TestPageLMSTable(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "growth.csv")
	// An invented two-stratum LMS table.
	table := "# age_unit = months\n# measure = length\n# unit = cm\nsex,age,L,M,S\nF,0,1,49.1,0.038\nF,24,1,86.4,0.035\nM,0,1,49.9,0.038\nM,24,1,87.8,0.035\n"
	if err := os.WriteFile(p, []byte(table), 0o644); err != nil {
		t.Fatal(err)
	}
	refs, names, err := loadRefs([]string{p})
	if err != nil {
		t.Fatal(err)
	}
	h := NewHandler(refs, names, Options{files: []string{p}})
	body := do(t, h, http.MethodGet, "/", "", nil).Body.String()
	for _, want := range []string{"LMS table", "growth.csv", "F, M", "0 to 24 months", "Tabulated ages"} {
		if !strings.Contains(body, want) {
			t.Errorf("page lacks %q", want)
		}
	}
	if strings.Contains(body, "Children measured") || strings.Contains(body, "<td>0</td>") {
		t.Error("an LMS table shown as if fitted from 0 children")
	}
	if strings.Contains(body, dir) {
		t.Error("the page shows the server's directory")
	}
}
