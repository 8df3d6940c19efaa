package render_test

import (
	"bytes"
	"fmt"
	"strings"

	"growband/render"
)

func ExampleCentileChart() {
	// Invented curves, for illustration only.
	ages := []float64{0, 6, 12, 18, 24}
	c := &render.Centiles{
		Measure: "length", Unit: "cm", AgeUnit: "months", Stratum: "boys",
		Curves: []render.Curve{
			{Centile: 10, Ages: ages, Values: []float64{47, 64, 72, 78, 83}},
			{Centile: 50, Ages: ages, Values: []float64{50, 67, 75, 81, 87}},
			{Centile: 90, Ages: ages, Values: []float64{53, 70, 78, 85, 91}},
		},
		Caution: "Describes its sample; not a diagnosis.",
	}
	fig, err := render.CentileChart(c)
	if err != nil {
		fmt.Println(err)
		return
	}
	var svg bytes.Buffer
	if err := render.Write(&svg, fig, "svg", 0, 0); err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(fig.Title)
	fmt.Println(strings.Contains(svg.String(), ">Length (cm)</text>"))
	// Output:
	// Length by age — boys
	// true
}

func ExampleWrite_badFormat() {
	fig, _ := render.ZDistChart(&render.ZDist{Z: []float64{-0.5, 0.1, 0.7}})
	err := render.Write(new(bytes.Buffer), fig, "gif", 0, 0)
	fmt.Println(err)
	// Output:
	// "gif": render: unknown output format (want svg, png, pdf)
}

func ExampleCentileChart_error() {
	_, err := render.CentileChart(&render.Centiles{Curves: []render.Curve{
		{Centile: 50, Ages: []float64{0, 1, 2}, Values: []float64{3, 4}},
	}})
	fmt.Println(err)
	// Output:
	// centile 50: ages 3, values 2: render: lengths differ
}
