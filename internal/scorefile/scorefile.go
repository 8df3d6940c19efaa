package scorefile

import (
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"

	"growband/curve"
	"growband/internal/csvsafe"
	"growband/internal/intake"
)

// Spec returns the reading rules for a file to be scored against r. Columns
// are found by their usual names (intake.UsualNames; the value also under
// r's measure name, which comes first); ages are in r's age unit, values in
// r's unit, and every row is echoed back, duplicates too. Callers may name
// columns, units or codes explicitly on the returned Spec.
func Spec(r *curve.Reference) *intake.Spec {
	look := intake.UsualNames
	look.Value = slices.Clone(look.Value)
	if r.Measure != "" && !slices.Contains(look.Value, strings.ToLower(r.Measure)) {
		look.Value = append([]string{r.Measure}, look.Value...)
	}
	return &intake.Spec{AgeUnit: r.AgeUnit, Unit: r.Unit, InputUnit: r.Unit, Measure: r.Measure, KeepDuplicates: true, Look: &look}
}

// Row is one input row with its score, or the reason it has none.
type Row struct {
	Line       int      // line in the file
	Fields     []string // the row's cells as written
	Stratum    string   // the stratum scored in ("" when not read)
	Age, Value float64  // as read (age in the reference's unit)
	Z, Centile float64  // NaN when not scored
	Flag       string   // reason not scored, or the score's remarks
	OK         bool     // scored
	Cond       *Cond    // conditional score; nil when not asked for (AddChanges)
}

// ErrNoStratum reports a file without a stratum column scored against a
// reference with several strata.
var ErrNoStratum = errors.New("no stratum column")

// Score scores every row of t in file order. stratum, when not nil, gives
// the stratum of every row from its own (for a command-line override); a
// file read without a stratum column against a reference with several
// strata needs one.
func Score(r *curve.Reference, t *intake.Table, stratum func(string) string) ([]Row, error) {
	if stratum == nil {
		if err := NeedStratum(r, t); err != nil {
			return nil, err
		}
		stratum = func(s string) string { return s }
	}
	var out []Row
	for _, rec := range t.All() {
		out = append(out, ScoreRecord(r, rec, stratum))
	}
	return out, nil
}

// ScoreRecord scores one row as read (from Table.All or Reader.Next);
// stratum maps the row's stratum to the one scored in.
func ScoreRecord(r *curve.Reference, rec intake.Record, stratum func(string) string) Row {
	o := Row{Line: rec.Line, Fields: rec.Fields, Age: math.NaN(), Value: math.NaN(), Z: math.NaN(), Centile: math.NaN()}
	if rec.Excl != nil {
		o.Flag = rec.Excl.Text()
		return o
	}
	if stratum == nil {
		stratum = func(s string) string { return s }
	}
	o.Stratum, o.Age, o.Value = stratum(rec.Row.Stratum), rec.Row.Age, rec.Row.Value
	s, err := r.Score(o.Stratum, o.Age, o.Value)
	if err != nil {
		o.Flag = Reason(r, err)
	} else {
		o.Z, o.Centile, o.Flag, o.OK = s.Z, s.Centile, s.Flags.String(), true
	}
	return o
}

// NeedStratum returns an error wrapping ErrNoStratum when t was read
// without a stratum column and r has several strata.
func NeedStratum(r *curve.Reference, t *intake.Table) error {
	return NeedStratumColumn(r, t.Name, t.Stratum)
}

// NeedStratumColumn is NeedStratum for the file name read with the stratum
// column stratumCol ("" for none), as a Reader gives them.
func NeedStratumColumn(r *curve.Reference, name, stratumCol string) error {
	if stratumCol == "" && len(r.Strata) > 1 {
		return fmt.Errorf("%s: %w: the reference has strata %s; add a column named %s (or name it with the stratum-column option)",
			name, ErrNoStratum, StrataNames(r), strings.Join(intake.UsualNames.Stratum, " or "))
	}
	return nil
}

// Reason is the short text of a scoring error for the flag column.
func Reason(r *curve.Reference, err error) string {
	switch {
	case errors.Is(err, curve.ErrAgeRange):
		return "age outside the reference's range"
	case errors.Is(err, curve.ErrUnknownStratum):
		return "unknown stratum (reference has " + StrataNames(r) + ")"
	case errors.Is(err, curve.ErrValue):
		return "value is not a finite number"
	case errors.Is(err, curve.ErrDegenerate):
		return "centiles coincide at this age"
	}
	return err.Error()
}

// StrataNames lists the quoted names of r's strata for messages.
func StrataNames(r *curve.Reference) string {
	var s []string
	for _, st := range r.Strata {
		s = append(s, strconv.Quote(st.Name))
	}
	return strings.Join(s, ", ")
}

// Columns are the columns added to the file.
var Columns = []string{"z", "centile", "flag"}

// WriteCSV echoes the rows under header with Columns added (and
// CondColumns before flag when the rows carry conditional scores). A row with
// fewer cells than the header (one whose quoting could not be read) is
// padded with empty cells, so that the added columns line up. Every cell
// passes through csvsafe.Cell: a spreadsheet will not run one as a formula,
// and bytes that are not UTF-8 are replaced.
func WriteCSV(w io.Writer, header []string, rows []Row) error {
	cond := len(rows) > 0 && rows[0].Cond != nil
	cw := NewCSVWriter(w, header, cond)
	for _, o := range rows {
		cw.Write(o)
	}
	return cw.Flush()
}

// CSVWriter writes scored rows one at a time, as WriteCSV does.
type CSVWriter struct {
	cw    *csv.Writer
	nf    int
	cond  bool
	cells []string
}

// NewCSVWriter returns a writer of scored rows under header (with Columns
// added, and CondColumns before flag when cond), which it writes first.
func NewCSVWriter(w io.Writer, header []string, cond bool) *CSVWriter {
	c := &CSVWriter{cw: csv.NewWriter(w), nf: len(header), cond: cond}
	head := append(slices.Clone(header), Columns[:2]...)
	if cond {
		head = append(head, CondColumns...)
	}
	c.cw.Write(safe(append(head, Columns[2:]...)))
	return c
}

// safe passes every cell through csvsafe.Cell, in place.
func safe(cells []string) []string {
	for i, c := range cells {
		cells[i] = csvsafe.Cell(c)
	}
	return cells
}

// Write writes one row; errors are reported by Flush.
func (c *CSVWriter) Write(o Row) {
	c.cells = append(c.cells[:0], o.Fields...)
	for len(c.cells) < c.nf {
		c.cells = append(c.cells, "")
	}
	c.cells = append(c.cells, ZText(o.Z), CentileText(o.Centile))
	if c.cond {
		z, cen := math.NaN(), math.NaN()
		if o.Cond != nil {
			z, cen = o.Cond.Z, o.Cond.Centile
		}
		c.cells = append(c.cells, ZText(z), CentileText(cen))
	}
	c.cw.Write(safe(append(c.cells, o.Flag)))
}

// Flush writes what is buffered and returns the first write error.
func (c *CSVWriter) Flush() error {
	c.cw.Flush()
	return c.cw.Error()
}

// WriteJSON writes the rows as one JSON document with the reference's
// measure, units and caution; z and centile are null for rows not scored.
func WriteJSON(w io.Writer, r *curve.Reference, header []string, rows []Row) error {
	type row struct {
		Line    int      `json:"line,omitempty"`
		Fields  []string `json:"fields"`
		Z       *float64 `json:"z"`
		Centile *float64 `json:"centile"`
		CondZ   *float64 `json:"cond_z,omitempty"`
		CondC   *float64 `json:"cond_centile,omitempty"`
		Flag    string   `json:"flag"`
	}
	doc := struct {
		Measure string   `json:"measure"`
		Unit    string   `json:"unit"`
		AgeUnit string   `json:"age_unit"`
		Header  []string `json:"header"`
		Rows    []row    `json:"rows"`
		Caution string   `json:"caution"`
	}{r.Measure, r.Unit, r.AgeUnit, header, []row{}, curve.Caution}
	for _, o := range rows {
		x := row{Line: o.Line, Fields: o.Fields, Flag: o.Flag}
		if x.Fields == nil {
			x.Fields = []string{}
		}
		if o.OK {
			z, c := round(o.Z, 3), round(o.Centile, 4)
			x.Z, x.Centile = &z, &c
		}
		if o.Cond != nil && !math.IsNaN(o.Cond.Z) {
			z, c := round(o.Cond.Z, 3), round(o.Cond.Centile, 4)
			x.CondZ, x.CondC = &z, &c
		}
		doc.Rows = append(doc.Rows, x)
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(doc)
}

func round(x float64, digits int) float64 {
	p := math.Pow(10, float64(digits))
	return math.Round(x*p) / p
}

// ZText formats a z-score to three decimals; NaN is "".
func ZText(z float64) string {
	if math.IsNaN(z) {
		return ""
	}
	return strconv.FormatFloat(z, 'f', 3, 64)
}

// CentileText formats a centile in percent to two decimals, with more in
// the tails: below 1 or above 99 two more than it takes to tell the
// centile from 0 or 100 (z = 4.9 is "99.9999521", never "100"); NaN is "".
// A centile that is 0 or 100 in double precision (|z| beyond about 8)
// prints so.
func CentileText(c float64) string {
	if math.IsNaN(c) {
		return ""
	}
	dec := 2
	if tail := min(c, 100-c); tail > 0 && tail < 1 {
		dec = min(int(math.Ceil(-math.Log10(tail)))+2, maxCentileDecimals)
	}
	return strconv.FormatFloat(c, 'f', dec, 64)
}

// maxCentileDecimals caps the decimals of a tail centile: 100 - c carries
// about 14 significant digits of a centile near 100.
const maxCentileDecimals = 14
