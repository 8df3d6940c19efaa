package clinic

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"testing"

	"growband/curve"
)

// condHandler serves the hand reference with a conditional model fitted to
// visits simulated from it: z of a child follows z_t = rho z_s + sqrt(1 -
// rho^2) e, rho = exp(-gap/12) (a stated model, gaps 1 to 6 months).
func condHandler(t *testing.T) (*handler, *curve.Reference) {
	t.Helper()
	r := handReference(t)
	rng := rand.New(rand.NewPCG(2, 3))
	d := &curve.Data{}
	for c := range 1500 {
		a, z := 12*rng.Float64(), rng.NormFloat64()
		s := []string{"F", "M"}[c%2]
		for v := range 3 {
			if v > 0 {
				g := 1 + 5*rng.Float64()
				rho := math.Exp(-g / 12)
				a += g
				z = rho*z + math.Sqrt(1-rho*rho)*rng.NormFloat64()
			}
			d.Age = append(d.Age, a)
			d.Value = append(d.Value, testMean(s, a)+testSD*z)
			d.Stratum = append(d.Stratum, s)
			d.Subject = append(d.Subject, strconv.Itoa(c))
		}
	}
	if err := curve.FitConditional(r, d, &curve.ConditionalSettings{GapMin: 1, GapMax: 6, AgeKnots: 1, ZKnots: 1}); err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := curve.Save(&buf, r); err != nil {
		t.Fatal(err)
	}
	r, err := curve.Load(&buf, "cond")
	if err != nil {
		t.Fatal(err)
	}
	return NewHandler([]*curve.Reference{r}, []string{"weight"}, Options{}).(*handler), r
}

// TestAPIConditional: the visits of a child named in a list request get
// cond_z and cond_centile against the previous visit (the values of
// curve.ScoreChange), a first visit gets a note instead, and an item without
// a child has neither.
func TestAPIConditional(t *testing.T) {
	h, r := condHandler(t)
	ages := []float64{14, 10, 17}
	vals := []float64{testMean("F", 14) - 0.5, testMean("F", 10), testMean("F", 17) - 1.2}
	var items []string
	for i := range ages {
		items = append(items, fmt.Sprintf(`{"stratum":"F","age":%g,"value":%g,"child":"k1"}`, ages[i], vals[i]))
	}
	items = append(items, `{"stratum":"F","age":14,"value":8}`)
	rec := postJSON(t, h, "["+strings.Join(items, ",")+"]")
	if rec.Code != 200 {
		t.Fatalf("status %d: %s", rec.Code, rec.Body)
	}
	out := decode[[]map[string]any](t, rec)
	for _, c := range []struct{ row, prev int }{{0, 1}, {2, 0}} {
		want, err := r.ScoreChange("F", ages[c.prev], vals[c.prev], ages[c.row], vals[c.row])
		if err != nil {
			t.Fatal(err)
		}
		got, ok := out[c.row]["cond_z"].(float64)
		if !ok || !near(got, want.Z, 1e-12) {
			t.Errorf("item %d: cond_z %v, want %v", c.row, out[c.row]["cond_z"], want.Z)
		}
		if cen, ok := out[c.row]["cond_centile"].(float64); !ok || !near(cen, want.Centile, 1e-9) {
			t.Errorf("item %d: cond_centile %v, want %v", c.row, out[c.row]["cond_centile"], want.Centile)
		}
	}
	if out[1]["cond_z"] != nil || !strings.Contains(fmt.Sprint(out[1]["cond_note"]), "no earlier visit") {
		t.Errorf("first visit: %v", out[1])
	}
	if _, has := out[3]["cond_z"]; has {
		t.Errorf("item without a child has a conditional score: %v", out[3])
	}
}

// TestPageGrowthCentiles: with a conditional model, the page's trajectory
// gives each visit after the first the conditional centile of its change
// (the values of curve.ScoreChanges for one child), the first a dash; a
// reference without the model shows no such column.
func TestPageGrowthCentiles(t *testing.T) {
	h, r := condHandler(t)
	ages := []float64{10, 14, 17}
	vals := []float64{testMean("F", 10), testMean("F", 14) - 0.5, testMean("F", 17) - 1.2}
	form := url.Values{"ref": {"weight"}, "stratum": {"F"}}
	d := &curve.Data{}
	for i := range ages {
		form.Add("age", strconv.FormatFloat(ages[i], 'g', -1, 64))
		form.Add("value", strconv.FormatFloat(vals[i], 'g', -1, 64))
		d.Age, d.Value = append(d.Age, ages[i]), append(d.Value, vals[i])
		d.Stratum, d.Subject = append(d.Stratum, "F"), append(d.Subject, "k")
	}
	rec := postForm(t, h, form)
	page := rec.Body.String()
	if rec.Code != 200 || !strings.Contains(page, "Growth centile") {
		t.Fatalf("status %d, no growth column:\n%s", rec.Code, page)
	}
	want := r.ScoreChanges(d)
	if want[0].Err == nil || want[1].Err != nil || want[2].Err != nil {
		t.Fatalf("ScoreChanges: %+v", want)
	}
	for _, s := range want[1:] {
		cell := `data-label="Growth centile">` + fmtCentile(s.Centile) + `<`
		if !strings.Contains(page, cell) {
			t.Errorf("page lacks %q", cell)
		}
	}
	if !strings.Contains(page, `data-label="Growth centile" title="no earlier visit of this child in the request">—<`) {
		t.Errorf("first visit's growth cell is not a dash with its reason")
	}
	plain := newTestHandlerNoCond(t)
	if rec := postForm(t, plain, form); strings.Contains(rec.Body.String(), "Growth centile") {
		t.Errorf("a reference without a conditional model shows a growth column")
	}
}

// newTestHandlerNoCond serves the hand reference alone, without a
// conditional model.
func newTestHandlerNoCond(t *testing.T) http.Handler {
	t.Helper()
	return NewHandler([]*curve.Reference{handReference(t)}, []string{"weight"}, Options{})
}
