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

// unitSpellings are other spellings of the known units, for the hint of
// CheckUnit.
var unitSpellings = map[string]string{
	"kgs": "kg", "kilo": "kg", "kilos": "kg", "kilogram": "kg", "kilograms": "kg",
	"gram": "g", "grams": "g", "gr": "g", "lbs": "lb", "pound": "lb", "pounds": "lb",
	"ounce": "oz", "ounces": "oz", "cms": "cm", "centimetre": "cm", "centimetres": "cm",
	"centimeter": "cm", "centimeters": "cm", "millimetre": "mm", "millimetres": "mm",
	"millimeter": "mm", "millimeters": "mm", "metre": "m", "metres": "m", "meter": "m",
	"meters": "m", "inch": "in", "inches": "in", "\"": "in",
}

// CheckUnit refuses a unit name growband does not know: one of g, kg, lb,
// oz, mm, cm, m, in, or kg/m2 (BMI), or "" for none. A misspelling of a
// known unit is named in the message.
func CheckUnit(u string) error {
	if _, ok := unitBase[u]; ok || u == "" || isBMIUnit(u) {
		return nil
	}
	known := "g, kg, lb, oz, mm, cm, m, in, kg/m2"
	if k, ok := unitSpellings[strings.ToLower(strings.TrimSpace(u))]; ok {
		return fmt.Errorf("unknown unit %q: did you mean %q? (known: %s)", u, k, known)
	}
	if _, ok := unitBase[strings.ToLower(strings.TrimSpace(u))]; ok {
		return fmt.Errorf("unknown unit %q: did you mean %q? (known: %s)", u, strings.ToLower(strings.TrimSpace(u)), known)
	}
	return fmt.Errorf("unknown unit %q (known: %s)", u, known)
}

func isBMIUnit(u string) bool {
	return u == "kg/m2" || u == "kg/m^2" || u == "kg/m²"
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
	var lo, hi float64
	base := ""
	switch measureKind(measure) {
	case "mass":
		lo, hi, base = 0.2, 250, "kg"
	case "length":
		lo, hi, base = 20, 250, "cm"
	case "head":
		lo, hi, base = 10, 80, "cm"
	case "bmi":
		if unit != "" && !isBMIUnit(unit) {
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

// measureKind sorts a measure name: "mass", "length", "head", "bmi", or ""
// for a measure growband knows nothing about.
func measureKind(measure string) string {
	name := strings.ToLower(strings.TrimSpace(measure))
	name = strings.NewReplacer("_", " ", "-", " ").Replace(name)
	switch name {
	case "weight", "body weight", "mass", "body mass":
		return "mass"
	case "length", "height", "stature", "recumbent length", "standing height":
		return "length"
	case "head", "head circumference", "hc", "ofc":
		return "head"
	case "bmi", "body mass index":
		return "bmi"
	}
	return ""
}

// Impossible values are refused whatever the plausible ranges say: a body
// measurement of zero or below, or one above impossibleFactor times the top
// of its default plausible range (the ranges are wide already, so ten times
// them is beyond any human, common practice); for a measure without a
// default range, a magnitude above maxOtherValue (from memory: no body
// measurement of a child in any unit in use, grams and ounces included,
// reaches a million).
const (
	impossibleFactor = 10
	maxOtherValue    = 1e9
)

// limits are the impossible values of a measure: at or below zero when
// positive, above max in size.
type limits struct {
	measure, unit string
	positive      bool
	max           float64
}

func limitsOf(measure, unit string) limits {
	l := limits{measure: measure, unit: unit, positive: measureKind(measure) != "", max: maxOtherValue}
	if r, ok := plausibleDefault(measure, unit); ok {
		l.max = impossibleFactor * r.Max
	}
	return l
}

// check returns why value cannot be a measurement, or "" when it can.
func (l *limits) check(value float64) string {
	switch {
	case l.positive && value <= 0:
		return fmt.Sprintf("%s %s %s is impossible: it must be above 0", l.measure, fmtNum(value), l.unit)
	case math.Abs(value) > l.max:
		return fmt.Sprintf("%s %s %s is impossible: its size is above %g %s", l.measure, fmtNum(value), l.unit, l.max, l.unit)
	}
	return ""
}

// CheckMeasurement refuses an impossible measurement: a negative age, or a
// value impossible for measure in unit (see the reading rules in PLAN.md).
// The error says which and why; field names "age" or "value".
func CheckMeasurement(measure, unit string, age, value float64) (field string, err error) {
	if age < 0 || math.IsNaN(age) {
		return "age", fmt.Errorf("age %s is impossible: it must be 0 or above", fmtNum(age))
	}
	if math.IsNaN(value) || math.IsInf(value, 0) {
		return "value", fmt.Errorf("value %s is not a number", fmtNum(value))
	}
	l := limitsOf(nameOr(measure), unit)
	if why := l.check(value); why != "" {
		return "value", fmt.Errorf("%s", why)
	}
	return "", nil
}

func nameOr(measure string) string {
	if strings.TrimSpace(measure) == "" {
		return "value"
	}
	return measure
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
