package clinic_test

import (
	"bytes"
	"encoding/json"
	"fmt"
	"net/http"
	"net/http/httptest"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"

	"growband/curve"
	"growband/internal/clinic"
)

// exampleReference is a hand-made reference: length in one stratum, normal
// with mean 50 cm and sd 2 cm at every age from 0 to 10 months (linear
// B-splines with equal coefficients are constant), saved and loaded so it is
// ready for concurrent use.
func exampleReference() *curve.Reference {
	r := &curve.Reference{
		Measure: "length", Unit: "cm", AgeUnit: "months", Degree: 1,
		AgeScale: curve.AgeScale{Kind: curve.ScaleIdentity}, Caution: curve.Caution,
	}
	st := curve.Stratum{Name: "girls", N: 500, AgeMin: 0, AgeMax: 10,
		Knots: []float64{0, 0, 10, 10}, Chart: []float64{0.03, 0.5, 0.97}}
	for k := 1; k <= 99; k++ {
		tau := float64(k) / 100
		q := 50 + 2*distuv.UnitNormal.Quantile(tau)
		st.Taus = append(st.Taus, tau)
		st.Coef = append(st.Coef, []float64{q, q})
	}
	r.Strata = []curve.Stratum{st}
	var buf bytes.Buffer
	if err := curve.Save(&buf, r); err != nil {
		panic(err)
	}
	ready, err := curve.Load(&buf, "example")
	if err != nil {
		panic(err)
	}
	return ready
}

func ExampleNewHandler() {
	h := clinic.NewHandler([]*curve.Reference{exampleReference()}, []string{"length"}, clinic.Options{})
	srv := httptest.NewServer(h)
	defer srv.Close()

	for _, body := range []string{
		`{"stratum": "girls", "age": 4, "value": 53}`,
		`{"stratum": "girls", "birth": "2025-01-01", "measured": "2025-03-01", "value": 47}`,
		`{"stratum": "boys", "age": 4, "value": 53}`,
	} {
		resp, err := http.Post(srv.URL+"/api/v1/score", "application/json", strings.NewReader(body))
		if err != nil {
			fmt.Println(err)
			return
		}
		var ans struct {
			Age, Value   float64
			Z, Centile   *float64
			Error, Field string
		}
		err = json.NewDecoder(resp.Body).Decode(&ans)
		resp.Body.Close()
		switch {
		case err != nil:
			fmt.Println(err)
		case resp.StatusCode != http.StatusOK:
			fmt.Printf("%d %s: %s\n", resp.StatusCode, ans.Field, ans.Error)
		default:
			fmt.Printf("%d age %.3f months, %g cm: z %.2f, centile %.1f\n", resp.StatusCode, ans.Age, ans.Value, *ans.Z, *ans.Centile)
		}
	}
	// Output:
	// 200 age 4.000 months, 53 cm: z 1.50, centile 93.3
	// 200 age 1.938 months, 47 cm: z -1.50, centile 6.7
	// 400 stratum: unknown stratum "boys"; this reference has: girls
}
