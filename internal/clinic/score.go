package clinic

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"growband/curve"
	"growband/internal/intake"
)

// flagOutside marks a measurement whose age lies outside the fitted age range
// of its stratum: references are never extrapolated in age, so it has no
// z-score.
const flagOutside = "outside-age-range"

// flagDegenerate marks an age at which all fitted centiles coincide.
const flagDegenerate = "degenerate"

// catalog is the set of loaded references with their names.
type catalog struct {
	refs   []*curve.Reference
	names  []string
	files  []string // the file each reference was loaded from, when known
	byName map[string]int
}

func newCatalog(refs []*curve.Reference, names []string) *catalog {
	if len(refs) == 0 {
		panic("clinic: no references")
	}
	if len(refs) != len(names) {
		panic(fmt.Sprintf("clinic: %d references but %d names", len(refs), len(names)))
	}
	c := &catalog{refs: refs, names: names, byName: make(map[string]int, len(refs))}
	for i, n := range names {
		if refs[i] == nil {
			panic("clinic: nil reference " + strconv.Quote(n))
		}
		if _, dup := c.byName[n]; dup {
			panic("clinic: reference name given twice: " + strconv.Quote(n))
		}
		c.byName[n] = i
	}
	return c
}

// pick returns the index of the reference called name; "" selects the only
// one when a single reference is loaded.
func (c *catalog) pick(field, name string) (int, error) {
	name = strings.TrimSpace(name)
	if name == "" {
		if len(c.refs) == 1 {
			return 0, nil
		}
		return 0, fieldErr(field, "choose a reference: %s", strings.Join(c.names, ", "))
	}
	i, ok := c.byName[name]
	if !ok {
		return 0, fieldErr(field, "unknown reference %q; loaded: %s", name, strings.Join(c.names, ", "))
	}
	return i, nil
}

// stratumNames lists the strata of r.
func stratumNames(r *curve.Reference) []string {
	s := make([]string, len(r.Strata))
	for i, st := range r.Strata {
		s[i] = st.Name
		if s[i] == "" {
			s[i] = `""`
		}
	}
	return s
}

// pickStratum resolves a stratum name of r.
func pickStratum(field string, r *curve.Reference, name string) (*curve.Stratum, error) {
	st, err := r.Stratum(strings.TrimSpace(name))
	if err != nil {
		if strings.TrimSpace(name) == "" {
			return nil, fieldErr(field, "choose a stratum: %s", strings.Join(stratumNames(r), ", "))
		}
		return nil, fieldErr(field, "unknown stratum %q; this reference has: %s", name, strings.Join(stratumNames(r), ", "))
	}
	return st, nil
}

// measurement is one measurement to score, after parsing. Age is used when
// HasAge, otherwise it comes from Birth and Measured.
type measurement struct {
	Reference string
	Stratum   string
	HasAge    bool
	Age       float64
	Birth     string
	Measured  string
	Value     float64
	Child     string // child id: visits of one child get conditional scores
}

// fields names the input fields of a measurement in errors; the page and the
// API name them differently (the API prefixes the item's index).
type fields struct {
	Reference, Stratum, Age, Birth, Measured, Value string
}

func apiFields(prefix string) fields {
	return fields{prefix + "reference", prefix + "stratum", prefix + "age", prefix + "birth", prefix + "measured", prefix + "value"}
}

// result is a scored measurement as the API returns it. Z and Centile are
// nil when the measurement could not be placed (see Flags and Note).
type result struct {
	Reference string   `json:"reference"`
	Stratum   string   `json:"stratum"`
	Age       float64  `json:"age"`
	AgeUnit   string   `json:"age_unit"`
	Value     float64  `json:"value"`
	Unit      string   `json:"unit"`
	Z         *float64 `json:"z"`
	Centile   *float64 `json:"centile"`
	Flags     []string `json:"flags"`
	Note      string   `json:"note,omitempty"`
	*change
}

// score scores m. Problems with the input are returned as *inputError
// naming the field in f; a measurement that is valid but cannot be placed
// (an age outside the fitted range) is a result with a flag and a note.
func (c *catalog) score(m *measurement, f fields) (result, error) {
	i, err := c.pick(f.Reference, m.Reference)
	if err != nil {
		return result{}, err
	}
	r := c.refs[i]
	st, err := pickStratum(f.Stratum, r, m.Stratum)
	if err != nil {
		return result{}, err
	}
	age := m.Age
	if !m.HasAge {
		age, err = ageFromDates(f.Birth, m.Birth, f.Measured, m.Measured, r.AgeUnit)
		if err != nil {
			return result{}, err
		}
	}
	if math.IsNaN(age) || math.IsInf(age, 0) {
		return result{}, fieldErr(f.Age, "age must be a finite number")
	}
	if math.IsNaN(m.Value) || math.IsInf(m.Value, 0) {
		return result{}, fieldErr(f.Value, "value must be a finite number")
	}
	if which, err := intake.CheckMeasurement(r.Measure, r.Unit, age, m.Value); err != nil {
		if which == "age" {
			return result{}, fieldErr(f.Age, "%v", err)
		}
		return result{}, fieldErr(f.Value, "%v", err)
	}
	res := result{
		Reference: c.names[i], Stratum: st.Name, Age: age, AgeUnit: r.AgeUnit,
		Value: m.Value, Unit: r.Unit, Flags: []string{},
	}
	s, err := r.Score(st.Name, age, m.Value)
	switch {
	case err == nil:
		z, cen := s.Z, s.Centile
		res.Z, res.Centile = &z, &cen
		if s.Flags != 0 {
			res.Flags = strings.Split(s.Flags.String(), ";")
		}
	case errors.Is(err, curve.ErrAgeRange):
		res.Flags = append(res.Flags, flagOutside)
		res.Note = fmt.Sprintf("age %s is outside the reference's range for this stratum, %s; it is not extrapolated",
			trimNum(age), formatRange(st.AgeMin, st.AgeMax, r.AgeUnit))
	case errors.Is(err, curve.ErrDegenerate):
		res.Flags = append(res.Flags, flagDegenerate)
		res.Note = "all fitted centiles coincide at this age, so the measurement cannot be placed"
	default:
		return result{}, fieldErr(f.Value, "%v", err)
	}
	return res, nil
}

// parseNumber reads a decimal number typed by a user; a decimal comma is
// accepted since many clinics write one.
func parseNumber(field, s string) (float64, error) {
	t := strings.TrimSpace(s)
	if strings.Count(t, ",") == 1 && !strings.Contains(t, ".") {
		t = strings.Replace(t, ",", ".", 1)
	}
	v, err := intake.ParseNumber(t)
	if err != nil {
		return 0, fieldErr(field, "%q is not a number", s)
	}
	return v, nil
}

// trimNum formats x with up to 4 decimals and no trailing zeros.
func trimNum(x float64) string {
	s := strconv.FormatFloat(x, 'f', 4, 64)
	s = strings.TrimRight(s, "0")
	s = strings.TrimSuffix(s, ".")
	if s == "-0" {
		s = "0"
	}
	return s
}
