package render

import (
	"bytes"
	"errors"
	"strings"
	"testing"
)

func TestShiftChart(t *testing.T) {
	s := &Shift{Measure: "weight", Unit: "kg", A: "north", B: "south", Method: "sandwich",
		Centiles: []float64{3, 50, 97}, Diff: []float64{-0.4, -0.1, 0.05}, Lo: []float64{-0.6, -0.2, -0.1}, Hi: []float64{-0.2, 0, 0.2}}
	f, err := ShiftChart(s)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := Write(&buf, f, "svg", 400, 300); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(buf.String(), "north minus south") {
		t.Error("legend missing from the SVG")
	}
	s.Centiles = []float64{3, 3, 97}
	if _, err := ShiftChart(s); !errors.Is(err, ErrOrder) {
		t.Errorf("repeated centile: got %v, want ErrOrder", err)
	}
}

func TestConditionalChart(t *testing.T) {
	c := &Conditional{Measure: "weight", Unit: "kg", AgeUnit: "months", PrevAge: 12, Gap: 3,
		Curves: []Curve{{Centile: 5, Ages: []float64{8, 9, 10}, Values: []float64{8.5, 9.3, 10.1}},
			{Centile: 50, Ages: []float64{8, 9, 10}, Values: []float64{9.1, 9.9, 10.8}},
			{Centile: 95, Ages: []float64{8, 9, 10}, Values: []float64{9.8, 10.6, 11.5}}}}
	f, err := ConditionalChart(c)
	if err != nil {
		t.Fatal(err)
	}
	if got := f.Panels[0][0].X.Label.Text; got != "Weight at 12 months (kg)" {
		t.Errorf("x label %q", got)
	}
	c.Curves[1].Values = c.Curves[1].Values[:2]
	if _, err := ConditionalChart(c); !errors.Is(err, ErrLength) {
		t.Errorf("short curve: got %v, want ErrLength", err)
	}
}
