package intake

import (
	"fmt"
	"math"
	"strings"
)

// Exact conversion factors to the base unit of each dimension (kg, cm). The
// pound and the inch are exact by the international yard and pound agreement
// of 1959; the ounce is 1/16 lb by definition.
var unitBase = map[string]struct {
	dim    string
	factor float64
}{
	"g":  {"mass", 0.001},
	"kg": {"mass", 1},
	"lb": {"mass", 0.45359237},
	"oz": {"mass", 0.45359237 / 16},
	"mm": {"length", 0.1},
	"cm": {"length", 1},
	"m":  {"length", 100},
	"in": {"length", 2.54},
}

// unitFactor returns f such that a value in unit from times f is in unit to.
// Equal units (including both empty) need no conversion, so any unit name
// is accepted there.
func unitFactor(from, to string) (float64, error) {
	if from == "" || from == to {
		return 1, nil
	}
	a, okA := unitBase[from]
	b, okB := unitBase[to]
	switch {
	case !okA:
		return 0, fmt.Errorf("input unit %q cannot be converted (known: g, kg, lb, oz, mm, cm, m, in)", from)
	case !okB:
		return 0, fmt.Errorf("cannot convert %s to %q: the measure unit must be one of g, kg, lb, oz, mm, cm, m, in", from, to)
	case a.dim != b.dim:
		return 0, fmt.Errorf("cannot convert %s (%s) to %s (%s)", from, a.dim, to, b.dim)
	}
	if a.factor == b.factor {
		return 1, nil
	}
	return a.factor / b.factor, nil
}

// plausibleDefault returns the default plausible value range for a measure
// name in the given unit, and false when there is none. The limits are wide
// on purpose: they catch entry errors (a weight in grams in a kilogram
// column, a height of 1700 cm), not unusual children (common practice).
func plausibleDefault(measure, unit string) (Range, bool) {
	name := strings.ToLower(strings.TrimSpace(measure))
	name = strings.NewReplacer("_", " ", "-", " ").Replace(name)
	var lo, hi float64
	base := ""
	switch name {
	case "weight", "body weight", "mass", "body mass":
		lo, hi, base = 0.2, 250, "kg"
	case "length", "height", "stature", "recumbent length", "standing height":
		lo, hi, base = 20, 250, "cm"
	case "head", "head circumference", "hc", "ofc":
		lo, hi, base = 10, 80, "cm"
	case "bmi", "body mass index":
		if unit != "" && unit != "kg/m2" && unit != "kg/m^2" && unit != "kg/m²" {
			return Range{}, false
		}
		return Range{Min: 5, Max: 100}, true
	default:
		return Range{}, false
	}
	f, err := unitFactor(base, unit)
	if err != nil || unit == "" {
		return Range{}, false
	}
	return Range{Min: lo * f, Max: hi * f}, true
}

// Range is a closed interval [Min, Max] of plausible values. The zero Range
// means no limit; use ±Inf for a one-sided limit.
type Range struct {
	Min, Max float64
}

func (r Range) unlimited() bool { return r.Min == 0 && r.Max == 0 }

// Contains reports whether x lies in the range (always true for the zero
// Range and for finite x there).
func (r Range) Contains(x float64) bool {
	if r.unlimited() {
		return !math.IsNaN(x)
	}
	return x >= r.Min && x <= r.Max
}
