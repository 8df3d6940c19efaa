package main

import (
	"flag"
	"fmt"
	"math"
	"os"
	"slices"
	"strconv"
	"strings"
	"unicode"

	"growband/curve"
	"growband/internal/intake"
	"growband/internal/scorefile"
)

// tableRows is about how many ages a default table or chart grid has: one a
// month over 0–60 months, a tidy step elsewhere.
const tableRows = 60

// chartPoints is the number of ages a chart curve is drawn through: enough
// that a cubic spline looks smooth at print size.
const chartPoints = 241

// gridSlack is the relative slack when deciding whether the last age of a
// grid From:To:Step falls on To, so that 0:60:0.1 ends at 60 despite
// rounding in 0.1.
const gridSlack = 1e-9

// loadReference reads a reference file, naming the flag when it is missing.
func loadReference(cmd, path string) (*curve.Reference, error) {
	if path == "" {
		return nil, usagef(cmd, "%s: --ref FILE is required", cmd)
	}
	r, err := curve.LoadFile(path)
	if err != nil {
		if os.IsNotExist(err) {
			return nil, fmt.Errorf("reference file %s does not exist", path)
		}
		return nil, err
	}
	return r, nil
}

// parseNumbers reads a comma-separated list of numbers; what names the
// list in errors.
func parseNumbers(s, what string) ([]float64, error) {
	var out []float64
	for _, f := range strings.Split(s, ",") {
		f = strings.TrimSpace(f)
		if f == "" {
			continue
		}
		x, err := strconv.ParseFloat(f, 64)
		if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
			return nil, fmt.Errorf("%s: %q is not a number", what, f)
		}
		out = append(out, x)
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("%s: no numbers given", what)
	}
	return out, nil
}

// parseAges reads "FROM:TO:STEP" or a comma-separated list of ages.
func parseAges(s string) ([]float64, error) {
	if !strings.Contains(s, ":") {
		return parseNumbers(s, "ages")
	}
	parts := strings.Split(s, ":")
	if len(parts) != 3 {
		return nil, fmt.Errorf("ages: want FROM:TO:STEP, got %q", s)
	}
	var v [3]float64
	for i, p := range parts {
		x, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
		if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
			return nil, fmt.Errorf("ages: %q in %q is not a number", p, s)
		}
		v[i] = x
	}
	if !(v[2] > 0) || v[1] < v[0] {
		return nil, fmt.Errorf("ages: want FROM <= TO and STEP > 0, got %q", s)
	}
	if (v[1]-v[0])/v[2] > 1e6 {
		return nil, fmt.Errorf("ages: %q gives more than a million ages", s)
	}
	return grid(v[0], v[1], v[2]), nil
}

// readAgesFile reads ages from a file: numbers separated by line breaks,
// commas or spaces; lines starting with # are comments.
func readAgesFile(path string) ([]float64, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var out []float64
	for i, line := range strings.Split(string(b), "\n") {
		line = strings.TrimSpace(line)
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		for _, f := range strings.FieldsFunc(line, func(r rune) bool { return r == ',' || r == ';' || unicode.IsSpace(r) }) {
			x, err := strconv.ParseFloat(f, 64)
			if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
				return nil, fmt.Errorf("%s:%d: %q is not an age", path, i+1, f)
			}
			out = append(out, x)
		}
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("%s: no ages in file", path)
	}
	return out, nil
}

// grid returns from, from+step, ... up to to (included when on the grid).
func grid(from, to, step float64) []float64 {
	n := int(math.Floor((to-from)/step*(1+gridSlack) + gridSlack))
	out := make([]float64, 0, n+1)
	for i := 0; i <= n; i++ {
		out = append(out, tidy(from+float64(i)*step))
	}
	return out
}

// tidy rounds x to 12 significant digits so grid ages such as 0.1*3 print
// as 0.3.
func tidy(x float64) float64 {
	y, _ := strconv.ParseFloat(strconv.FormatFloat(x, 'g', 12, 64), 64)
	return y
}

// niceStep returns a step of 1, 2, 2.5 or 5 times a power of ten that
// divides span into about n parts.
func niceStep(span float64, n int) float64 {
	if !(span > 0) {
		return 1
	}
	raw := span / float64(n)
	p := math.Pow(10, math.Floor(math.Log10(raw)))
	for _, m := range []float64{1, 2, 2.5, 5, 10} {
		if m*p >= raw*0.999 {
			return m * p
		}
	}
	return 10 * p
}

// defaultAges is the table grid of a stratum when none is given: tidy ages
// inside the fitted range.
func defaultAges(st *curve.Stratum) []float64 {
	step := niceStep(st.AgeMax-st.AgeMin, tableRows)
	from := math.Ceil(st.AgeMin/step-gridSlack) * step
	to := math.Floor(st.AgeMax/step+gridSlack) * step
	if to < from {
		return []float64{st.AgeMin, st.AgeMax}
	}
	return grid(from, to, step)
}

// inRange splits ages into those inside the stratum's fitted range and
// those outside.
func inRange(st *curve.Stratum, ages []float64) (in, out []float64) {
	for _, a := range ages {
		if a >= st.AgeMin && a <= st.AgeMax {
			in = append(in, a)
		} else {
			out = append(out, a)
		}
	}
	return in, out
}

// linspace returns n ages evenly spread over [lo, hi].
func linspace(lo, hi float64, n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = lo + (hi-lo)*float64(i)/float64(n-1)
	}
	out[n-1] = hi
	return out
}

// selectStrata returns the strata of r named by name, or all when name is
// "".
func selectStrata(r *curve.Reference, name string) ([]*curve.Stratum, error) {
	if name == "" {
		out := make([]*curve.Stratum, len(r.Strata))
		for i := range r.Strata {
			out[i] = &r.Strata[i]
		}
		return out, nil
	}
	st, err := r.Stratum(name)
	if err != nil {
		return nil, err
	}
	return []*curve.Stratum{st}, nil
}

// centileName is the column name of a centile: the number, as in "3",
// "50", "97" or "2.5".
func centileName(p float64) string { return strconv.FormatFloat(p, 'g', -1, 64) }

// num formats a number as the shortest text that reads back as x: table
// values are rounded first (roundTable), to six significant digits or as
// many more as a centile needs.
func num(x float64) string {
	if math.IsNaN(x) {
		return ""
	}
	return strconv.FormatFloat(x, 'g', -1, 64)
}

// ageText formats an age.
func ageText(x float64) string { return strconv.FormatFloat(tidy(x), 'g', -1, 64) }

// fileStem turns a stratum name into a safe file name part: lower case
// letters, digits and '-'; "all" for the unnamed stratum.
func fileStem(name string) string {
	var b strings.Builder
	dash := false
	for _, r := range strings.ToLower(name) {
		if r < 128 && (unicode.IsLetter(r) || unicode.IsDigit(r)) {
			b.WriteRune(r)
			dash = false
		} else if !dash && b.Len() > 0 {
			b.WriteByte('-')
			dash = true
		}
	}
	s := strings.TrimSuffix(b.String(), "-")
	if s == "" {
		return "all"
	}
	return s
}

// fileStems gives each stratum a distinct file name part.
func fileStems(strata []curve.Stratum) []string {
	out := make([]string, len(strata))
	seen := map[string]bool{}
	for i, st := range strata {
		s := fileStem(st.Name)
		for k := 2; seen[s]; k++ {
			s = fmt.Sprintf("%s-%d", fileStem(st.Name), k)
		}
		seen[s] = true
		out[i] = s
	}
	return out
}

// readHelp is the one-line help of each reading option (intake.OptionNames),
// the same for every command that reads a measurement file.
var readHelp = map[string]string{
	"age-column":     `column holding the age, in the reference's age unit (default: a column named "age")`,
	"birth-column":   `column holding the date of birth, with --visit-column, instead of the age (default when there is no age column: one named "birth", "birth_date", "date_of_birth" or "dob")`,
	"visit-column":   `column holding the date of measurement, with --birth-column (default: one named "measured", "visit", "visit_date" or "date_measured")`,
	"value-column":   `column holding the measurement (default: a column named after the reference's measure, or "value")`,
	"stratum-column": `column holding the stratum (default: a column named "stratum", "sex" or "group")`,
	"unit":           "unit of the values in the file, converted to the reference's unit (default: the reference's unit)",
	"delimiter":      "field delimiter of a text file: auto, comma, semicolon or tab (default auto: detected from the header line)",
	"decimal":        "decimal mark of a text file: auto, point or comma (default auto: the mark most number cells use)",
	"missing":        `comma-separated cell texts meaning "missing" (default: NA,NaN,.,- and the empty cell)`,
	"date-format":    "layout of the date columns, e.g. YYYY-MM-DD (default), DD/MM/YYYY, MM/DD/YYYY, DD.MM.YYYY or YYYYMMDD",
	"stratum-codes":  `map stratum codes to the reference's names, e.g. "F=female,M=male,1=male,2=female"`,
	"sheet":          "worksheet of an Excel workbook (default: the first)",
}

// registerReadFlags registers the reading options shared by every command
// that reads a measurement file (intake.OptionNames, documented in
// internal/intake/PLAN.md) on fs, and returns the function that applies
// them to a reading spec.
func registerReadFlags(fs *flag.FlagSet) func(*intake.Spec) error {
	var o intake.Options
	for _, name := range intake.OptionNames {
		fs.Func(name, readHelp[name], func(v string) error { return o.Set(name, v) })
	}
	return o.Apply
}

// columnFlags are the reading flags of score, chart and check, with the
// flags only some of them have.
type columnFlags struct {
	apply       func(*intake.Spec) error
	subject     string
	weight      string
	stratumName string
}

func (c *columnFlags) register(fs *flag.FlagSet, withSubject bool) {
	c.apply = registerReadFlags(fs)
	if withSubject {
		fs.StringVar(&c.subject, "subject-column", "", "column holding the child (subject) id: a chart joins a child's points, compare makes its intervals cluster-robust")
	}
}

// spec turns the flags into a reading spec for a file to be scored against
// r: the rules of scorefile.Spec (columns found by their usual names, every
// row kept; limits are the reference's business) with the reading options.
func (c *columnFlags) spec(cmd string, r *curve.Reference) (*intake.Spec, error) {
	s := scorefile.Spec(r)
	if err := c.apply(s); err != nil {
		return nil, usagef(cmd, "%s: %v", cmd, err)
	}
	s.Subject, s.Weight = c.subject, c.weight
	return s, nil
}

// needStratum refuses a file read without a stratum column against a
// reference with several strata, unless --stratum puts every row in one.
func (c *columnFlags) needStratum(r *curve.Reference, t *intake.Table) error {
	if c.stratumName != "" {
		return nil
	}
	return scorefile.NeedStratum(r, t)
}

// rowStratum is the stratum of a row: the --stratum flag when given (all
// rows are then in it), else the row's own.
func (c *columnFlags) rowStratum(row string) string {
	if c.stratumName != "" {
		return c.stratumName
	}
	return row
}

// chartCentiles returns the stratum's chart centiles in percent.
func chartCentiles(st *curve.Stratum) []float64 {
	out := make([]float64, len(st.Chart))
	for i, t := range st.Chart {
		out[i] = tidy(100 * t)
	}
	return slices.Clip(out)
}

// shortAge formats an age for summaries: four significant digits.
func shortAge(x float64) string { return strconv.FormatFloat(x, 'g', 4, 64) }

// parseBands reads age band edges, the one grammar of --bands in every
// command: FROM:TO:STEP (a shorter last band when STEP does not divide
// TO-FROM) or a comma-separated list of increasing edges.
func parseBands(s string) ([]float64, error) {
	var edges []float64
	if strings.Contains(s, ":") {
		parts := strings.Split(s, ":")
		if len(parts) != 3 {
			return nil, fmt.Errorf("want FROM:TO:STEP, got %q", s)
		}
		var v [3]float64
		for k, p := range parts {
			x, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
			if err != nil || math.IsInf(x, 0) || math.IsNaN(x) {
				return nil, fmt.Errorf("%q is not a number", p)
			}
			v[k] = x
		}
		from, to, step := v[0], v[1], v[2]
		if !(step > 0) || !(to > from) {
			return nil, fmt.Errorf("want FROM:TO:STEP with FROM < TO and STEP > 0, got %q", s)
		}
		n := math.Floor((to-from)/step*(1+gridSlack) + gridSlack)
		if n > maxBands {
			return nil, fmt.Errorf("%q makes more than %d bands", s, maxBands)
		}
		for k := 0; float64(k) <= n; k++ {
			edges = append(edges, tidy(from+float64(k)*step))
		}
		if last := edges[len(edges)-1]; to-last > step*gridSlack {
			edges = append(edges, to) // a shorter last band
		} else {
			edges[len(edges)-1] = to
		}
	} else {
		var err error
		if edges, err = parseNumbers(s, "band edges"); err != nil {
			return nil, err
		}
	}
	if len(edges) < 2 {
		return nil, fmt.Errorf("need at least two edges, got %q", s)
	}
	for i := 1; i < len(edges); i++ {
		if !(edges[i] > edges[i-1]) {
			return nil, fmt.Errorf("edges must increase (%g after %g)", edges[i], edges[i-1])
		}
	}
	return edges, nil
}

// maxBands is the most age bands --bands may make: more would be a typing
// slip (a step of 0.001 for 0:60), not a table anyone reads.
const maxBands = 10000
