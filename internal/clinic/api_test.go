package clinic

import (
	"bytes"
	"encoding/json"
	"fmt"
	"net/http"
	"slices"
	"strings"
	"sync"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

func TestScoreOne(t *testing.T) {
	h, r := newTestHandler(t, Options{}, true)
	rec := postJSON(t, h, `{"reference": "weight", "stratum": "F", "age": 12.5, "value": 8.3}`)
	if rec.Code != http.StatusOK {
		t.Fatalf("status %d: %s", rec.Code, rec.Body)
	}
	res := decode[result](t, rec)
	want := testZ("F", 12.5, 8.3) // exact identity of the hand reference
	if res.Z == nil || !near(*res.Z, want, zTol) {
		t.Fatalf("z = %v, want %v", res.Z, want)
	}
	// centile = 100 Phi(z), Phi from gonum v0.17.0 distuv.
	if !near(*res.Centile, 100*distuv.UnitNormal.CDF(want), 1e-9) {
		t.Errorf("centile %v, want %v", *res.Centile, 100*distuv.UnitNormal.CDF(want))
	}
	direct, err := r.Score("F", 12.5, 8.3)
	if err != nil {
		t.Fatal(err)
	}
	if *res.Z != direct.Z || *res.Centile != direct.Centile {
		t.Errorf("API z %v centile %v, direct Score %v %v", *res.Z, *res.Centile, direct.Z, direct.Centile)
	}
	if res.Age != 12.5 || res.AgeUnit != "months" || res.Unit != "kg" || res.Stratum != "F" || len(res.Flags) != 0 {
		t.Errorf("result %+v", res)
	}
	if ct := rec.Header().Get("Content-Type"); !strings.HasPrefix(ct, "application/json") {
		t.Errorf("Content-Type %q", ct)
	}
}

func TestScoreDates(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	// 2024 is a leap year: 2024-01-02 to 2025-01-02 is 366 days, and a
	// month is 30.4375 days (common practice), so the age is 366/30.4375.
	rec := postJSON(t, h, `{"stratum": "M", "birth": "2024-01-02", "measured": "2025-01-02", "value": 9.1}`)
	if rec.Code != http.StatusOK {
		t.Fatalf("status %d: %s", rec.Code, rec.Body)
	}
	res := decode[result](t, rec)
	age := 366 / 30.4375
	if !near(res.Age, age, 1e-15) {
		t.Errorf("age %v, want %v", res.Age, age)
	}
	if !near(*res.Z, testZ("M", age, 9.1), zTol) {
		t.Errorf("z %v, want %v", *res.Z, testZ("M", age, 9.1))
	}
}

func TestAgeFromDates(t *testing.T) {
	for _, c := range []struct {
		birth, visit, unit string
		want               float64 // exact calendar arithmetic
	}{
		{"2020-02-28", "2020-03-01", "days", 2}, // leap day in between
		{"2021-02-28", "2021-03-01", "days", 1},
		{"2024-01-01", "2024-01-29", "weeks", 4},
		{"2023-01-01", "2024-01-01", "years", 365 / 365.25},
		{"2020-01-01", "2024-01-01", "years", 4}, // 1461 days = 4 Julian years
		{"2024-03-31", "2024-03-31", "months", 0},
	} {
		got, err := ageFromDates("birth", c.birth, "measured", c.visit, c.unit)
		if err != nil || !near(got, c.want, 1e-15) {
			t.Errorf("%s to %s in %s: %v, %v; want %v", c.birth, c.visit, c.unit, got, err, c.want)
		}
	}
	for _, c := range []struct{ birth, visit, unit, field string }{
		{"2024-01-02", "2024-01-01", "months", "measured"},
		{"2024-13-01", "2024-12-01", "months", "birth"},
		{"2024-01-01", "01/02/2024", "months", "measured"},
		{"2024-01-01", "2024-02-01", "furlongs", "birth"},
	} {
		_, err := ageFromDates("birth", c.birth, "measured", c.visit, c.unit)
		ie, ok := err.(*inputError)
		if !ok || ie.Field != c.field {
			t.Errorf("%s to %s in %s: error %v, want one about %s", c.birth, c.visit, c.unit, err, c.field)
		}
	}
}

func TestScoreList(t *testing.T) {
	h, r := newTestHandler(t, Options{}, false)
	body := `[{"stratum": "F", "age": 3, "value": 4.1},
	          {"stratum": "M", "age": 20, "value": 12.2},
	          {"stratum": "F", "age": 30, "value": 12}]`
	rec := postJSON(t, h, body)
	if rec.Code != http.StatusOK {
		t.Fatalf("status %d: %s", rec.Code, rec.Body)
	}
	res := decode[[]result](t, rec)
	if len(res) != 3 {
		t.Fatalf("%d results", len(res))
	}
	for i, c := range []struct {
		s    string
		a, v float64
	}{{"F", 3, 4.1}, {"M", 20, 12.2}} {
		d, _ := r.Score(c.s, c.a, c.v)
		if res[i].Z == nil || *res[i].Z != d.Z {
			t.Errorf("item %d: z %v, direct %v", i, res[i].Z, d.Z)
		}
	}
	// Age 30 is outside the fitted 0..24: a flag, no z.
	if res[2].Z != nil || res[2].Centile != nil || !slices.Contains(res[2].Flags, flagOutside) || res[2].Note == "" {
		t.Errorf("out-of-range item: %+v", res[2])
	}
}

func TestScoreFlags(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	for _, c := range []struct {
		age, value float64
		flags      []string
		z          float64 // NaN for no z
	}{
		// 6 sd above the mean: beyond the 99th grid centile, where the tail
		// rule extends the straight line z = (v-m)/sd, so z = 6 exactly.
		{12, testMean("F", 12) + 6*testSD, []string{"beyond-tail", "implausible"}, 6},
		{12, testMean("F", 12) - 3*testSD, []string{"beyond-tail"}, -3},
		{24.001, 12, []string{flagOutside}, -99},
		{24, testMean("F", 24), nil, 0}, // the upper end of the range is inside
	} {
		body := fmt.Sprintf(`{"stratum":"F","age":%v,"value":%v}`, c.age, c.value)
		rec := postJSON(t, h, body)
		if rec.Code != http.StatusOK {
			t.Fatalf("%s: status %d: %s", body, rec.Code, rec.Body)
		}
		res := decode[result](t, rec)
		if !slices.Equal(res.Flags, c.flags) && !(len(c.flags) == 0 && len(res.Flags) == 0) {
			t.Errorf("%s: flags %v, want %v", body, res.Flags, c.flags)
		}
		switch {
		case c.z == -99 && res.Z != nil:
			t.Errorf("%s: z %v for an age out of range", body, *res.Z)
		case c.z != -99 && (res.Z == nil || !near(*res.Z, c.z, 1e-8)):
			t.Errorf("%s: z %v, want %v", body, res.Z, c.z)
		}
	}
}

func TestScoreBadInput(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, true)
	for _, c := range []struct {
		name, body, field string
	}{
		{"malformed", `{"stratum": "F", "age": 12,, "value": 9}`, "body"},
		{"truncated", `{"stratum": "F", "age": 12`, "body"},
		{"empty", ``, "body"},
		{"not an object", `42`, "body"},
		{"string value", `{"reference":"weight","stratum":"F","age":12,"value":"9.1"}`, "value"},
		{"string age", `{"reference":"weight","stratum":"F","age":"12","value":9.1}`, "age"},
		{"number stratum", `{"reference":"weight","stratum":1,"age":12,"value":9.1}`, "stratum"},
		{"bool birth", `{"reference":"weight","stratum":"F","birth":true,"measured":"2025-01-01","value":9.1}`, "birth"},
		{"missing value", `{"reference":"weight","stratum":"F","age":12}`, "value"},
		{"null value", `{"reference":"weight","stratum":"F","age":12,"value":null}`, "value"},
		{"missing age", `{"reference":"weight","stratum":"F","value":9}`, "age"},
		{"age and dates", `{"reference":"weight","stratum":"F","age":3,"birth":"2024-01-01","measured":"2024-04-01","value":9}`, "age"},
		{"birth only", `{"reference":"weight","stratum":"F","birth":"2024-01-01","value":9}`, "measured"},
		{"measured only", `{"reference":"weight","stratum":"F","measured":"2024-01-01","value":9}`, "birth"},
		{"bad date", `{"reference":"weight","stratum":"F","birth":"2024-02-30","measured":"2024-04-01","value":9}`, "birth"},
		{"visit before birth", `{"reference":"weight","stratum":"F","birth":"2024-05-01","measured":"2024-04-01","value":9}`, "measured"},
		{"unknown stratum", `{"reference":"weight","stratum":"X","age":12,"value":9}`, "stratum"},
		// Impossible measurements are refused, not scored (the reference's
		// measure is weight in kg).
		{"negative age", `{"reference":"weight","stratum":"F","age":-1,"value":5}`, "age"},
		{"zero weight", `{"reference":"weight","stratum":"F","age":12,"value":0}`, "value"},
		{"negative weight", `{"reference":"weight","stratum":"F","age":12,"value":-3}`, "value"},
		{"huge weight", `{"reference":"weight","stratum":"F","age":12,"value":1e308}`, "value"},
		{"no stratum of two", `{"reference":"weight","age":12,"value":9}`, "stratum"},
		{"unknown reference", `{"reference":"height","stratum":"F","age":12,"value":9}`, "reference"},
		{"no reference of two", `{"stratum":"F","age":12,"value":9}`, "reference"},
		{"unknown field", `{"reference":"weight","stratum":"F","age":12,"vale":9}`, "vale"},
		{"trailing data", `{"reference":"weight","stratum":"F","age":12,"value":9} {}`, "body"},
		{"empty list", `[]`, "body"},
		{"bad list item", `[{"reference":"weight","stratum":"F","age":12,"value":9},{"reference":"weight","stratum":"F","age":12,"value":"x"}]`, "[1].value"},
		{"list of numbers", `[1, 2]`, "[0]"},
		{"huge number", `{"reference":"weight","stratum":"F","age":12,"value":1e999}`, "value"},
	} {
		t.Run(c.name, func(t *testing.T) {
			rec := postJSON(t, h, c.body)
			if rec.Code != http.StatusBadRequest {
				t.Fatalf("status %d, want 400: %s", rec.Code, rec.Body)
			}
			e := decode[errorBody](t, rec)
			if e.Field != c.field || e.Error == "" {
				t.Errorf("error %+v, want field %q", e, c.field)
			}
		})
	}
}

func TestMethodsAndRoutes(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	for _, c := range []struct {
		method, path string
		status       int
	}{
		{http.MethodGet, "/api/v1/score", http.StatusMethodNotAllowed},
		{http.MethodPost, "/api/v1/references", http.StatusMethodNotAllowed},
		{http.MethodDelete, "/api/v1/chart.svg", http.StatusMethodNotAllowed},
		{http.MethodGet, "/api/v2/score", http.StatusNotFound},
		{http.MethodGet, "/nothing", http.StatusNotFound},
		{http.MethodGet, "/healthz", http.StatusOK},
		{http.MethodGet, "/assets/style.css", http.StatusOK},
		{http.MethodGet, "/assets/app.js", http.StatusOK},
		{http.MethodGet, "/assets/print.css", http.StatusOK},
	} {
		rec := do(t, h, c.method, c.path, "", nil)
		if rec.Code != c.status {
			t.Errorf("%s %s: status %d, want %d", c.method, c.path, rec.Code, c.status)
		}
		if strings.HasPrefix(c.path, "/api/") && c.status != http.StatusOK {
			if e := decode[errorBody](t, rec); e.Error == "" || e.Field == "" {
				t.Errorf("%s %s: error body %+v", c.method, c.path, e)
			}
		}
	}
	rec := do(t, h, http.MethodGet, "/", "", nil)
	if csp := rec.Header().Get("Content-Security-Policy"); !strings.Contains(csp, "default-src 'none'") {
		t.Errorf("Content-Security-Policy %q", csp)
	}
	if cc := rec.Header().Get("Cache-Control"); cc != "no-store" {
		t.Errorf("Cache-Control %q", cc)
	}
}

func TestOversizedBody(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	// DefaultMaxBody of whitespace and then a valid object: over the limit
	// by the object's length.
	big := append(bytes.Repeat([]byte(" "), DefaultMaxBody), `{"stratum":"F","age":1,"value":4}`...)
	for _, path := range []string{"/api/v1/score", "/api/v1/batch"} {
		rec := do(t, h, http.MethodPost, path, "application/json", bytes.NewReader(big))
		if rec.Code != http.StatusRequestEntityTooLarge {
			t.Errorf("%s: status %d, want 413: %.200s", path, rec.Code, rec.Body)
			continue
		}
		if e := decode[errorBody](t, rec); e.Field != "body" {
			t.Errorf("%s: %+v", path, e)
		}
	}
	form := append([]byte("value="), bytes.Repeat([]byte("1"), DefaultMaxBody)...)
	rec := do(t, h, http.MethodPost, "/", "application/x-www-form-urlencoded", bytes.NewReader(form))
	if rec.Code != http.StatusRequestEntityTooLarge {
		t.Errorf("page form: status %d, want 413", rec.Code)
	}
	// A small limit applies too.
	hs, _ := newTestHandler(t, Options{MaxBody: 64}, false)
	rec = postJSON(t, hs, `[{"stratum":"F","age":1,"value":4},{"stratum":"F","age":1,"value":4},{"stratum":"F","age":1,"value":4}]`)
	if rec.Code != http.StatusRequestEntityTooLarge {
		t.Errorf("MaxBody 64: status %d", rec.Code)
	}
}

func TestReferences(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, true)
	rec := do(t, h, http.MethodGet, "/api/v1/references", "", nil)
	if rec.Code != http.StatusOK {
		t.Fatalf("status %d", rec.Code)
	}
	got := decode[struct{ References []refJSON }](t, rec)
	if len(got.References) != 2 || got.References[0].Name != "weight" || got.References[1].Name != "single" {
		t.Fatalf("%+v", got)
	}
	w := got.References[0]
	if w.Measure != "weight" || w.Unit != "kg" || w.AgeUnit != "months" || w.Caution == "" || len(w.Strata) != 2 {
		t.Errorf("%+v", w)
	}
	if s := w.Strata[1]; s.Name != "M" || s.AgeMin != 0 || s.AgeMax != testAgeMax || s.N != 800 ||
		!slices.Equal(s.Centiles, []float64{3, 10, 25, 50, 75, 90, 97}) {
		t.Errorf("stratum %+v", s)
	}
}

func TestChart(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	rec := do(t, h, http.MethodGet, "/api/v1/chart.svg?reference=weight&stratum=F&age=3&value=4.5&age=9&value=6.6", "", nil)
	if rec.Code != http.StatusOK {
		t.Fatalf("status %d: %s", rec.Code, rec.Body)
	}
	if ct := rec.Header().Get("Content-Type"); ct != "image/svg+xml" {
		t.Errorf("Content-Type %q", ct)
	}
	svg := rec.Body.String()
	if !strings.Contains(svg, "<svg") || !strings.HasSuffix(strings.TrimSpace(svg), "</svg>") {
		t.Errorf("not an SVG document: %.200s", svg)
	}
	// Without points the chart is still drawn.
	if rec := do(t, h, http.MethodGet, "/api/v1/chart.svg?stratum=M", "", nil); rec.Code != http.StatusOK {
		t.Errorf("no points: status %d", rec.Code)
	}
	for _, c := range []struct{ query, field string }{
		{"stratum=F&age=3", "value"},
		{"stratum=F&age=x&value=3", "age"},
		{"stratum=F&age=3&value=", "value"},
		{"stratum=F&age=30&value=3", "age"},
		{"stratum=Q&age=3&value=3", "stratum"},
		{"stratum=F&reference=nope", "reference"},
		{"stratum=F&colour=red", "colour"},
		{"age=3&value=3", "stratum"},
	} {
		rec := do(t, h, http.MethodGet, "/api/v1/chart.svg?"+c.query, "", nil)
		if rec.Code != http.StatusBadRequest {
			t.Errorf("%s: status %d", c.query, rec.Code)
			continue
		}
		if e := decode[errorBody](t, rec); e.Field != c.field {
			t.Errorf("%s: %+v, want field %s", c.query, e, c.field)
		}
	}
}

func TestRecover(t *testing.T) {
	h, _ := newTestHandler(t, Options{}, false)
	var log strings.Builder
	h.log = &log
	h.mux.HandleFunc("/api/v1/boom", func(http.ResponseWriter, *http.Request) { panic("secret 9.1 kg") })
	rec := do(t, h, http.MethodGet, "/api/v1/boom", "", nil)
	if rec.Code != http.StatusInternalServerError {
		t.Fatalf("status %d", rec.Code)
	}
	if strings.Contains(log.String(), "9.1") || !strings.Contains(log.String(), "recovered") {
		t.Errorf("log %q", log.String())
	}
	if rec := postJSON(t, h, `{"stratum":"F","age":1,"value":4}`); rec.Code != http.StatusOK {
		t.Errorf("after a panic: status %d", rec.Code)
	}
}

func TestAudit(t *testing.T) {
	var audit, log bytes.Buffer
	h, _ := newTestHandler(t, Options{Audit: &audit, Log: &log}, false)
	postJSON(t, h, `{"stratum":"F","age":7.25,"value":5.875}`)
	do(t, h, http.MethodGet, "/?stratum=M&age=4.5&value=6.125", "", nil)
	lines := strings.Split(strings.TrimSpace(audit.String()), "\n")
	if len(lines) != 2 {
		t.Fatalf("audit log %q", audit.String())
	}
	var l auditLine
	if err := json.Unmarshal([]byte(lines[0]), &l); err != nil || l.Source != "api" || l.Value != 5.875 || l.Age != 7.25 || l.Time == "" {
		t.Errorf("audit line %q: %+v %v", lines[0], l, err)
	}
	if !strings.Contains(lines[1], `"source":"page"`) || !strings.Contains(lines[1], "6.125") {
		t.Errorf("audit line %q", lines[1])
	}
	if log.Len() != 0 {
		t.Errorf("log %q", log.String())
	}
	// Without an audit writer nothing about the child reaches the log.
	var log2 bytes.Buffer
	h2, _ := newTestHandler(t, Options{Log: &log2}, false)
	postJSON(t, h2, `{"stratum":"F","age":7.25,"value":5.875}`)
	postJSON(t, h2, `{"stratum":"F","age":7.25,"value":"5.875"}`)
	if log2.Len() != 0 {
		t.Errorf("log %q", log2.String())
	}
}

func TestConcurrent(t *testing.T) {
	h, r := newTestHandler(t, Options{}, false)
	const workers, each = 16, 20
	var wg sync.WaitGroup
	errs := make(chan error, workers*each)
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range each {
				age := float64((w*each+i)%240) / 10
				value := testMean("M", age) + float64(i%7-3)*0.2
				var rec interface{ Result() *http.Response }
				switch i % 5 {
				case 0:
					rec = do(t, h, http.MethodGet, fmt.Sprintf("/api/v1/chart.svg?stratum=M&age=%v&value=%v", age, value), "", nil)
				case 1:
					rec = do(t, h, http.MethodGet, fmt.Sprintf("/?stratum=M&age=%v&value=%v", age, value), "", nil)
				default:
					res := postJSON(t, h, fmt.Sprintf(`{"stratum":"M","age":%v,"value":%v}`, age, value))
					rec = res
					if res.Code == http.StatusOK {
						var got result
						d, _ := r.Score("M", age, value)
						if err := json.Unmarshal(res.Body.Bytes(), &got); err != nil || got.Z == nil || *got.Z != d.Z {
							errs <- fmt.Errorf("age %v value %v: %s, direct z %v", age, value, res.Body, d.Z)
						}
					}
				}
				if code := rec.Result().StatusCode; code != http.StatusOK {
					errs <- fmt.Errorf("worker %d request %d: status %d", w, i, code)
				}
			}
		}()
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		t.Error(err)
	}
}
