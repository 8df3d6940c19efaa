package intake

import (
	"fmt"
	"strings"
)

// Options are the reading options shared by every command that reads a
// measurement file (score, check, chart, compare, the clinic's batch upload
// and, as plan keys, build). Each has one name, used as the command-line
// flag (--name), the form or query field of the clinic's batch upload, and
// listed in OptionNames; Set parses a value given by name, so that every
// place reads the same text the same way. The zero value changes nothing.
type Options struct {
	Age, Birth, Measured, Value, Stratum string // column names; "" = found by the usual names

	Unit         string // unit of the values in the file; "" = as wanted
	Delimiter    rune
	Decimal      Decimal
	Missing      []string // nil = DefaultMissing
	DateFormat   string
	StratumCodes map[string]string
	Sheet        string
}

// OptionNames are the names of the reading options, in the order help
// lists them.
var OptionNames = []string{
	"age-column", "birth-column", "visit-column", "value-column", "stratum-column",
	"unit", "delimiter", "decimal", "missing", "date-format", "stratum-codes", "sheet",
}

// Set parses value as the reading option called name. An empty value
// leaves the option at its default.
func (o *Options) Set(name, value string) error {
	v := strings.TrimSpace(value)
	var err error
	switch name {
	case "age-column":
		o.Age = v
	case "birth-column":
		o.Birth = v
	case "visit-column":
		o.Measured = v
	case "value-column":
		o.Value = v
	case "stratum-column":
		o.Stratum = v
	case "unit":
		o.Unit = v
	case "delimiter":
		o.Delimiter, err = ParseDelimiter(value)
	case "decimal":
		o.Decimal, err = ParseDecimal(v)
	case "missing":
		o.Missing = nil
		if v != "" {
			o.Missing = strings.Split(v, ",")
		}
	case "date-format":
		if v != "" {
			if _, ok := dateLayouts[v]; !ok {
				err = fmt.Errorf("%q is not one of %s", v, strings.Join(DateFormats(), ", "))
			}
		}
		o.DateFormat = v
	case "stratum-codes":
		o.StratumCodes = nil
		if v != "" {
			o.StratumCodes, err = ParseCodes(v)
		}
	case "sheet":
		o.Sheet = v
	default:
		panic("intake: unknown reading option " + name)
	}
	return err
}

// Apply sets the options on s: the columns, when given, replace those of s;
// the other options replace the defaults of s when given. Giving date
// columns and an age column together, or only one date column, is an error.
//
// Which age is read when an age column and date columns are both present:
// named columns win; among columns found by their usual names an age column
// wins over date columns, for every command alike.
func (o *Options) Apply(s *Spec) error {
	switch {
	case o.Birth != "" || o.Measured != "":
		if o.Birth == "" || o.Measured == "" {
			return fmt.Errorf("the birth-column and visit-column options go together")
		}
		if o.Age != "" {
			return fmt.Errorf("give the age-column option, or birth-column with visit-column, not both")
		}
		s.Age, s.Birth, s.Measured = "", o.Birth, o.Measured
	case o.Age != "":
		s.Age, s.Birth, s.Measured = o.Age, "", ""
	}
	if o.Value != "" {
		s.Value = o.Value
	}
	if o.Stratum != "" {
		s.Stratum = o.Stratum
	}
	if o.Unit != "" {
		s.InputUnit = o.Unit
	}
	if o.Delimiter != 0 {
		s.Delimiter = o.Delimiter
	}
	if o.Decimal != DecimalAuto {
		s.Decimal = o.Decimal
	}
	if o.Missing != nil {
		s.Missing = o.Missing
	}
	if o.DateFormat != "" {
		s.DateFormat = o.DateFormat
	}
	if o.StratumCodes != nil {
		s.StratumCodes = o.StratumCodes
	}
	if o.Sheet != "" {
		s.Sheet = o.Sheet
	}
	return nil
}

// ParseDelimiter reads a delimiter option: "auto" or "" (detect from the
// header line), "," or "comma", ";" or "semicolon", "tab" or a tab.
func ParseDelimiter(s string) (rune, error) {
	switch strings.ToLower(s) {
	case "", "auto":
		return 0, nil
	case ",", "comma":
		return ',', nil
	case ";", "semicolon":
		return ';', nil
	case "\t", "tab", `\t`:
		return '\t', nil
	}
	return 0, fmt.Errorf("%q is not one of auto, comma, semicolon, tab", s)
}

// ParseDecimal reads a decimal option: "auto" or "", "point" or "comma".
func ParseDecimal(s string) (Decimal, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "", "auto":
		return DecimalAuto, nil
	case "point", ".":
		return DecimalPoint, nil
	case "comma", ",":
		return DecimalComma, nil
	}
	return 0, fmt.Errorf("%q is not one of auto, point, comma", s)
}
