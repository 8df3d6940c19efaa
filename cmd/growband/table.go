package main

import (
	"encoding/json"
	"io"
	"math"
	"strconv"

	"growband/curve"
)

const tableUsage = `usage: growband table --ref FILE [--ages 0:60:0.5 | --ages 1,2,3 | --ages-file F]
                      [--centiles 3,50,97] [--stratum S] [--format csv|json] [--velocity]

Writes the reference's centiles to standard output: one row per stratum and
age, one column per centile named by its number (for example "3", "50",
"97"), then the L, M and S of the Box-Cox normal summary at that age (empty
where the centiles cannot be summarised that way), then, when the reference
was built with bootstrap replicates, the pointwise 95% band of each centile
as columns "3_lo95", "3_hi95", ... (empty for a centile without a band).

With --velocity each column holds the slope of one centile curve, named for
example "slope of centile-3 curve (kg/month)": how fast the 3rd centile
itself rises with age. This is not a velocity centile: a child growing
along the 3rd centile has that velocity, but the 3rd centile of children's
velocities is a different and usually much wider quantity, which needs
repeated measurements of the same children and is not computed here.

Ages default to a tidy grid over each stratum's fitted age range; ages
outside a stratum's fitted range are left out (a reference is never
extrapolated) with a message on standard error. Centiles default to the
reference's chart centiles; any centile inside the fitted tau grid can be
asked for.
`

func runTable(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("table")
	refPath := fs.String("ref", "", "reference file written by build (required)")
	agesFlag := fs.String("ages", "", "ages as FROM:TO:STEP or a comma-separated list (default: a grid over the fitted range)")
	agesFile := fs.String("ages-file", "", "file of ages, one or more per line (instead of --ages)")
	centFlag := fs.String("centiles", "", "comma-separated centiles in percent (default: the chart centiles)")
	stratum := fs.String("stratum", "", "only this stratum (default: all)")
	format := fs.String("format", "csv", "output format: csv or json")
	velocity := fs.Bool("velocity", false, "give the slope of each centile curve (change per age unit), not velocity centiles")
	pos, err := parseFlags(fs, tableUsage, args, stdout)
	if err != nil {
		return err
	}
	if len(pos) > 0 {
		return usagef("table", "table: unexpected argument %q", pos[0])
	}
	if *format != "csv" && *format != "json" {
		return usagef("table", "table: --format must be csv or json, not %q", *format)
	}
	if *agesFlag != "" && *agesFile != "" {
		return usagef("table", "table: give --ages or --ages-file, not both")
	}
	var ages, centiles []float64
	switch {
	case *agesFlag != "":
		if ages, err = parseAges(*agesFlag); err != nil {
			return usagef("table", "table: %v", err)
		}
	case *agesFile != "":
		if ages, err = readAgesFile(*agesFile); err != nil {
			return err
		}
	}
	if *centFlag != "" {
		if centiles, err = parseNumbers(*centFlag, "--centiles"); err != nil {
			return usagef("table", "table: %v", err)
		}
		for _, c := range centiles {
			if !(c > 0 && c < 100) {
				return usagef("table", "table: --centiles: %g is not strictly between 0 and 100", c)
			}
		}
	}
	ref, err := loadReference("table", *refPath)
	if err != nil {
		return err
	}
	strata, err := selectStrata(ref, *stratum)
	if err != nil {
		return err
	}
	prog := progress{w: stderr}
	rows, cols, err := centileRows(ref, strata, ages, centiles, *velocity, func(st *curve.Stratum, out []float64) {
		prog.printf("%s: %d ages outside the fitted range %s–%s left out (first: %s)",
			stratumLabel(st.Name), len(out), shortAge(st.AgeMin), shortAge(st.AgeMax), ageText(out[0]))
	})
	if err != nil {
		return err
	}
	roundTable(ref, rows, cols, *velocity)
	if *format == "json" {
		return writeRowsJSON(stdout, ref, cols, rows, *velocity)
	}
	return writeRowsCSV(stdout, ref, cols, rows, *velocity)
}

// jsonNumber is a float that encodes NaN as null.
type jsonNumber float64

func (x jsonNumber) MarshalJSON() ([]byte, error) {
	if math.IsNaN(float64(x)) || math.IsInf(float64(x), 0) {
		return []byte("null"), nil
	}
	return []byte(num(float64(x))), nil
}

// writeRowsJSON writes table rows as one JSON document.
func writeRowsJSON(w io.Writer, r *curve.Reference, centiles []float64, rows []tableRow, velocity bool) error {
	type row struct {
		Stratum string       `json:"stratum"`
		Age     jsonNumber   `json:"age"`
		Values  []jsonNumber `json:"values"`
		Lo      []jsonNumber `json:"lo95,omitempty"`
		Hi      []jsonNumber `json:"hi95,omitempty"`
		L       *jsonNumber  `json:"L,omitempty"`
		M       *jsonNumber  `json:"M,omitempty"`
		S       *jsonNumber  `json:"S,omitempty"`
	}
	kind := "centiles"
	unit := r.Unit
	if velocity {
		kind = "centile-curve-slopes"
		unit = slopeUnit(r)
	}
	doc := struct {
		Kind     string    `json:"kind"`
		Measure  string    `json:"measure"`
		Unit     string    `json:"unit"`
		AgeUnit  string    `json:"age_unit"`
		Centiles []float64 `json:"centiles"`
		Rows     []row     `json:"rows"`
		Caution  string    `json:"caution"`
	}{kind, r.Measure, unit, r.AgeUnit, centiles, nil, curve.Caution}
	for _, tr := range rows {
		o := row{Stratum: tr.stratum, Age: jsonNumber(tidy(tr.age))}
		for _, v := range tr.values {
			o.Values = append(o.Values, jsonNumber(v))
		}
		for j := range tr.lo {
			o.Lo, o.Hi = append(o.Lo, jsonNumber(tr.lo[j])), append(o.Hi, jsonNumber(tr.hi[j]))
		}
		if tr.lms != nil {
			l, m, s := jsonNumber(tr.lms.L), jsonNumber(tr.lms.M), jsonNumber(tr.lms.S)
			o.L, o.M, o.S = &l, &m, &s
		}
		doc.Rows = append(doc.Rows, o)
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(doc)
}

// singular turns "months" into "month" for velocity units.
func singular(unit string) string {
	if n := len(unit); n > 1 && unit[n-1] == 's' {
		return unit[:n-1]
	}
	return unit
}

// Table digits.
const (
	// tableDigits is the least number of significant digits of a table
	// value: finer than any growth measurement is taken.
	tableDigits = 6
	// centileRoundTrip is how far, in centile points, the centile of a
	// printed centile value may lie from the centile itself: half a unit in
	// the third decimal, so a value printed for centile 0.135 or 99.865
	// scores back to it when the centile is written with three decimals.
	centileRoundTrip = 5e-4
	// maxTableDigits is the most digits tried: a double holds 15 reliably.
	maxTableDigits = 15
)

// roundTable rounds the values of a centile table to tableDigits
// significant digits, or as many more (up to maxTableDigits) as it takes for the
// printed value of each centile to score back to that centile within
// centileRoundTrip; L, M, S and velocities to tableDigits.
func roundTable(r *curve.Reference, rows []tableRow, centiles []float64, velocity bool) {
	for _, tr := range rows {
		for j, v := range tr.values {
			if velocity || math.IsNaN(v) {
				tr.values[j] = roundSig(v, tableDigits)
				continue
			}
			// Where centiles coincide (curves meeting at the edge of the data)
			// no number of digits tells them apart: tableDigits then.
			tr.values[j] = roundSig(v, tableDigits)
			for d := tableDigits; d <= maxTableDigits; d++ {
				w := roundSig(v, d)
				s, err := r.Score(tr.stratum, tr.age, w)
				if err != nil {
					break
				}
				if math.Abs(s.Centile-centiles[j]) <= centileRoundTrip {
					tr.values[j] = w
					break
				}
			}
		}
		for j := range tr.lo {
			tr.lo[j], tr.hi[j] = roundSig(tr.lo[j], tableDigits), roundSig(tr.hi[j], tableDigits)
		}
		if tr.lms != nil {
			tr.lms.L, tr.lms.M, tr.lms.S = roundSig(tr.lms.L, tableDigits), roundSig(tr.lms.M, tableDigits), roundSig(tr.lms.S, tableDigits)
		}
	}
}

// roundSig rounds x to d significant digits.
func roundSig(x float64, d int) float64 {
	if x == 0 || math.IsNaN(x) || math.IsInf(x, 0) {
		return x
	}
	y, _ := strconv.ParseFloat(strconv.FormatFloat(x, 'g', d, 64), 64)
	return y
}
