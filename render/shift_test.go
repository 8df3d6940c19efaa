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
