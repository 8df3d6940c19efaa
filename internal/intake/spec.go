package intake

import (
	"fmt"
	"strings"

	"growband/internal/ageunit"
)

// Decimal is the decimal separator of numbers in a CSV file.
type Decimal int

const (
	// DecimalAuto reads a decimal comma only when the delimiter is ';' or a
	// tab, some number cell looks like 12,5 and none looks like 12.5.
	DecimalAuto Decimal = iota
	DecimalPoint
	DecimalComma
)

// DefaultMissing lists the cell texts read as a missing value when
// Spec.Missing is nil. An empty cell is always missing.
var DefaultMissing = []string{"", "NA", "NaN", ".", "-"}

// DefaultDateFormat is the date layout used when Spec.DateFormat is "".
const DefaultDateFormat = "2006-01-02"

// dateLayouts maps the accepted date formats, in Go reference-date notation
// and in letter notation, to lenient parse layouts (one- or two-digit day and
// month where there are separators).
var dateLayouts = map[string]string{
	"2006-01-02": "2006-1-2", "YYYY-MM-DD": "2006-1-2",
	"2006/01/02": "2006/1/2", "YYYY/MM/DD": "2006/1/2",
	"02/01/2006": "2/1/2006", "DD/MM/YYYY": "2/1/2006",
	"01/02/2006": "1/2/2006", "MM/DD/YYYY": "1/2/2006",
	"02.01.2006": "2.1.2006", "DD.MM.YYYY": "2.1.2006",
	"02-01-2006": "2-1-2006", "DD-MM-YYYY": "2-1-2006",
	"20060102": "20060102", "YYYYMMDD": "20060102",
}

// DateFormats returns the accepted values of Spec.DateFormat, for help text.
func DateFormats() []string {
	return []string{"2006-01-02", "2006/01/02", "02/01/2006", "01/02/2006", "02.01.2006", "02-01-2006", "20060102",
		"YYYY-MM-DD", "YYYY/MM/DD", "DD/MM/YYYY", "MM/DD/YYYY", "DD.MM.YYYY", "DD-MM-YYYY", "YYYYMMDD"}
}

// Spec says how to read a measurement CSV file. Column fields name header
// columns; "" means the column is absent. Age comes either from the Age
// column or from the Birth and Measured date columns. The zero value of
// every other field means its documented default, so a Spec from command-line
// flags needs only the columns.
type Spec struct {
	Age      string // age in AgeUnit
	Birth    string // date of birth
	Measured string // date of measurement
	Value    string // the measurement (required)
	Stratum  string // optional group, for example sex
	Subject  string // optional subject id
	Weight   string // optional sampling weight (positive)

	AgeUnit   string // days, weeks, months or years; "" = months
	Unit      string // unit the values are wanted in ("" = as in the file)
	InputUnit string // unit of the values in the file; "" = Unit

	ValueRange Range // plausible values in Unit; zero = no limit
	AgeRange   Range // plausible ages in AgeUnit; zero = no limit

	Missing    []string // missing-value markers; nil = DefaultMissing
	Decimal    Decimal
	Delimiter  rune   // ',', ';' or '\t'; 0 = detect from the header line
	DateFormat string // one of DateFormats(); "" = DefaultDateFormat
	Sheet      string // worksheet of an Excel workbook; "" = the first

	// Measure names what the values are (weight, height, ...); it picks
	// the impossible values that are refused whatever the ranges ("" = the
	// value column's name).
	Measure string

	// StratumCodes maps codes in the stratum column to labels (for example
	// "1" and "M" to "male"). Codes are matched after trimming spaces,
	// exactly first and then ignoring case; a code not in a non-nil map is
	// excluded as ReasonStratum. nil keeps the labels as written.
	StratumCodes map[string]string

	// KeepDuplicates turns off the duplicate check, as wanted when scoring
	// new measurements where every row is echoed back.
	KeepDuplicates bool

	// Look, when not nil, finds the columns left "" above in the header by
	// these names (see Names). nil uses the columns only as named.
	Look *Names
}

// Names lists, per column, the header names under which Read looks for a
// column the Spec leaves "". Names are compared after trimming spaces and
// ignoring case, in order, the first present winning. The age is read from
// an Age column when one is found, else from Birth and Measured date
// columns; Value must be found; Stratum is optional.
type Names struct {
	Age, Birth, Measured, Value, Stratum []string
}

// UsualNames are the names of a measurement file's columns in common use.
// A file to be scored typically also names its value column after the
// measure (weight, height), which the caller adds to Value.
var UsualNames = Names{
	Age:      []string{"age"},
	Birth:    []string{"birth", "birth_date", "date_of_birth", "dob"},
	Measured: []string{"measured", "visit", "visit_date", "date_measured"},
	Value:    []string{"value"},
	Stratum:  []string{"stratum", "sex", "group"},
}

// prepared is a Spec checked and with defaults filled in.
type prepared struct {
	Spec
	factor  float64
	layout  string
	days    float64 // days per age unit
	missing map[string]bool
	folded  map[string]string // stratum codes by lower-case code; "" label = ambiguous
}

func (s *Spec) prepare(file string) (*prepared, error) {
	bad := func(format string, args ...any) error {
		return errAt(file, 0, ErrBadSpec, format, args...)
	}
	p := &prepared{Spec: *s}
	if s.Look == nil {
		if err := p.checkColumns(); err != nil {
			return nil, bad("%s", err)
		}
	}
	if p.AgeUnit == "" {
		p.AgeUnit = "months"
	}
	u, err := ageunit.Parse(p.AgeUnit)
	if err != nil {
		return nil, bad("%v", err)
	}
	p.AgeUnit, p.days = u.String(), u.Days()
	if p.InputUnit == "" {
		p.InputUnit = p.Unit
	}
	f, err := unitFactor(p.InputUnit, p.Unit)
	if err != nil {
		return nil, bad("%v", err)
	}
	p.factor = f
	if p.DateFormat == "" {
		p.DateFormat = DefaultDateFormat
	}
	layout, ok := dateLayouts[p.DateFormat]
	if !ok {
		return nil, bad("date format %q is not one of %s", p.DateFormat, strings.Join(DateFormats(), ", "))
	}
	p.layout = layout
	switch p.Delimiter {
	case 0, ',', ';', '\t':
	default:
		return nil, bad("delimiter %q is not one of comma, semicolon, tab", p.Delimiter)
	}
	if p.Decimal < DecimalAuto || p.Decimal > DecimalComma {
		return nil, bad("unknown decimal setting %d", p.Decimal)
	}
	for _, r := range []struct {
		name string
		r    Range
	}{{"value", p.ValueRange}, {"age", p.AgeRange}} {
		if !r.r.unlimited() && !(r.r.Min <= r.r.Max) {
			return nil, bad("plausible %s range [%g, %g] is empty", r.name, r.r.Min, r.r.Max)
		}
	}
	markers := p.Missing
	if markers == nil {
		markers = DefaultMissing
	}
	p.missing = map[string]bool{"": true}
	for _, m := range markers {
		p.missing[strings.TrimSpace(m)] = true
	}
	if p.StratumCodes != nil {
		// Codes that differ only in case but map to different labels are
		// matched exactly only.
		p.folded = map[string]string{}
		for code, l := range p.StratumCodes {
			k := strings.ToLower(strings.TrimSpace(code))
			if old, seen := p.folded[k]; seen && old != l {
				l = ""
			}
			p.folded[k] = l
		}
	}
	return p, nil
}

// checkColumns checks the combination of named columns.
func (p *prepared) checkColumns() error {
	switch {
	case p.Value == "":
		return fmt.Errorf("no value column given")
	case p.Age != "" && (p.Birth != "" || p.Measured != ""):
		return fmt.Errorf("give either an age column or birth and measured date columns, not both")
	case p.Age == "" && (p.Birth == "" || p.Measured == ""):
		return fmt.Errorf("give an age column, or both a birth and a measured date column")
	}
	seen := map[string]string{}
	for _, c := range [][2]string{{"age", p.Age}, {"birth", p.Birth}, {"measured", p.Measured},
		{"value", p.Value}, {"stratum", p.Stratum}, {"subject", p.Subject}, {"weight", p.Weight}} {
		if c[1] == "" {
			continue
		}
		if other, dup := seen[c[1]]; dup {
			return fmt.Errorf("column %q is used for both %s and %s", c[1], other, c[0])
		}
		seen[c[1]] = c[0]
	}
	return nil
}

// look fills the columns left "" from the header by p.Look's names and
// checks the result; the error names what is missing and lists the header.
func (p *prepared) look(header []string) error {
	l := p.Look
	find := func(names []string) string {
		for _, n := range names {
			for _, h := range header {
				if strings.EqualFold(strings.TrimSpace(h), n) {
					return strings.TrimSpace(h)
				}
			}
		}
		return ""
	}
	have := make([]string, len(header))
	for i, h := range header {
		have[i] = strings.TrimSpace(h)
	}
	list := func(names []string) string { return strings.Join(names, " or ") }
	if p.Value == "" {
		if p.Value = find(l.Value); p.Value == "" {
			return fmt.Errorf("no value column: name it %s (have: %s)", list(l.Value), strings.Join(have, ", "))
		}
	}
	if p.Age == "" && p.Birth == "" && p.Measured == "" {
		if p.Age = find(l.Age); p.Age == "" {
			p.Birth, p.Measured = find(l.Birth), find(l.Measured)
		}
	}
	if p.Age == "" && (p.Birth == "" || p.Measured == "") {
		return fmt.Errorf("no age: need a column named %s, or date columns named %s and %s (have: %s)",
			list(l.Age), list(l.Birth), list(l.Measured), strings.Join(have, ", "))
	}
	if p.Stratum == "" {
		p.Stratum = find(l.Stratum)
	}
	return p.checkColumns()
}

// label maps a stratum cell to its label; ok is false for an unknown code.
func (p *prepared) label(cell string) (string, bool) {
	if p.StratumCodes == nil {
		return cell, true
	}
	if l, ok := p.StratumCodes[cell]; ok {
		return l, true
	}
	if l := p.folded[strings.ToLower(cell)]; l != "" {
		return l, true
	}
	return "", false
}

// ParseCodes reads a stratum code map written "code=label,code=label", as
// command-line flags give it.
func ParseCodes(s string) (map[string]string, error) {
	m := map[string]string{}
	for _, pair := range strings.Split(s, ",") {
		code, label, ok := strings.Cut(pair, "=")
		code, label = strings.TrimSpace(code), strings.TrimSpace(label)
		if !ok || code == "" || label == "" {
			return nil, fmt.Errorf("want code=label, got %q", pair)
		}
		m[code] = label
	}
	return m, nil
}
