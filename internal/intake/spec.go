package intake

import (
	"fmt"
	"strings"
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

	// StratumCodes maps codes in the stratum column to labels (for example
	// "1" and "M" to "male"). Codes are matched after trimming spaces,
	// exactly first and then ignoring case; a code not in a non-nil map is
	// excluded as ReasonStratum. nil keeps the labels as written.
	StratumCodes map[string]string

	// KeepDuplicates turns off the duplicate check, as wanted when scoring
	// new measurements where every row is echoed back.
	KeepDuplicates bool
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
	if s.Value == "" {
		return nil, bad("no value column given")
	}
	switch {
	case s.Age != "" && (s.Birth != "" || s.Measured != ""):
		return nil, bad("give either an age column or birth and measured date columns, not both")
	case s.Age == "" && (s.Birth == "" || s.Measured == ""):
		return nil, bad("give an age column, or both a birth and a measured date column")
	}
	seen := map[string]string{}
	for _, c := range [][2]string{{"age", s.Age}, {"birth", s.Birth}, {"measured", s.Measured},
		{"value", s.Value}, {"stratum", s.Stratum}, {"subject", s.Subject}, {"weight", s.Weight}} {
		if c[1] == "" {
			continue
		}
		if other, dup := seen[c[1]]; dup {
			return nil, bad("column %q is used for both %s and %s", c[1], other, c[0])
		}
		seen[c[1]] = c[0]
	}
	if p.AgeUnit == "" {
		p.AgeUnit = "months"
	}
	if err := checkAgeUnit(p.AgeUnit); err != nil {
		return nil, bad("%v", err)
	}
	p.days = daysPer[p.AgeUnit]
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
