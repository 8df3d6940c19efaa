package intake

import (
	"bytes"
	"fmt"
	"hash/maphash"
	"io"
	"math"
	"strconv"
	"strings"
	"time"
)

// ReadFile reads the measurement file at path with Read, naming the file
// by path in messages. A Parquet file is read one row group at a time.
func ReadFile(path string, spec *Spec) (*Table, error) {
	r, err := OpenFile(path, spec)
	if err != nil {
		return nil, err
	}
	defer r.Close()
	return r.collect()
}

// Read reads a measurement file with a header row: delimited text (CSV), an
// Excel workbook (.xlsx; the first sheet or Spec.Sheet) or an Apache
// Parquet file, recognised from the content. name is used in messages.
// Every data row ends up either in Table.Rows or, with one reason, in
// Table.Excluded; problems with single rows never fail the read.
//
// Read fails with an *Error (wrapping ErrEmpty, ErrNoRows, ErrColumn,
// ErrBinary, ErrHeader or ErrBadSpec) when the file cannot be used at all:
// it is empty, holds no data rows, is not UTF-8 text, or lacks a column named
// in spec. It does not panic on any input.
func Read(r io.Reader, name string, spec *Spec) (*Table, error) {
	rd, err := NewReader(r, name, spec)
	if err != nil {
		return nil, err
	}
	defer rd.Close()
	return rd.collect()
}

// collect reads the remaining rows into a Table.
func (r *Reader) collect() (*Table, error) {
	t := r.table()
	for {
		rec, err := r.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, err
		}
		if rec.Excl != nil {
			t.Excluded = append(t.Excluded, *rec.Excl)
		} else {
			t.Rows = append(t.Rows, *rec.Row)
		}
	}
	t.Total = r.total
	t.DateHint = r.DateHint()
	return t, nil
}

// checkText strips a UTF-8 byte-order mark and refuses content that is not
// text: empty, UTF-16, or holding NUL bytes.
func checkText(data []byte, name string) ([]byte, error) {
	if bytes.HasPrefix(data, []byte{0xFF, 0xFE}) || bytes.HasPrefix(data, []byte{0xFE, 0xFF}) {
		return nil, errAt(name, 1, ErrBinary, "file is UTF-16 text; save it as UTF-8 CSV")
	}
	data = bytes.TrimPrefix(data, []byte{0xEF, 0xBB, 0xBF})
	if len(bytes.TrimSpace(data)) == 0 {
		return nil, errAt(name, 0, ErrEmpty, "file is empty")
	}
	if i := bytes.IndexByte(data, 0); i >= 0 {
		line := 1 + bytes.Count(data[:i], []byte{'\n'})
		return nil, errAt(name, line, ErrBinary, "NUL byte: binary content, not a CSV text file (a spreadsheet or UTF-16 file?)")
	}
	return data, nil
}

// colIndex holds header positions of the Spec's columns; -1 when unused.
type colIndex struct {
	age, birth, measured, value, stratum, subject, weight int
}

func (p *prepared) columns(header []string, name string, line int) (colIndex, error) {
	pos := map[string]int{}
	dup := map[string]bool{}
	for i, h := range header {
		h = strings.TrimSpace(h)
		if _, ok := pos[h]; ok {
			dup[h] = true
			continue
		}
		pos[h] = i
	}
	var missing []string
	find := func(col string) int {
		if col == "" {
			return -1
		}
		i, ok := pos[col]
		if !ok {
			missing = append(missing, strconv.Quote(col))
			return -1
		}
		return i
	}
	c := colIndex{
		age: find(p.Age), birth: find(p.Birth), measured: find(p.Measured), value: find(p.Value),
		stratum: find(p.Stratum), subject: find(p.Subject), weight: find(p.Weight),
	}
	if len(missing) > 0 {
		have := make([]string, len(header))
		for i, h := range header {
			have[i] = strings.TrimSpace(h)
		}
		what := "column " + missing[0]
		if len(missing) > 1 {
			what = "columns " + strings.Join(missing, ", ")
		}
		return c, errAt(name, line, ErrColumn, "%s not in header (have: %s)", what, strings.Join(have, ", "))
	}
	for _, col := range []string{p.Age, p.Birth, p.Measured, p.Value, p.Stratum, p.Subject, p.Weight} {
		if col != "" && dup[col] {
			return c, errAt(name, line, ErrHeader, "column %q appears more than once in the header", col)
		}
	}
	return c, nil
}

// rowReader turns records into rows.
type rowReader struct {
	p      *prepared
	cols   colIndex
	header []string
	comma  bool
	src    source
	seen   map[dupKey]int // duplicate key -> line of the first row; nil = no check
	seeds  [2]maphash.Seed

	// Dates that did not read, and how many of them read with day and
	// month swapped, for DateHint.
	dateFail, swapOK int
	dateCol          string

	lim *limits // impossible values, set on the first row
}

func (rd *rowReader) row(rec *record) (Row, Reason, string) {
	p, c, f := rd.p, rd.cols, rec.fields
	row := Row{Line: rec.line, Weight: 1, Fields: f}
	if len(f) != len(rd.header) {
		return row, ReasonFields, fmt.Sprintf("%d fields, header has %d", len(f), len(rd.header))
	}
	cell := func(k int) string { return strings.TrimSpace(f[k]) }
	var (
		r      Reason
		detail string
	)
	if c.age >= 0 {
		if row.Age, r, detail = rd.number(f, c.age); r != 0 {
			return row, r, detail
		}
	} else {
		b, r, detail := rd.date(f, c.birth)
		if r != 0 {
			return row, r, detail
		}
		m, r, detail := rd.date(f, c.measured)
		if r != 0 {
			return row, r, detail
		}
		days := (m.Unix() - b.Unix()) / 86400 // exact: both are UTC midnights
		if days < 0 {
			return row, ReasonDateOrder, fmt.Sprintf("%s %s is before %s %s", p.Measured, cell(c.measured), p.Birth, cell(c.birth))
		}
		row.Age = float64(days) / p.days
	}
	if row.Value, r, detail = rd.number(f, c.value); r != 0 {
		return row, r, detail
	}
	row.Value *= p.factor
	if c.weight >= 0 {
		if row.Weight, r, detail = rd.number(f, c.weight); r == ReasonNotNumber && strings.HasSuffix(detail, "not finite") {
			return row, ReasonWeight, detail
		} else if r != 0 {
			return row, r, detail
		}
		if !(row.Weight > 0) || math.IsInf(row.Weight, 0) {
			return row, ReasonWeight, fmt.Sprintf("%s: %s", p.Weight, cell(c.weight))
		}
	}
	if c.stratum >= 0 {
		s := cell(c.stratum)
		if p.missing[s] {
			return row, ReasonMissing, p.Stratum
		}
		label, ok := p.label(s)
		if !ok {
			return row, ReasonStratum, fmt.Sprintf("%s: %q", p.Stratum, s)
		}
		row.Stratum = label
	}
	if c.subject >= 0 {
		s := cell(c.subject)
		if p.missing[s] {
			return row, ReasonMissing, p.Subject
		}
		row.Subject = s
	}
	if row.Age < 0 {
		return row, ReasonAgeRange, fmt.Sprintf("age %s %s is impossible: it must be 0 or above", fmtNum(row.Age), p.AgeUnit)
	}
	if rd.lim == nil {
		measure := p.Measure
		if measure == "" {
			measure = p.Value
		}
		l := limitsOf(measure, p.Unit)
		rd.lim = &l
	}
	if why := rd.lim.check(row.Value); why != "" {
		return row, ReasonValueRange, why
	}
	if !p.AgeRange.Contains(row.Age) {
		return row, ReasonAgeRange, fmt.Sprintf("age %s %s not in [%g, %g]", fmtNum(row.Age), p.AgeUnit, p.AgeRange.Min, p.AgeRange.Max)
	}
	if !p.ValueRange.Contains(row.Value) {
		return row, ReasonValueRange, fmt.Sprintf("%s %s %s not in [%g, %g]", p.Value, fmtNum(row.Value), p.Unit, p.ValueRange.Min, p.ValueRange.Max)
	}
	if rd.seen != nil {
		var key dupKey
		if c.subject >= 0 {
			key = rd.key([]string{row.Subject, fmtNum(row.Age), fmtNum(row.Value)})
		} else {
			key = rd.key(f)
		}
		if first, dup := rd.seen[key]; dup {
			return row, ReasonDuplicate, fmt.Sprintf("same as line %d", first)
		}
		rd.seen[key] = rec.line
	}
	return row, 0, ""
}

// dupKey identifies a row for the duplicate check: two 64-bit hashes
// (maphash, with two random seeds) of its key fields, each ended by a NUL.
// Two different keys share one only with probability about 2^-128 per
// pair: below 10^-26 for 10,000,000 rows. Keeping the hashes rather than the
// key texts saves a string per row.
type dupKey [2]uint64

func (rd *rowReader) key(fields []string) dupKey {
	var k dupKey
	for j := range k {
		var h maphash.Hash
		h.SetSeed(rd.seeds[j])
		for _, f := range fields {
			h.WriteString(f)
			h.WriteByte(0)
		}
		k[j] = h.Sum64()
	}
	return k
}

// number reads a numeric cell, honouring missing markers and the decimal
// separator; it never accepts NaN or ±Inf.
func (rd *rowReader) number(f []string, k int) (float64, Reason, string) {
	col := strings.TrimSpace(rd.header[k])
	s := strings.TrimSpace(f[k])
	if rd.p.missing[s] {
		return 0, ReasonMissing, col
	}
	t := s
	if rd.comma {
		if strings.Contains(t, ".") {
			return 0, ReasonNotNumber, fmt.Sprintf("%s: %q has a decimal point but the file's numbers use decimal commas", col, s)
		}
		t = strings.Replace(t, ",", ".", 1)
	} else if looksComma(t) {
		return 0, ReasonNotNumber, fmt.Sprintf("%s: %q has a decimal comma but the file's numbers use decimal points (if the file writes 12,5: decimal = comma, --decimal comma)", col, s)
	}
	if !isDecimal(t) {
		return 0, ReasonNotNumber, fmt.Sprintf("%s: %q", col, s)
	}
	x, err := strconv.ParseFloat(t, 64)
	if err != nil || math.IsInf(x, 0) || math.IsNaN(x) {
		return 0, ReasonNotNumber, fmt.Sprintf("%s: %q is not finite", col, s)
	}
	return x, 0, ""
}

func (rd *rowReader) date(f []string, k int) (time.Time, Reason, string) {
	col := strings.TrimSpace(rd.header[k])
	s := strings.TrimSpace(f[k])
	if rd.p.missing[s] {
		return time.Time{}, ReasonMissing, col
	}
	if d, ok := rd.src.dateCell(k, s); ok {
		return d, 0, ""
	}
	d, err := time.Parse(rd.p.layout, s)
	if err != nil {
		rd.dateFail++
		if sw := swappedLayout[rd.p.layout]; sw != "" {
			if _, err := time.Parse(sw, s); err == nil {
				rd.swapOK++
				rd.dateCol = col
			}
		}
		return time.Time{}, ReasonBadDate, fmt.Sprintf("%s: %q is not a date in the format %s", col, s, rd.p.DateFormat)
	}
	return d, 0, ""
}

// swappedLayout gives, for a date layout with day and month in either
// order, the layout with the two swapped.
var swappedLayout = map[string]string{
	"2/1/2006": "1/2/2006", "1/2/2006": "2/1/2006",
	"2.1.2006": "1.2.2006", "2-1-2006": "1-2-2006",
}

// letterFormat names a parse layout in letter notation for messages.
var letterFormat = map[string]string{
	"2/1/2006": "DD/MM/YYYY", "1/2/2006": "MM/DD/YYYY",
	"1.2.2006": "MM.DD.YYYY", "1-2-2006": "MM-DD-YYYY",
}

// dateHint is a note when every date that failed to read reads with day and
// month swapped: the file's order contradicts the date format.
func (rd *rowReader) dateHint() string {
	if rd.dateFail == 0 || rd.swapOK < rd.dateFail {
		return ""
	}
	sw := swappedLayout[rd.p.layout]
	f, ok := letterFormat[sw]
	if !ok {
		return ""
	}
	return fmt.Sprintf("%d dates (for example in column %q) are not valid as %s but are as %s: the file writes the day and month the other way round; set the date format to %s",
		rd.dateFail, rd.dateCol, rd.p.DateFormat, f, f)
}

func fmtNum(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }
