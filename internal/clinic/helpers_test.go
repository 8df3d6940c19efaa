package clinic

import (
	"bytes"
	"encoding/json"
	"io"
	"math"
	"net/http"
	"net/http/httptest"
	"net/url"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/stat/distuv"

	"growband/curve"
)

// The test reference is built by hand: in stratum s the measurement at age a
// (months, 0 to 24) is normal with mean testMean(s, a) and sd testSD. Linear
// B-splines on the knots {0, 0, 24, 24} with coefficients (m(0) + sd z_k,
// m(24) + sd z_k) draw exactly these straight-line quantiles, and since Score
// interpolates linearly in z between grid quantiles that lie on the line
// z = (v - m)/sd, the z-score of v is exactly (v - m(a))/sd inside the grid
// (exact identity).
const (
	testAgeMax = 24
	testSD     = 0.8
)

// testMean is the mean of the hand-made reference: 3.4 + 0.35 a for "F",
// 3.6 + 0.4 a for "M" (invented, for tests only).
func testMean(stratum string, age float64) float64 {
	if stratum == "M" {
		return 3.6 + 0.4*age
	}
	return 3.4 + 0.35*age
}

func testZ(stratum string, age, value float64) float64 {
	return (value - testMean(stratum, age)) / testSD
}

// handReference builds the reference and passes it through Save and Load so
// it is ready for concurrent scoring, as the server gets it.
func handReference(t testing.TB, strata ...string) *curve.Reference {
	t.Helper()
	if len(strata) == 0 {
		strata = []string{"F", "M"}
	}
	r := &curve.Reference{
		Measure: "weight", Unit: "kg", AgeUnit: "months",
		AgeScale: curve.AgeScale{Kind: curve.ScaleIdentity}, Degree: 1,
		Created: time.Date(2026, 1, 2, 0, 0, 0, 0, time.UTC),
		Caution: curve.Caution,
	}
	for _, s := range strata {
		st := curve.Stratum{Name: s, N: 800, AgeMin: 0, AgeMax: testAgeMax,
			Knots:      []float64{0, 0, testAgeMax, testAgeMax},
			Chart:      []float64{0.03, 0.1, 0.25, 0.5, 0.75, 0.9, 0.97},
			Smoothness: curve.Smoothness{Criterion: curve.CriterionFixed, Order: 2}}
		for k := 1; k <= 99; k++ {
			tau := float64(k) / 100
			z := distuv.UnitNormal.Quantile(tau)
			st.Taus = append(st.Taus, tau)
			st.Coef = append(st.Coef, []float64{testMean(s, 0) + testSD*z, testMean(s, testAgeMax) + testSD*z})
		}
		r.Strata = append(r.Strata, st)
	}
	var buf bytes.Buffer
	if err := curve.Save(&buf, r); err != nil {
		t.Fatal(err)
	}
	got, err := curve.Load(&buf, "hand")
	if err != nil {
		t.Fatal(err)
	}
	return got
}

// newTestHandler serves the hand reference as "weight" and, with two, a
// one-stratum copy as "single".
func newTestHandler(t testing.TB, opt Options, two bool) (*handler, *curve.Reference) {
	t.Helper()
	r := handReference(t)
	refs, names := []*curve.Reference{r}, []string{"weight"}
	if two {
		refs, names = append(refs, handReference(t, "F")), append(names, "single")
	}
	return NewHandler(refs, names, opt).(*handler), r
}

func do(t testing.TB, h http.Handler, method, target, ctype string, body io.Reader) *httptest.ResponseRecorder {
	t.Helper()
	req := httptest.NewRequest(method, target, body)
	req.Host = testHost // httptest's example.com would be refused
	if ctype != "" {
		req.Header.Set("Content-Type", ctype)
	}
	rec := httptest.NewRecorder()
	h.ServeHTTP(rec, req)
	return rec
}

// testHost is the Host of the test requests: the default address.
const testHost = DefaultAddr

func postJSON(t testing.TB, h http.Handler, body string) *httptest.ResponseRecorder {
	t.Helper()
	return do(t, h, http.MethodPost, "/api/v1/score", "application/json", strings.NewReader(body))
}

func decode[T any](t testing.TB, rec *httptest.ResponseRecorder) T {
	t.Helper()
	var v T
	if err := json.Unmarshal(rec.Body.Bytes(), &v); err != nil {
		t.Fatalf("answer is not the expected JSON: %v\n%s", err, rec.Body.String())
	}
	return v
}

func postForm(t testing.TB, h http.Handler, form url.Values) *httptest.ResponseRecorder {
	t.Helper()
	return do(t, h, http.MethodPost, "/", "application/x-www-form-urlencoded", strings.NewReader(form.Encode()))
}

// near compares with an absolute-or-relative tolerance.
func near(a, b, tol float64) bool {
	return math.Abs(a-b) <= tol*math.Max(1, math.Max(math.Abs(a), math.Abs(b)))
}

// zTol allows for the rounding of the normal quantiles stored in the
// reference and of the interpolation (about 1e-15 relative each).
const zTol = 1e-9
