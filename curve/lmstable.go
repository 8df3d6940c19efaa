package curve

import (
	"bytes"
	"crypto/sha256"
	"encoding/csv"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"

	"growband/internal/ageunit"
)

// Values of Reference.Tails.
const (
	// TailsPlain scores with the Box–Cox formula at every z.
	TailsPlain = "plain"
	// TailsRestricted continues the distribution linearly beyond ±3 SD
	// with the spacing of the 2 to 3 SD band (WHO Multicentre Growth
	// Reference Study Group 2006), as used for weight-type measures whose
	// Box–Cox upper tail is too long.
	TailsRestricted = "restricted"
)

// restrictedZ is the |z| beyond which the restricted tail rule applies
// (WHO Multicentre Growth Reference Study Group 2006).
const restrictedZ = 3

// lmsSeriesX is the |L S z| below which the L-derivative of the Box–Cox
// quantile is taken from its Taylor series: the closed form subtracts two
// nearly equal numbers there. Three terms leave a relative error of about
// x^3, below 1e-9.
const lmsSeriesX = 1e-3

// lmsDefaultCentiles are the chart centiles of a table, in percent: the usual
// chart set (common practice), the same as Fit's default.
var lmsDefaultCentiles = []float64{3, 10, 25, 50, 75, 90, 97}

// sameAgeUnit reports whether two age unit names mean the same unit.
func sameAgeUnit(a, b string) bool {
	ua, errA := ageunit.Parse(a)
	ub, errB := ageunit.Parse(b)
	if errA != nil || errB != nil {
		return strings.EqualFold(a, b)
	}
	return ua == ub
}

// LMSTableOptions tune LoadLMSTable. The zero value, and nil, mean: age unit,
// measure, unit and tails from the file's comment lines, the stratum column
// named "stratum" or "sex" if there is one, and the chart centiles 3, 10,
// 25, 50, 75, 90, 97.
type LMSTableOptions struct {
	// AgeUnit is the unit of the age column. Required when the file has no
	// "# age_unit = ..." line; when both are given they must agree.
	AgeUnit string
	// Measure and Unit, when set, replace the file's "# measure" and
	// "# unit" lines.
	Measure, Unit string
	// Tails, when set, replaces the file's "# tails" line: TailsPlain or
	// TailsRestricted.
	Tails string
	// StratumColumn names the stratum column; "" means a column called
	// "stratum" or "sex" when present, else a single unnamed stratum.
	StratumColumn string
	// Centiles is the chart set in percent, each strictly between 0 and 100,
	// increasing.
	Centiles []float64
}

// LoadLMSTable reads a published LMS table and returns it as a Reference
// that every look-up (Score, Quantile, Curve, Table, Velocity, LMS) and
// Check accept in place of a fitted one, and that Save writes as an ordinary
// reference file.
//
// The table is comma-, semicolon- or tab-separated text (the most frequent
// of the three on the header line). Lines starting with '#' are comments;
// those of the form "# key = value" (or "key: value") set age_unit,
// measure, unit and tails, others are ignored. The first other line is the
// header; its columns age, L, M and S (any letter case) are required, the
// stratum column is optional, other columns are ignored. Within a stratum
// the ages must be strictly increasing, L finite, M and S positive, and
// each stratum needs at least two rows.
//
// Between tabulated ages L, M and S are interpolated linearly in age
// (common practice for tables at daily, weekly or monthly steps); at a
// tabulated age they are the tabulated values exactly. Ages outside the
// table are refused with ErrAgeRange, as for fitted references. A
// measurement y > 0 scores
//
//	z = ((y/M)^L - 1)/(L S)   (L != 0),   z = log(y/M)/S   (L = 0)
//
// and centile 100 Phi(z); the quantile of level tau is LMSValue(L, M, S,
// Phi^-1(tau)). With Tails = TailsRestricted, beyond ±3 SD the scale is
// continued linearly with the spacing of the outer SD band, SDk the
// measurement at z = k:
//
//	z > 3:  z = 3 + (y - SD3)/(SD3 - SD2)
//	z < -3: z = -3 + (y - SD-3)/(SD-2 - SD-3)
//
// (and quantiles beyond ±3 SD follow the inverse rule); such scores carry
// FlagBeyondTail. The stratum's Taus and Chart are the chart centiles, so
// Curve and Check work per chart centile; Quantile, Velocity and Table take
// any tau in (0,1). Values y <= 0 are refused with ErrValue. name labels the
// source in errors. Errors read "file:line:" or, for one cell,
// "file:line:column:" with the column counted in cells from 1, and wrap ErrMalformed (unreadable text, a missing column,
// a cell that is not a number, a wrong number of cells) or ErrInvalid (bad
// values, ages not increasing, conflicting options).
//
// References:
//   - Cole T J (1990). The LMS method for constructing normalized growth
//     standards. European Journal of Clinical Nutrition 44, 45–60.
//   - WHO Multicentre Growth Reference Study Group (2006). WHO Child Growth
//     Standards: length/height-for-age, weight-for-age, weight-for-length,
//     weight-for-height and body mass index-for-age. Methods and
//     development. Geneva: World Health Organization.
func LoadLMSTable(rd io.Reader, name string, opt *LMSTableOptions) (*Reference, error) {
	if opt == nil {
		opt = &LMSTableOptions{}
	}
	data, err := io.ReadAll(io.LimitReader(rd, maxFileBytes+1))
	if err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	if len(data) > maxFileBytes {
		return nil, fmt.Errorf("%s: %w: larger than %d bytes", name, ErrMalformed, maxFileBytes)
	}
	data = bytes.TrimPrefix(data, []byte("\xef\xbb\xbf"))
	malformed := func(line int, format string, a ...any) error {
		return fmt.Errorf("%s:%d: %w: %s", name, line, ErrMalformed, fmt.Sprintf(format, a...))
	}
	invalid := func(line int, format string, a ...any) error {
		return fmt.Errorf("%s:%d: %w: %s", name, line, ErrInvalid, fmt.Sprintf(format, a...))
	}
	// cell is an error at line:column, the column counted in cells from 1.
	cell := func(sentinel error, line, j int, head []string, format string, a ...any) error {
		return fmt.Errorf("%s:%d:%d: %w: column %q: %s", name, line, j+1, sentinel, head[j], fmt.Sprintf(format, a...))
	}

	keys, headLine, header := tableHead(data)
	if header == "" {
		return nil, fmt.Errorf("%s: %w: no header line naming the columns age, L, M, S", name, ErrMalformed)
	}
	set := func(key, given string) (string, error) {
		v, ok := keys[key]
		switch {
		case given == "":
			return v.value, nil
		case ok && key == "age_unit" && !sameAgeUnit(v.value, given):
			return "", invalid(v.line, "the file says age_unit = %q, the caller %q", v.value, given)
		}
		return given, nil
	}
	ref := &Reference{Format: FormatName, Version: FormatVersion, Caution: Caution, AgeScale: AgeScale{Kind: "identity"}}
	if ref.AgeUnit, err = set("age_unit", opt.AgeUnit); err != nil {
		return nil, err
	}
	if ref.AgeUnit == "" {
		return nil, fmt.Errorf("%s: %w: no age unit: add a line \"# age_unit = months\" (or days, weeks, years) before the header", name, ErrInvalid)
	}
	// One spelling for every command: "month", "mo" and "Months" are
	// "months" (ageunit.Parse).
	if ref.AgeUnit, err = ageunit.Canonical(ref.AgeUnit); err != nil {
		return nil, invalid(keys["age_unit"].line, "%v", err)
	}
	ref.Measure, _ = set("measure", opt.Measure)
	ref.Unit, _ = set("unit", opt.Unit)
	ref.Tails, _ = set("tails", opt.Tails)
	ref.Tails = strings.ToLower(ref.Tails)
	if ref.Tails != "" && ref.Tails != TailsPlain && ref.Tails != TailsRestricted {
		return nil, fmt.Errorf("%s:%d: %w: tails %q, want %q or %q", name, keys["tails"].line, ErrInvalid, ref.Tails, TailsPlain, TailsRestricted)
	}
	chart, err := chartTaus(opt.Centiles)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}

	cr := csv.NewReader(bytes.NewReader(data))
	cr.Comma = sniffDelimiter(header)
	cr.Comment = '#'
	cr.FieldsPerRecord = -1
	cr.TrimLeadingSpace = true
	head, err := cr.Read()
	if err != nil {
		return nil, malformed(headLine, "header: %v", csvReason(err))
	}
	col := map[string]int{}
	for j, h := range head {
		h = strings.ToLower(strings.TrimSpace(h))
		if _, dup := col[h]; !dup {
			col[h] = j
		}
	}
	need := []string{"age", "l", "m", "s"}
	idx := make([]int, 4)
	for k, c := range need {
		j, ok := col[c]
		if !ok {
			return nil, malformed(headLine, "no column %q in the header (have: %s)", strings.ToUpper(c[:1])+c[1:], strings.Join(head, ", "))
		}
		idx[k] = j
	}
	sc := -1
	if opt.StratumColumn != "" {
		j, ok := col[strings.ToLower(opt.StratumColumn)]
		if !ok {
			return nil, malformed(headLine, "no stratum column %q in the header (have: %s)", opt.StratumColumn, strings.Join(head, ", "))
		}
		sc = j
	} else if j, ok := col["stratum"]; ok {
		sc = j
	} else if j, ok := col["sex"]; ok {
		sc = j
	}

	type acc struct {
		lms      LMSCurve
		lastLine int
	}
	groups := map[string]*acc{}
	hash := sha256.New()
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			line := 0
			var pe *csv.ParseError
			if errors.As(err, &pe) {
				line = pe.Line
			}
			return nil, malformed(line, "%v", csvReason(err))
		}
		line, _ := cr.FieldPos(0)
		if len(rec) == 1 && strings.TrimSpace(rec[0]) == "" {
			continue
		}
		if len(rec) != len(head) {
			return nil, malformed(line, "%d cells, the header has %d", len(rec), len(head))
		}
		var v [4]float64
		for k, j := range idx {
			txt := strings.TrimSpace(rec[j])
			x, perr := strconv.ParseFloat(txt, 64)
			if perr != nil {
				return nil, cell(ErrMalformed, line, j, head, "%q is not a number", txt)
			}
			if !isFin(x) {
				return nil, cell(ErrInvalid, line, j, head, "%q is not finite", txt)
			}
			v[k] = x
		}
		if !(v[2] > 0) {
			return nil, cell(ErrInvalid, line, idx[2], head, "M = %g is not positive", v[2])
		}
		if !(v[3] > 0) {
			return nil, cell(ErrInvalid, line, idx[3], head, "S = %g is not positive", v[3])
		}
		sname := ""
		if sc >= 0 {
			sname = strings.TrimSpace(rec[sc])
		}
		g := groups[sname]
		if g == nil {
			g = &acc{}
			groups[sname] = g
		}
		if n := len(g.lms.Ages); n > 0 && !(v[0] > g.lms.Ages[n-1]) {
			return nil, cell(ErrInvalid, line, idx[0], head, "age %g does not increase on %g (line %d)%s", v[0], g.lms.Ages[n-1], g.lastLine, strataNote(sname))
		}
		g.lms.Ages = append(g.lms.Ages, v[0])
		g.lms.L = append(g.lms.L, v[1])
		g.lms.M = append(g.lms.M, v[2])
		g.lms.S = append(g.lms.S, v[3])
		g.lastLine = line
		fmt.Fprintf(hash, "%s\x00%v\x00%v\x00%v\x00%v\n", sname, v[0], v[1], v[2], v[3])
	}
	if len(groups) == 0 {
		return nil, fmt.Errorf("%s: %w: no data rows after the header", name, ErrMalformed)
	}
	names := make([]string, 0, len(groups))
	for s := range groups {
		names = append(names, s)
	}
	sort.Strings(names)
	for _, s := range names {
		g := groups[s]
		if len(g.lms.Ages) < 2 {
			return nil, invalid(g.lastLine, "a single row%s: a table needs at least two ages", strataNote(s))
		}
		lms := g.lms
		ref.Strata = append(ref.Strata, Stratum{
			Name: s, AgeMin: lms.Ages[0], AgeMax: lms.Ages[len(lms.Ages)-1],
			Taus: slices.Clone(chart), Chart: slices.Clone(chart), LMS: &lms,
		})
	}
	ref.InputHash = hex.EncodeToString(hash.Sum(nil))
	if err := ref.ready(); err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	return ref, nil
}

func strataNote(s string) string {
	if s == "" {
		return ""
	}
	return fmt.Sprintf(" in stratum %q", s)
}

// csvReason is the message of a CSV error without its position, which the
// caller writes in the file:line form.
func csvReason(err error) string {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return pe.Err.Error()
	}
	return err.Error()
}

// tableKey is a "# key = value" comment line.
type tableKey struct {
	value string
	line  int
}

// tableHead returns the keys of the comment lines before the header, the
// header's 1-based line number and the header line itself ("" when there is
// none).
func tableHead(data []byte) (map[string]tableKey, int, string) {
	keys := map[string]tableKey{}
	for i, raw := range strings.Split(string(data), "\n") {
		line := strings.TrimSpace(raw)
		if line == "" {
			continue
		}
		if !strings.HasPrefix(line, "#") {
			return keys, i + 1, line
		}
		body := strings.TrimSpace(strings.TrimLeft(line, "#"))
		k, v, ok := strings.Cut(body, "=")
		if !ok {
			k, v, ok = strings.Cut(body, ":")
		}
		if !ok {
			continue
		}
		k = strings.ReplaceAll(strings.ToLower(strings.TrimSpace(k)), " ", "_")
		switch k {
		case "age_unit", "measure", "unit", "tails":
			keys[k] = tableKey{strings.TrimSpace(v), i + 1}
		}
	}
	return keys, 0, ""
}

// sniffDelimiter picks the most frequent of comma, semicolon and tab on the
// header line; comma when there is none.
func sniffDelimiter(header string) rune {
	best, n := ',', 0
	for _, c := range []rune{',', ';', '\t'} {
		if k := strings.Count(header, string(c)); k > n {
			best, n = c, k
		}
	}
	return best
}

// looksLikeLMSTable reports whether data's header line names the columns
// age, L, M and S.
func looksLikeLMSTable(data []byte) bool {
	_, _, header := tableHead(bytes.TrimPrefix(data, []byte("\xef\xbb\xbf")))
	if header == "" {
		return false
	}
	have := map[string]bool{}
	for _, f := range strings.Split(header, string(sniffDelimiter(header))) {
		have[strings.ToLower(strings.Trim(strings.TrimSpace(f), `"`))] = true
	}
	return have["age"] && have["l"] && have["m"] && have["s"]
}

// chartTaus turns chart centiles in percent into taus, checked.
func chartTaus(centiles []float64) ([]float64, error) {
	if centiles == nil {
		centiles = lmsDefaultCentiles
	}
	if len(centiles) == 0 {
		return nil, fmt.Errorf("%w: no chart centiles", ErrInvalid)
	}
	taus := make([]float64, len(centiles))
	for i, c := range centiles {
		if !(c > 0 && c < 100) || (i > 0 && !(c > centiles[i-1])) {
			return nil, fmt.Errorf("%w: chart centiles must increase strictly within (0, 100) (centile %d is %g)", ErrInvalid, i, c)
		}
		taus[i] = c / 100
	}
	return taus, nil
}

// checkLMSStratum validates a stratum that carries an LMS table.
func checkLMSStratum(st *Stratum) error {
	bad := func(format string, a ...any) error {
		return fmt.Errorf("%w: stratum %q: %s", ErrInvalid, st.Name, fmt.Sprintf(format, a...))
	}
	t := st.LMS
	n := len(t.Ages)
	if n < 2 || len(t.L) != n || len(t.M) != n || len(t.S) != n {
		return bad("LMS table with %d ages, %d L, %d M, %d S; need at least 2 ages and one triple each", n, len(t.L), len(t.M), len(t.S))
	}
	for i, a := range t.Ages {
		if !isFin(a) || (i > 0 && !(a > t.Ages[i-1])) {
			return bad("LMS table age %d (%g) is not finite or does not increase", i, a)
		}
		if !isFin(t.L[i]) || !(t.M[i] > 0) || !isFin(t.M[i]) || !(t.S[i] > 0) || !isFin(t.S[i]) {
			return bad("LMS table at age %g: L %g, M %g, S %g (L finite, M and S positive)", a, t.L[i], t.M[i], t.S[i])
		}
	}
	if st.AgeMin != t.Ages[0] || st.AgeMax != t.Ages[n-1] {
		return bad("age range [%g, %g] is not the table's [%g, %g]", st.AgeMin, st.AgeMax, t.Ages[0], t.Ages[n-1])
	}
	if len(st.Knots) != 0 || len(st.Coef) != 0 {
		return bad("an LMS table stratum has no knots or coefficients")
	}
	if len(st.Taus) == 0 || !slices.Equal(st.Taus, st.Chart) {
		return bad("taus must equal the chart centiles, and be given")
	}
	for k, tau := range st.Taus {
		if !(tau > 0 && tau < 1) || (k > 0 && !(tau > st.Taus[k-1])) {
			return bad("tau %d (%g) is not in (0,1) or does not increase", k, tau)
		}
	}
	if st.N < 0 || len(st.Flags) != 0 || len(st.Bands) != 0 {
		return bad("an LMS table stratum has no row count, flags or bands")
	}
	return nil
}

// lmsAt returns the interpolated triple at age and the derivatives of L, M
// and S in age (of the span to the right of a tabulated age, of the last
// span at the last age). Ages outside the table wrap ErrAgeRange.
func lmsAt(st *Stratum, age float64) (l, m, s, dl, dm, ds float64, err error) {
	t := st.LMS
	if !(age >= st.AgeMin && age <= st.AgeMax) { // also catches NaN
		return 0, 0, 0, 0, 0, 0, fmt.Errorf("%w: age %g not in [%g, %g] of stratum %q", ErrAgeRange, age, st.AgeMin, st.AgeMax, st.Name)
	}
	n := len(t.Ages)
	k := sort.SearchFloat64s(t.Ages, age) // first Ages[k] >= age
	i := min(max(k-1, 0), n-2)            // span [i, i+1] holding age
	if k < n && t.Ages[k] == age && k < n-1 {
		i = k // right span at a tabulated age
	}
	h := t.Ages[i+1] - t.Ages[i]
	dl, dm, ds = (t.L[i+1]-t.L[i])/h, (t.M[i+1]-t.M[i])/h, (t.S[i+1]-t.S[i])/h
	if k < n && t.Ages[k] == age {
		return t.L[k], t.M[k], t.S[k], dl, dm, ds, nil
	}
	u := (age - t.Ages[i]) / h
	l = t.L[i] + u*(t.L[i+1]-t.L[i])
	m = t.M[i] + u*(t.M[i+1]-t.M[i])
	s = t.S[i] + u*(t.S[i+1]-t.S[i])
	return l, m, s, dl, dm, ds, nil
}

// restricted reports whether r scores LMS strata with the restricted tails.
func (r *Reference) restricted() bool { return r.Tails == TailsRestricted }

// lmsZ is the z-score of y > 0 under (l, m, s) with the reference's tail
// rule; beyond reports that the restricted rule was used.
func lmsZ(restricted bool, l, m, s, y float64) (z float64, beyond bool) {
	z = LMSZ(l, m, s, y)
	switch {
	case restricted && z > restrictedZ:
		sd3, sd2 := LMSValue(l, m, s, restrictedZ), LMSValue(l, m, s, restrictedZ-1)
		return restrictedZ + (y-sd3)/(sd3-sd2), true
	case restricted && z < -restrictedZ:
		sd3, sd2 := LMSValue(l, m, s, -restrictedZ), LMSValue(l, m, s, 1-restrictedZ)
		return -restrictedZ + (y-sd3)/(sd2-sd3), true
	}
	return z, false
}

// lmsValueAt is the measurement at z-score z with the reference's tail rule,
// the inverse of lmsZ; NaN where the Box–Cox distribution has none.
func lmsValueAt(restricted bool, l, m, s, z float64) float64 {
	switch {
	case restricted && z > restrictedZ:
		sd3, sd2 := LMSValue(l, m, s, restrictedZ), LMSValue(l, m, s, restrictedZ-1)
		return sd3 + (z-restrictedZ)*(sd3-sd2)
	case restricted && z < -restrictedZ:
		sd3, sd2 := LMSValue(l, m, s, -restrictedZ), LMSValue(l, m, s, 1-restrictedZ)
		return sd3 + (z+restrictedZ)*(sd2-sd3)
	}
	return LMSValue(l, m, s, z)
}

// lmsSlope is d/dage of LMSValue(L(age), M(age), S(age), z) given the
// triple and its age derivatives:
//
//	dy = y [dM/M + dS z/(1+x) + dL (x/(1+x) - log1p(x))/L^2],  x = L S z,
//
// the last factor by its series -(S z)^2 (1/2 - 2x/3 + 3x^2/4) near L = 0.
func lmsSlope(l, m, s, dl, dm, ds, z float64) float64 {
	y := LMSValue(l, m, s, z)
	x := l * s * z
	var g float64
	if math.Abs(x) < lmsSeriesX {
		sz := s * z
		g = -sz * sz * (0.5 - 2*x/3 + 0.75*x*x)
	} else {
		g = (x/(1+x) - math.Log1p(x)) / (l * l)
	}
	return y * (dm/m + ds*z/(1+x) + dl*g)
}

// lmsSlopeAt is lmsSlope with the reference's tail rule.
func lmsSlopeAt(restricted bool, l, m, s, dl, dm, ds, z float64) float64 {
	sl := func(z float64) float64 { return lmsSlope(l, m, s, dl, dm, ds, z) }
	switch {
	case restricted && z > restrictedZ:
		u := z - restrictedZ
		return (1+u)*sl(restrictedZ) - u*sl(restrictedZ-1)
	case restricted && z < -restrictedZ:
		u := z + restrictedZ
		return (1-u)*sl(-restrictedZ) + u*sl(1-restrictedZ)
	}
	return sl(z)
}

// scoreLMS is score for an LMS-table stratum; it leaves the quantiles of
// the stratum's taus in ws.q, as score does, for Check.
func (ws *scoreSpace) scoreLMS(r *Reference, st *Stratum, age, value float64) (Score, error) {
	l, m, s, _, _, _, err := lmsAt(st, age)
	if err != nil {
		return Score{}, err
	}
	if !(value > 0) {
		return Score{}, fmt.Errorf("%w: %g is not positive, which an LMS table needs", ErrValue, value)
	}
	ws.q = sized(ws.q, len(st.Taus))
	for k, tau := range st.Taus {
		ws.q[k] = lmsValueAt(r.restricted(), l, m, s, normZ(tau))
	}
	z, beyond := lmsZ(r.restricted(), l, m, s, value)
	var flags ScoreFlags
	if beyond {
		flags |= FlagBeyondTail
	}
	if math.Abs(z) > ImplausibleZ {
		flags |= FlagImplausible
	}
	return Score{Centile: 100 * normP(z), Z: z, Flags: flags}, nil
}

// lmsCurveAt writes the quantiles of st.Taus at age into q.
func (r *Reference) lmsCurveAt(q []float64, st *Stratum, age float64) error {
	l, m, s, _, _, _, err := lmsAt(st, age)
	if err != nil {
		return err
	}
	for k, tau := range st.Taus {
		q[k] = lmsValueAt(r.restricted(), l, m, s, normZ(tau))
	}
	return nil
}

// lmsQuantile is quantile (order 0) or velocity (order 1) for an LMS-table
// stratum: any tau in (0,1) is accepted.
func (r *Reference) lmsQuantile(st *Stratum, age, tau float64, order int) (float64, error) {
	if !(tau > 0 && tau < 1) {
		return 0, fmt.Errorf("%w: tau %g not in (0,1)", ErrTauRange, tau)
	}
	l, m, s, dl, dm, ds, err := lmsAt(st, age)
	if err != nil {
		return 0, err
	}
	z := normZ(tau)
	v := lmsValueAt(r.restricted(), l, m, s, z)
	if math.IsNaN(v) {
		return 0, fmt.Errorf("%w: tau %g has no quantile under L %g, S %g at age %g", ErrTauRange, tau, l, s, age)
	}
	if order == 0 {
		return v, nil
	}
	return lmsSlopeAt(r.restricted(), l, m, s, dl, dm, ds, z), nil
}

// lmsTable is Table for an LMS-table stratum.
func (r *Reference) lmsTable(st *Stratum, ages, taus []float64) (*CentileTable, error) {
	tab := &CentileTable{
		Stratum: st.Name, Measure: r.Measure, Unit: r.Unit, AgeUnit: r.AgeUnit,
		Ages: slices.Clone(ages), Taus: slices.Clone(taus),
		Values: make([][]float64, len(ages)),
	}
	for i, age := range ages {
		row := make([]float64, len(taus))
		for j, tau := range taus {
			v, err := r.lmsQuantile(st, age, tau, 0)
			if err != nil {
				return nil, err
			}
			row[j] = v
		}
		tab.Values[i] = row
	}
	return tab, nil
}
